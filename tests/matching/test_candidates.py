"""Vectorised candidate search against a brute-force double loop (random data, fixed seed)."""

import numpy as np
import pytest

from workbench.matching.candidates import find_candidates


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_same_pairs_as_brute_force(seed):
    rng = np.random.default_rng(seed)
    ref = np.sort(rng.uniform(200, 300, 400))
    obs = rng.uniform(199, 301, 150)
    tol = rng.uniform(0.01, 0.5, 150)
    got = find_candidates(obs, tol, ref)
    pairs = {(int(o), int(r)) for o, r in zip(got.obs, got.ref, strict=True)}
    brute = {
        (i, j) for i in range(obs.size) for j in range(ref.size) if abs(obs[i] - ref[j]) <= tol[i]
    }
    assert pairs == brute
    np.testing.assert_allclose(got.delta, obs[got.obs] - ref[got.ref])


def test_no_candidates():
    got = find_candidates(np.array([100.0]), np.array([0.1]), np.array([200.0, 300.0]))
    assert got.size == 0


def test_range_max_matches_loop():
    from workbench.peaks.extrema import range_max

    rng = np.random.default_rng(7)
    a = rng.normal(size=50)
    a[[3, 17]] = -np.inf  # unknown intensities
    padded = np.append(a, -np.inf)
    lo = rng.integers(0, 50, 200)
    hi = np.minimum(lo + rng.integers(0, 6, 200), 50)
    got = range_max(padded, lo, hi)
    want = np.array([a[i:j].max() if j > i else -np.inf for i, j in zip(lo, hi, strict=True)])
    np.testing.assert_array_equal(got, want)
