"""AppTest test of re-opening a saved analysis read-only on the Line matching page.

Invented store from tests/app/conftest.py.
"""

from __future__ import annotations

import pytest

from tests.app.conftest import ANALYST, CASE
from tests.app.test_pages import _run_matching, _texts

pytestmark = pytest.mark.slow


def test_a_saved_analysis_reopens_read_only_in_a_fresh_session(app, store_root):
    from streamlit.testing.v1 import AppTest

    from tests.app.conftest import MAIN
    from workbench.casefile.store import CaseStore

    _run_matching(app)
    app.text_input(key="analysis_analyst").input(ANALYST).run()
    app.button(key="save_analysis").click().run()
    saved_grid = app.dataframe[0].value
    fresh = AppTest.from_file(MAIN, default_timeout=120)  # a new session: nothing read yet
    fresh.run()
    fresh.switch_page("page_matching.py").run()
    assert not fresh.exception
    fresh.button(key="reopen").click().run()
    assert not fresh.exception
    assert not [t for t in _texts(fresh.error) if "Fix" in t]  # only the saved warnings
    assert any("INTERFERENCE WARNING" in t for t in _texts(fresh.error))
    shown = fresh.session_state["reopened"]
    with CaseStore.open(store_root) as store:
        (a,) = store.list_analyses(CASE)
        assert shown.json_bytes == a.result_json  # the stored bytes, unchanged
        n_before = len(store.list_analyses(CASE))
    # The same element calls as when it was saved (same stored report).
    grid = fresh.dataframe[0].value
    assert grid["species"].tolist() == saved_grid["species"].tolist()
    assert grid["verdict"].tolist() == saved_grid["verdict"].tolist()
    assert fresh.get("plotly_chart")  # stick plot drawn from the saved report
    assert not [b for b in fresh.button if b.label == "Save analysis to the case"]  # read-only
    assert not [b for b in fresh.button if b.label == "Run matching"]
    fresh.button(key="close_reopened").click().run()
    assert "reopened" not in fresh.session_state
    with CaseStore.open(store_root) as store:
        assert len(store.list_analyses(CASE)) == n_before  # nothing written by viewing
