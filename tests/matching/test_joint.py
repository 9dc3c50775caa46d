"""X-ray family support in the joint explanation (workbench.matching.joint)."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching.joint import _family_support
from workbench.matching.scoring import SpeciesEvidence


def _pb_m(scale: float) -> SpeciesEvidence:
    ev = SpeciesEvidence(code=1, label="Pb M", element="Pb", ion=None, family="M")
    ev.scale = scale
    ev.main_found = True
    ev.groups = {
        "known": np.array([True]),
        "strength": np.array([1.0]),
        "predicted": np.array([scale]),
        "position": np.array([2342.3]),  # Pb Mα (Elam, the shipped set)
    }
    return ev


@pytest.mark.parametrize(
    ("scale", "supported"),
    [
        # Invented figures: Pb L total 100, predicted M/L ratio 0.5.
        (10.0, True),  # observed 0.1: weaker than thin-sample (absorption), allowed
        (150.0, True),  # observed 1.5 = 3 × 0.5: the edge
        (200.0, False),  # observed 2.0 > 3 × 0.5: the low-energy family too strong
    ],
)
def test_an_established_family_supports_the_lower_energy_family_one_sidedly(scale, supported):
    ev = _pb_m(scale)
    established = {"Pb": ("L", 100.0, 5.0, 10551.5)}  # Pb Lα1 10551.5 eV (Elam)
    changed = _family_support(ev, established, lambda el, num, den: 0.5)
    assert changed is supported
    assert ev.family_floor_dex == (5.0 if supported else None)


def test_no_support_without_the_main_line():
    ev = _pb_m(10.0)
    ev.main_found = False
    assert not _family_support(ev, {"Pb": ("L", 100.0, 5.0, 10551.5)}, lambda *a: 0.5)
