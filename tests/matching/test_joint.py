"""Joint explanation (workbench.matching.joint): X-ray family support, emission free scale."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching.joint import _family_support, independent_scale_factor
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


def _emitter(scale: float | None, predicted, heights, saturated=None):
    """An emission species with found groups at peaks 0, 1, 2, ... (invented figures)."""
    ev = SpeciesEvidence(code=2, label="X I", element="X", ion=1, family=None)
    ev.scale = scale
    predicted = np.asarray(predicted, dtype=float)
    ev.groups = {
        "known": np.ones(predicted.size, dtype=bool),
        "found": np.ones(predicted.size, dtype=bool),
        "predicted": predicted,
    }
    heights = np.asarray(heights, dtype=float)
    sat = np.zeros(heights.size, dtype=bool) if saturated is None else np.asarray(saturated)
    return ev, np.arange(predicted.size), heights, sat


def test_independent_scale_is_the_median_over_free_groups():
    # Scale 100; per unit of scale the groups predict 1, 0.5, 0.2 (predicted
    # 100, 50, 20). Group 0 is claimed; the free ones observe 25 and 4:
    # observed / per-unit 50 and 20, median 35 → factor 35 / 100 (arithmetic).
    ev, peak, h, sat = _emitter(100.0, [100.0, 50.0, 20.0], [100.0, 25.0, 4.0])
    free = np.array([False, True, True])
    assert independent_scale_factor(ev, free, peak, h, sat) == pytest.approx(0.35)


def test_independent_scale_without_free_group_is_zero():
    # Every found group on a claimed peak: nothing supports the scale but them.
    ev, peak, h, sat = _emitter(100.0, [100.0, 50.0], [100.0, 50.0])
    assert independent_scale_factor(ev, np.array([False, False]), peak, h, sat) == 0.0


def test_independent_scale_never_raises_the_prediction():
    # The free group observes 4 × its prediction: the factor stays 1.
    ev, peak, h, sat = _emitter(100.0, [100.0, 50.0], [50.0, 200.0])
    assert independent_scale_factor(ev, np.array([False, True]), peak, h, sat) == 1.0


def test_independent_scale_ignores_saturated_and_unscaled():
    # A saturated free peak measures no scale (its height is a lower bound).
    ev, peak, h, sat = _emitter(100.0, [100.0, 50.0], [100.0, 10.0], saturated=[False, True])
    assert independent_scale_factor(ev, np.array([False, True]), peak, h, sat) == 0.0
    # Without a scale (no intensities) the predictions are left alone.
    ev, peak, h, sat = _emitter(None, [1.0, 0.5], [100.0, 10.0])
    assert independent_scale_factor(ev, np.array([False, True]), peak, h, sat) == 1.0


def test_independent_scale_leaves_a_single_found_group_alone():
    # One found group, on a claimed peak: an ambiguity of two accounts (warned
    # as an unresolved overlap), not a count to protect: factor 1.
    ev, peak, h, sat = _emitter(100.0, [100.0], [100.0])
    assert independent_scale_factor(ev, np.array([False]), peak, h, sat) == 1.0
