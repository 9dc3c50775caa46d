"""Masked and crowded groups (workbench.matching.masking); positions and heights invented."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching.masking import WING_HALF_WINDOWS, hidden_groups

# Peaks at 100, 100.25 and 101 (axis units), heights 50, 500, 80.
PEAKS = np.array([100.0, 100.25, 101.0])
HEIGHTS = np.array([50.0, 500.0, 80.0])
PADDED = np.append(HEIGHTS, -np.inf)
TOL = 0.1  # half-window of every group


def _run(pos, found, predicted, *, excluded=None, xray=False, span=None):
    pos = np.asarray(pos, float)
    n = pos.size
    return hidden_groups(
        PEAKS,
        excluded,
        PADDED,
        np.ones(n, dtype=bool),
        np.asarray(found, bool),
        np.asarray(predicted, float),
        pos,
        np.full(n, TOL),
        np.zeros(n) if span is None else np.asarray(span, float),
        xray=xray,
    )


def test_wing_is_three_half_windows():
    # Common practice, no source (module docstring).
    assert WING_HALF_WINDOWS == 3.0


@pytest.mark.parametrize(
    ("pos", "found", "predicted", "masked", "crowded"),
    [
        # The 500 peak lies 0.25 from 100.0: outside its window (0.1), inside
        # three half-windows (0.3). Found → crowded, missing → masked.
        (100.0, True, 300.0, False, True),
        (100.0, False, 300.0, True, False),
        # Predicted above the neighbour: neither.
        (100.0, False, 600.0, False, False),
        # 100.6: the nearest peaks are 0.35 and 0.4 away, beyond the wing.
        (100.6, False, 10.0, False, False),
    ],
)
def test_optical_wing(pos, found, predicted, masked, crowded):
    m, c = _run([pos], [found], [predicted])
    assert (m[0], c[0]) == (masked, crowded)


def test_optical_own_window_peak_does_not_mask_unless_set_aside():
    # A missing group at 101.0 with the 80 peak in its own window: that peak
    # would have been matched, so it masks nothing ...
    m, _ = _run([101.0], [False], [60.0])
    assert not m[0]
    # ... unless it was set aside (never matched): then the line may hide in it,
    m, _ = _run([101.0], [False], [60.0], excluded=np.array([False, False, True]))
    assert m[0]
    # if it is at least as strong as the prediction.
    m, _ = _run([101.0], [False], [90.0], excluded=np.array([False, False, True]))
    assert not m[0]


def test_xray_wing_includes_own_window_and_marks_no_crowding():
    m, c = _run([101.0, 100.0], [False, True], [60.0, 60.0], xray=True)
    assert m.tolist() == [True, False]
    assert not c.any()


def test_span_widens_the_own_window():
    # A group spanning 0.6 centred at 100.5 holds 100.25 in its own window
    # (half-span 0.3 + 0.1): the 500 peak no longer crowds it from outside.
    m, c = _run([100.5], [True], [300.0], span=[0.6])
    assert not c[0] and not m[0]


@pytest.mark.parametrize(
    ("pos", "masked"),
    [
        (99.85, True),  # 0.05 from the start (99.8): within one resolution element (0.1)
        (99.95, False),  # 0.15 from it: its profile is whole
        (101.75, True),  # 0.05 from the end (101.8)
        (101.3, False),
    ],
)
def test_missing_line_at_the_axis_end_is_masked(pos, masked):
    # A line whose profile the axis end cuts may not make a peak (a peak
    # needs samples on both sides of its maximum): masked, not missing.
    n = 1
    m, c = hidden_groups(
        PEAKS,
        None,
        PADDED,
        np.ones(n, dtype=bool),
        np.zeros(n, dtype=bool),
        np.array([600.0]),  # above every peak: no wing masks it
        np.array([pos]),
        np.full(n, TOL),
        np.zeros(n),
        xray=False,
        axis_range=(99.8, 101.8),
        peak_resolution=np.full(PEAKS.size, 0.1),
    )
    assert m[0] == masked and not c[0]


def test_saturated_peak_masks_a_line_of_any_height():
    # A flat-topped (saturated) peak's recorded height is only a lower bound:
    # the 500 peak at 100.25 masks a line predicted at 10,000 in its wing
    # only when flagged saturated.
    def masked(saturated):
        m, _ = hidden_groups(
            PEAKS,
            None,
            PADDED,
            np.ones(1, dtype=bool),
            np.zeros(1, dtype=bool),
            np.array([10_000.0]),
            np.array([100.0]),
            np.full(1, TOL),
            np.zeros(1),
            xray=False,
            saturated=saturated,
        )
        return bool(m[0])

    assert not masked(None)
    assert not masked(np.array([False, False, False]))
    assert masked(np.array([False, True, False]))
