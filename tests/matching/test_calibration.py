"""Theil–Sen fit and the binomial chance probability against scipy.stats (test-only oracle)."""

import numpy as np
import pytest
from scipy import special, stats

from workbench.matching.calibration import estimate_scale, theil_sen


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_theil_sen_agrees_with_scipy(seed):
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(200, 800, 25))
    y = 0.003 + 2e-6 * x + rng.normal(0, 1e-4, x.size)
    ours = theil_sen(x, y)
    ref = stats.theilslopes(y, x)  # scipy's implementation of Sen (1968)
    assert ours[0] == pytest.approx(ref.slope, rel=1e-12)
    assert ours[1] == pytest.approx(ref.low_slope, rel=1e-12)
    assert ours[2] == pytest.approx(ref.high_slope, rel=1e-12)


@pytest.mark.parametrize(("k", "n", "p"), [(1, 3, 0.2), (3, 3, 0.18), (5, 20, 0.05), (20, 75, 0.1)])
def test_betainc_is_binomial_tail(k, n, p):
    # P(X >= k), X ~ Binomial(n, p) == I_p(k, n-k+1) (standard identity; scipy as oracle).
    assert special.betainc(k, n - k + 1, p) == pytest.approx(stats.binom.sf(k - 1, n, p), rel=1e-10)


def test_estimate_scale_needs_three_pairs():
    check = estimate_scale(np.array([1.0, 2.0]), np.array([1.0, 2.0]), "nm")
    assert check.shift is None and "3 needed" in check.message


def test_estimate_scale_recovers_shift_and_stretch():
    ref = np.linspace(300, 700, 12)
    obs = ref + 0.01 + 1e-5 * (ref - np.median(ref))  # imposed (invented test condition)
    check = estimate_scale(obs, ref, "nm")
    assert check.shift == pytest.approx(0.01, abs=1e-9)
    assert check.stretch == pytest.approx(1e-5, rel=1e-6)
    np.testing.assert_allclose(check.correct(obs), ref, atol=1e-9)
