import numpy as np
import pytest

from workbench.errors import InputError
from workbench.maps.detector import Instrument
from workbench.maps.templates import build_templates, family_lines


def test_family_template_area_is_one_count_plus_escape():
    e = np.arange(500.0, 30000.0, 20.0)
    inst = Instrument(escape_fraction=0.0)
    tpl = build_templates(e, ["Fe K"], inst)
    assert tpl.families == ["Fe K"]
    # Unit area per family (construction), all Fe K lines lie inside 0.5–30 keV.
    assert tpl.matrix[:, 0].sum() == pytest.approx(1.0, rel=1e-6)
    # Fe Kα1 6403.84 eV (shipped xray set; Bearden 1967 gives 6403.8): the template peaks there.
    assert e[np.argmax(tpl.matrix[:, 0])] == pytest.approx(6400.0, abs=30.0)
    # With escape peaks the area grows by the escape fraction (all Fe K lines exceed the Si edge).
    tpl2 = build_templates(e, ["Fe K"], Instrument(escape_fraction=0.01))
    assert tpl2.matrix[:, 0].sum() == pytest.approx(1.01, rel=1e-3)


def test_families_outside_the_axis_are_skipped_and_unknown_ones_refused():
    e = np.arange(500.0, 5000.0, 20.0)
    tpl = build_templates(e, ["Pb L", "Ca K"], Instrument())
    assert tpl.families == ["Ca K"]  # Pb L lines are at 9–15 keV (xray set)
    with pytest.raises(InputError, match="no X-ray lines"):
        family_lines("Xx K")
    assert tpl.matrix.shape[1] > 1 and (tpl.matrix >= 0).all()
