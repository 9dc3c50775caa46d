"""AppTest of the maps page: the invented demo painting mapped from the page."""

from __future__ import annotations

import pytest

pytestmark = pytest.mark.slow


def test_maps_page_maps_the_demo_painting(app):
    app.switch_page("page_maps.py").run()
    assert not app.exception, app.exception
    next(b for b in app.button if b.label == "Make maps").click().run()
    assert not app.exception, app.exception
    assert not app.error, [e.value for e in app.error]
    family = next(s for s in app.selectbox if s.label == "Family")
    # The invented painting (workbench.maps.demo) has Pb, Hg, Fe, Cu and Ca planted.
    assert family.options == ["Ca K", "Cu K", "Fe K", "Hg L", "Pb L"]
    family.set_value("Hg L").run()
    assert not app.exception
    red = next(s for s in app.selectbox if s.label == "Red")
    red.set_value("Pb L").run()
    assert not app.exception
