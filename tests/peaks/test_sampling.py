"""Gaps in a spectrum's sampling (workbench.peaks.sampling); axes invented unless named."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.peaks.sampling import GAP_CONTEXT, GAP_SPACING_FACTOR, sampling_gaps


def test_constants():
    # Common practice, no source (module docstring).
    assert GAP_SPACING_FACTOR == 3.0
    assert GAP_CONTEXT == 8


@pytest.mark.parametrize(
    "x",
    [
        np.arange(0.0, 100.0, 0.1),  # uniform
        np.geomspace(300.0, 1000.0, 20_000),  # constant resolving power (log-λ grid)
        # The ASTM G173-03 table's steps (0.5 nm to 400 nm, 1 nm to 1700 nm,
        # 5 nm beyond; from memory), a change of step, not a gap:
        np.concatenate([np.arange(280.0, 400.0, 0.5), np.arange(400.0, 1700.0, 1.0)]),
        np.concatenate([np.arange(1000.0, 1700.0, 1.0), np.arange(1700.0, 4000.0, 5.0)]),
    ],
)
def test_no_gap_in_regular_or_stepped_sampling(x):
    assert sampling_gaps(x) == ()


def test_removed_samples_leave_a_gap_between_their_neighbours():
    x = np.round(np.arange(0.0, 100.0, 0.1), 10)
    keep = ~((x > 50.0) & (x < 52.0))
    assert sampling_gaps(x[keep]) == (pytest.approx((50.0, 52.0)),)


def test_two_gaps_in_order_and_one_sample_missing_is_no_gap():
    x = np.arange(0, 2000) * 0.01
    x = np.delete(x, [100])  # one sample: a step of 2, below the factor 3
    x = np.delete(x, np.arange(500, 510))
    x = np.delete(x, np.arange(1500, 1600))
    gaps = sampling_gaps(x)
    assert len(gaps) == 2
    assert gaps[0][0] < gaps[0][1] < gaps[1][0] < gaps[1][1]


def test_short_axes():
    assert sampling_gaps(np.array([1.0, 2.0])) == ()
    assert sampling_gaps(np.array([])) == ()
