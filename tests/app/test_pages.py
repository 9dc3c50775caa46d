"""AppTest tests of every page's main flow against an invented store (tests/app/conftest.py)."""

from __future__ import annotations

import json

import pytest

from tests.app.conftest import ANALYST, CASE, MAIN, PEAKS_CSV

pytestmark = pytest.mark.slow


def _texts(elements) -> list[str]:
    return [str(e.value) for e in elements]


def test_cases_page_lists_searches_and_creates(app, store_root):
    assert _texts(app.title) == ["Cases"]
    assert app.dataframe[0].value["case"].tolist() == [CASE]
    app.text_input[0].input("brass shavngs").run()  # misspelt on purpose: approximate search
    hits = app.dataframe[1].value
    assert hits["case"].tolist() == [CASE]
    inputs = app.text_input
    inputs[1].input("TEST-2026-0002")
    inputs[2].input("Second invented case")
    inputs[3].input("Invented Unit")
    next(b for b in app.button if b.label == "Create case").click().run()
    assert not app.exception
    from workbench.casefile.store import CaseStore

    with CaseStore.open(store_root) as store:
        assert [c.case_number for c in store.list_cases()] == [CASE, "TEST-2026-0002"]
    assert app.session_state["case_number"] == "TEST-2026-0002"


@pytest.mark.parametrize("bad", ["<b>X</b>", "A/B"])  # both accepted before (issue 13)
def test_a_case_number_outside_the_pattern_is_refused_with_the_rule(app, store_root, bad):
    inputs = app.text_input
    inputs[1].input(bad)
    inputs[2].input("Invented case")
    inputs[3].input("Invented Unit")
    next(b for b in app.button if b.label == "Create case").click().run()
    assert not app.exception
    errors = _texts(app.error)
    assert any("case number" in t and "letters and digits" in t for t in errors), errors
    from workbench.casefile.store import CaseStore

    with CaseStore.open(store_root) as store:
        assert [c.case_number for c in store.list_cases()] == [CASE]  # nothing created


def test_an_item_is_registered_at_the_picked_lab_time(app, store_root, monkeypatch):
    import datetime as dt

    # A fixed IANA zone (tz database): 2026-11-03 10:15 in Europe/Berlin is 09:15 UTC.
    monkeypatch.setenv("WORKBENCH_LAB_TZ", "Europe/Berlin")
    app.switch_page("page_custody.py").run()
    labels = {t.label: t for t in app.text_input}
    labels["Item number"].input("2/3")
    labels["Description"].input("Invented envelope")
    labels["Received by (becomes the holder)"].input(ANALYST)
    labels["Received from (required for a new item)"].input("Courier (invented)")
    next(b for b in app.button if b.label == "Register").click().run()
    assert any("item number" in t and "'/'" in t for t in _texts(app.error))  # refused
    labels = {t.label: t for t in app.text_input}
    labels["Item number"].input("2")
    labels["Description"].input("Invented envelope")
    labels["Received by (becomes the holder)"].input(ANALYST)
    labels["Received from (required for a new item)"].input("Courier (invented)")
    app.datetime_input(key="item_at").set_value(dt.datetime(2026, 11, 3, 10, 15))
    next(b for b in app.button if b.label == "Register").click().run()
    assert not app.exception and not app.error, _texts(app.error)
    from workbench.casefile.store import CaseStore

    with CaseStore.open(store_root) as store:
        (event,) = store.custody_events((CASE, "2"))
        assert event.at.startswith("2026-11-03T09:15:00")


def test_custody_page_records_an_event_and_shows_the_verified_chain(app, store_root):
    app.switch_page("page_custody.py").run()
    assert any("verified" in t for t in _texts(app.success))
    form_selects = [s for s in app.selectbox if s.label == "Event"]
    form_selects[0].set_value("transferred")
    labels = {t.label: t for t in app.text_input}
    labels["Actor (who did it)"].input(ANALYST)
    labels["From"].input(ANALYST)
    labels["To"].input("Examiner Cy (invented)")
    next(b for b in app.button if b.label == "Record event").click().run()
    assert not app.exception
    assert not app.error, _texts(app.error)
    from workbench.casefile.store import CaseStore

    with CaseStore.open(store_root) as store:
        item = store.get_item(CASE, "1")
        assert item.holder == "Examiner Cy (invented)"  # the transfer made Cy the holder
    assert app.get("plotly_chart")  # the timeline is drawn


def test_custody_rule_violation_is_shown_not_raised(app):
    app.switch_page("page_custody.py").run()
    next(s for s in app.selectbox if s.label == "Event").set_value("transferred")
    labels = {t.label: t for t in app.text_input}
    labels["Actor (who did it)"].input("Someone Else (invented)")  # not the holder
    labels["To"].input("X (invented)")
    next(b for b in app.button if b.label == "Record event").click().run()
    assert not app.exception
    assert any("holder" in t for t in _texts(app.error))  # rule 'holder' named


def _read_stored(app):
    app.switch_page("page_measurement.py").run()
    app.button(key="read_stored").click().run()
    assert not app.exception, app.exception


def test_measurement_page_reads_a_stored_file_and_shows_mapping_and_table(app):
    _read_stored(app)
    work = app.session_state["work"]
    assert work.peaks.table.height == 7  # rows in PEAKS_CSV
    assert any("assumed air" in t for t in _texts(app.warning))  # reader's assumption surfaced
    (editor,) = app.data_editor  # the peak grid
    assert len(editor.value) == 7
    mapping = app.dataframe[0].value  # column mapping table
    assert set(mapping["used as"]) == {"position", "intensity"}
    assert app.session_state["peak_edits"] == []


def test_pasted_table_is_read(app):
    app.switch_page("page_measurement.py").run()
    app.text_area(key="paste").input(PEAKS_CSV.decode().replace(",", "\t")).run()
    app.button(key="read_paste").click().run()
    assert not app.exception
    assert app.session_state["work"].name == "<pasted>"
    assert app.session_state["work_measurement_id"] is None


def test_bad_paste_gives_an_error_box(app):
    app.switch_page("page_measurement.py").run()
    app.text_area(key="paste").input("just words\nno numbers here").run()
    app.button(key="read_paste").click().run()
    assert not app.exception
    assert app.error and "Fix" in _texts(app.error)[0]


def _finish_run(app):
    """Wait for the worker process of the run just started, then let the page pick it up."""
    import time

    if "run" not in app.session_state:  # the same input and settings ran before (cache)
        return
    handle = app.session_state["run"]
    deadline = time.monotonic() + 120
    while handle.poll() == "running":
        assert time.monotonic() < deadline, "the run did not finish"
        time.sleep(0.05)
    app.run()
    assert not app.exception, app.exception


def _demo_case_matched(tmp_path_factory, case: str):
    """An app session on a fresh store of the invented demo cases, ``case`` matched once.

    A generator for module-wide fixtures (the run is the cost): yields the
    AppTest after the run and restores ``WORKBENCH_STORE`` afterwards.
    """
    import os

    from streamlit.testing.v1 import AppTest

    from workbench.casefile.store import CaseStore
    from workbench.demo import seed_demo_case

    root = tmp_path_factory.mktemp("demo") / "store"
    with CaseStore.open(root) as store:
        seed_demo_case(store)
    old = os.environ.get("WORKBENCH_STORE")
    os.environ["WORKBENCH_STORE"] = str(root)
    try:
        at = AppTest.from_file(MAIN, default_timeout=120)
        at.run()
        at.session_state["pending_case"] = case
        at.run()
        at.switch_page("page_measurement.py").run()
        at.button(key="read_stored").click().run()
        at.switch_page("page_matching.py").run()
        at.button(key="run_go").click().run()
        _finish_run(at)
        yield at
    finally:
        if old is None:
            os.environ.pop("WORKBENCH_STORE", None)
        else:
            os.environ["WORKBENCH_STORE"] = old


def _run_matching(app):
    _read_stored(app)
    app.switch_page("page_matching.py").run()
    app.button(key="run_go").click().run()
    assert not app.exception, app.exception
    _finish_run(app)
    assert "view" in app.session_state


def test_matching_page_shows_calls_first_then_tracks_and_saves(app, store_root):
    _run_matching(app)
    grid = app.dataframe[0].value
    calls = dict(zip(grid["Species"], grid["Verdict"], strict=True))
    # Two Na D lines and five Cu I lines (NIST ASD, from memory) must give these calls.
    assert calls["Na I"] in ("established", "probable")
    assert calls["Cu I"] in ("established", "probable")
    assert grid.index[0] == 1  # rows counted from 1
    assert "Strongest matched (nm)" in grid.columns  # human header with its unit
    assert app.get("plotly_chart")
    assert any("qualified examiner" in t for t in _texts(app.caption))  # cautions shown
    app.text_input(key="analysis_analyst").input(ANALYST).run()
    app.button(key="save_analysis").click().run()
    assert not app.exception
    from workbench.casefile.store import CaseStore

    with CaseStore.open(store_root) as store:
        (a,) = store.list_analyses(CASE)
        assert a.analyst == ANALYST
        assert a.parameters["peak_table"]["edits"] == []
        assert a.parameters["peak_table"]["n_rows"] == 7  # rows in PEAKS_CSV
        assert "original_rows" not in a.parameters["peak_table"]  # kept only with edits
        assert json.loads(a.result_json)["schema_version"] == 2  # docs/result-schema.md
        assert store.verify(CASE).ok


def test_findings_page_creates_key_signs_and_verifies(app, store_root):
    _run_matching(app)
    app.text_input(key="analysis_analyst").input(ANALYST).run()
    app.button(key="save_analysis").click().run()
    app.switch_page("page_findings.py").run()
    assert any("qualified examiner" in t for t in _texts(app.caption))
    labels = {t.label: t for t in app.text_input}
    labels["Analyst name"].input(ANALYST)
    labels["Passphrase (at least 8 characters)"].input("correct horse 1")
    labels["Repeat the passphrase"].input("correct horse 1")
    next(b for b in app.button if b.label == "Create key").click().run()
    assert not app.exception and not app.error, _texts(app.error)
    # AppTest cannot press a download button; the page's on_click callback sets this flag.
    app.session_state["new_key_downloaded"] = True
    app.text_input(key="lab_name").input("Invented Test Laboratory").run()
    app.text_area(key="sheet_notes").input("Notes with <b>markup</b> kept literally").run()
    app.button(key="preview").click().run()
    assert not app.exception and app.session_state["draft"]["lab"]["name"]
    app.button(key="render_draft").click().run()
    assert not app.exception and app.session_state["draft_pdf"].startswith(b"%PDF")
    app.text_input(key="passphrase").input("wrong passphrase").run()
    app.button(key="sign").click().run()
    assert not app.exception
    assert app.error  # a wrong passphrase is refused with an error box
    app.text_input(key="passphrase").input("correct horse 1").run()
    app.button(key="sign").click().run()
    assert not app.exception and not app.error, _texts(app.error)
    issued = app.session_state["issued"]
    from workbench.casefile.store import CaseStore
    from workbench.findings import verify_sheet_with_store

    with CaseStore.open(store_root) as store:
        res = verify_sheet_with_store(
            store, issued.pdf_bytes, issued.json_bytes, issued.signature_record
        )
        assert res.signer == ANALYST
        assert store.verify(CASE).ok
    draft = json.loads(issued.json_bytes)
    assert draft["notes"] == "Notes with <b>markup</b> kept literally"  # verbatim
