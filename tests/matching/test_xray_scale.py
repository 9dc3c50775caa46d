"""When the energy scale read after matching replaces the correction in place.

``apply_matched_scale`` decides whether the match is run again on energies
corrected by the reading after matching. The readings below are invented
numbers of the size the forward-model cases give (a check before matching
from four anchor peaks with a fitted gain, a reading after matching from six
lines of two decided families); the rule itself is the module's docstring.
"""

from __future__ import annotations

import pytest

from workbench.matching.xray_scale import apply_matched_scale
from workbench.xray.energy_scale import MATCHED_MIN_SIGNIFICANT_EV, EnergyScale

SPAN_EV = (3580.0, 14740.0)


def _before(offset: float, u: float, gain: float = 1.0) -> EnergyScale:
    return EnergyScale(4, offset, u, gain, 0.002, offset, True, applied=True)


def _after(offset: float, u: float) -> EnergyScale:
    return EnergyScale(
        6, offset, u, 1.0, 0.0, offset, True, stage="matched families", span_eV=SPAN_EV
    )


def test_a_more_precise_reading_replaces_a_coarse_correction_beyond_the_floor() -> None:
    # Before: +28.2 ± 13.5 eV with gain 0.99953 (a correction of +26.5 eV at
    # 3.6 keV); after: +17.8 ± 3.3 eV. The difference, 8.7 eV at the low end of
    # the span, is under 3σ of the new reading (9.8 eV) but above the floor.
    before = _before(28.2, 13.5, gain=0.99953)
    after = _after(17.8, 3.3)
    assert apply_matched_scale(after, before, None)
    # The same difference with a new reading less precise than the correction
    # in place needs 3σ of the new reading.
    assert not apply_matched_scale(_after(17.8, 14.0), _before(28.2, 13.5, 0.99953), None)


@pytest.mark.parametrize("u_after", [1.0, 3.3, 20.0])
def test_a_difference_under_the_floor_never_reruns(u_after: float) -> None:
    diff = 0.8 * MATCHED_MIN_SIGNIFICANT_EV
    assert not apply_matched_scale(_after(20.0 + diff, u_after), _before(20.0, 10.0), None)


def test_the_analyst_decides_first() -> None:
    before, after = _before(28.2, 13.5, 0.99953), _after(17.8, 3.3)
    assert not apply_matched_scale(after, before, False)
    assert apply_matched_scale(_after(20.5, 3.3), _before(20.0, 10.0), True)
