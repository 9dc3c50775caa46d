"""Baselines (SNIP, ALS) and the robust noise estimate."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.errors import ValueRangeError
from workbench.peaks import als_baseline, noise_sigma, snip_baseline

SEED = 20261202


def _curved(n=5000):
    x = np.linspace(0.0, 1.0, n)
    return x, 100.0 + 40.0 * x + 30.0 * (x - 0.4) ** 2


def _with_lines(x, base):
    lines = np.zeros_like(x)
    for c in (0.2, 0.5, 0.8):
        lines += 500.0 * np.exp(-0.5 * ((x - c) / 0.001) ** 2)
    return base + lines


@pytest.mark.parametrize("lls", [True, False])
def test_snip_follows_smooth_baseline_under_lines(lls):
    x, base = _curved()
    est = snip_baseline(_with_lines(x, base), iterations=40, lls=lls)
    # Away from the ends a smooth baseline is kept to within 0.5 % (common practice, no source).
    np.testing.assert_allclose(est[100:-100], base[100:-100], rtol=5e-3)


def test_snip_decreasing_window_variant_also_works():
    x, base = _curved()
    est = snip_baseline(_with_lines(x, base), iterations=40, decreasing=True)
    np.testing.assert_allclose(est[100:-100], base[100:-100], rtol=5e-3)


def test_snip_never_above_signal():
    rng = np.random.default_rng(SEED)
    y = rng.normal(10.0, 1.0, 1000)
    assert np.all(snip_baseline(y, iterations=20) <= y + 1e-9)  # clipping only lowers (Ryan 1988)


def test_als_follows_smooth_baseline():
    x, base = _curved()
    est = als_baseline(_with_lines(x, base), lam=1e7, p=0.001)
    np.testing.assert_allclose(est[100:-100], base[100:-100], rtol=1e-2)


def test_als_decimated_path_for_long_spectra():
    x, base = _curved(200_000)
    # Same smoothness per unit x as lam=1e7 at n=5000: λ scales with n⁴ (Eilers & Boelens 2005).
    est = als_baseline(_with_lines(x, base), lam=1e7 * 40.0**4, p=0.001, max_points=20_000)
    assert est.shape == x.shape
    np.testing.assert_allclose(est[2000:-2000], base[2000:-2000], rtol=2e-2)


def test_als_rejects_bad_parameters():
    with pytest.raises(ValueRangeError, match="asymmetry"):
        als_baseline(np.ones(10), p=1.5)
    with pytest.raises(ValueRangeError, match="iterations"):
        snip_baseline(np.ones(10), iterations=0)


def test_noise_sigma_is_robust_to_baseline_and_lines():
    rng = np.random.default_rng(SEED)
    x, base = _curved(100_000)
    y = _with_lines(x, base) + rng.normal(0.0, 3.0, x.size)
    # MAD·1.4826/√2 of first differences estimates σ (Rousseeuw & Croux 1993); 2 % at n = 1e5.
    assert noise_sigma(y) == pytest.approx(3.0, rel=0.02)


def test_noise_sigma_zero_for_constant():
    assert noise_sigma(np.full(50, 4.0)) == 0.0
