"""Peak density for the chance of a hit (workbench.matching.density).

Truth: analytic (evenly spaced peaks have a known density) and the module's
own plain estimate, which the own-window version must equal where the
species owns no peak.
"""

from __future__ import annotations

import numpy as np
import pytest

import workbench.matching.density as density
from workbench.matching.density import (
    LOCAL_DENSITY_NEIGHBOURS,
    density_outside_own_peaks,
    nearest_neighbour_density,
)


def _peaks(seed: int = 7, n: int = 400) -> np.ndarray:
    return np.sort(np.random.default_rng(seed).uniform(400.0, 500.0, n))


def _at(pos, x, own_peak=(), own_owner=(), usable=None):
    """One group of species 0 at each of ``x``; ``usable`` defaults to every peak."""
    x = np.atleast_1d(np.asarray(x, dtype=float))
    return density_outside_own_peaks(
        pos,
        np.ones(pos.size, bool) if usable is None else usable,
        x,
        np.zeros(x.size, int),
        np.asarray(own_peak, dtype=int),
        np.asarray(own_owner, dtype=int),
        np.ones(x.size, bool),
    )


def test_evenly_spaced_peaks_give_their_density():
    # Peaks every 0.1 nm: 10 per nm (analytic). Midway between two peaks the
    # distances come in pairs 0.05, 0.15, ... nm, so the 10th nearest lies at
    # 0.45 nm and (m - 1) / (2 r_m) = 9 / 0.9 = 10 per nm; on a peak the 10th
    # nearest (itself first) lies at 0.5 nm: 9 per nm.
    pos = np.arange(1000) * 0.1
    assert nearest_neighbour_density(pos, np.array([50.05]))[0] == pytest.approx(10.0)
    assert nearest_neighbour_density(pos, np.array([pos[500]]))[0] == pytest.approx(9.0)


def test_without_own_peaks_it_is_the_plain_estimate():
    pos = _peaks()
    x = np.array([420.0, 450.0, 480.0])
    want = np.ones(3, dtype=bool)
    none = np.zeros(0, dtype=np.int64)
    got = density_outside_own_peaks(
        pos, np.ones(pos.size, bool), x, np.array([0, 0, 1]), none, none, want
    )
    np.testing.assert_allclose(got, nearest_neighbour_density(pos, x))


def test_own_peaks_and_excluded_peaks_are_left_out():
    # Species 0 owns every peak in [448, 452]; the density at 450 is then that of
    # the peaks outside, i.e. the plain estimate over the remaining peaks.
    pos = _peaks()
    own = np.flatnonzero((pos >= 448.0) & (pos <= 452.0))
    x = np.array([450.0])
    got = _at(pos, x, own, np.zeros(own.size, int))
    rest = np.delete(pos, own)
    # Enough outside peaks lie within the searched neighbours here (the 4 nm
    # stretch holds about 16 of the 400 peaks, fewer than NEIGHBOURS_SEARCHED).
    assert own.size < density.NEIGHBOURS_SEARCHED
    assert got[0] == pytest.approx(nearest_neighbour_density(rest, x)[0])
    assert got[0] < nearest_neighbour_density(pos, x)[0]
    # Another species owning those peaks changes nothing for species 0.
    other = _at(pos, x, own, np.ones(own.size, int))
    assert other[0] == pytest.approx(nearest_neighbour_density(pos, x)[0])
    # Excluded peaks (bands, artefacts) are not counted either.
    usable = np.ones(pos.size, bool)
    usable[own] = False
    assert _at(pos, x, usable=usable)[0] == pytest.approx(got[0])


def test_a_stretch_its_own_peaks_fill_keeps_the_average():
    # Species 0 owns every peak: nothing outside to measure, so 0 (the caller keeps
    # the spectrum's average density).
    pos = _peaks()
    assert _at(pos, 450.0, np.arange(pos.size), np.zeros(pos.size, int))[0] == 0.0


def test_only_wanted_groups_and_chunks_change_nothing(monkeypatch):
    pos = _peaks(n=300)
    rng = np.random.default_rng(3)
    x = rng.uniform(400.0, 500.0, 60)
    owner = rng.integers(0, 7, 60)
    own_peak = rng.integers(0, pos.size, 200)
    own_owner = rng.integers(0, 7, 200)
    want = rng.random(60) < 0.7
    args = (pos, np.ones(pos.size, bool), x, owner, own_peak, own_owner, want)
    whole = density_outside_own_peaks(*args)
    assert np.all(whole[~want] == 0.0)
    # A table of one species at a time gives the same figures.
    monkeypatch.setattr(density, "OWN_TABLE_CELLS", pos.size)
    np.testing.assert_array_equal(density_outside_own_peaks(*args), whole)


def test_too_few_peaks_give_zero():
    pos = np.linspace(400.0, 401.0, LOCAL_DENSITY_NEIGHBOURS - 1)
    assert _at(pos, 400.5)[0] == 0.0
