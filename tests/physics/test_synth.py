import math

import numpy as np
import pytest

from workbench.datamodel import Spectrum
from workbench.errors import ValueRangeError
from workbench.physics.synth import (
    absorption_spectrum,
    line_profile,
    render_lines,
    synthetic_spectrum,
    voigt_widths,
)


def _measured_fwhm(x: np.ndarray, y: np.ndarray) -> float:
    """FWHM from linear interpolation of the half-maximum crossings (common practice)."""
    half = y.max() / 2
    above = np.flatnonzero(y >= half)
    i, j = above[0], above[-1]
    left = np.interp(half, [y[i - 1], y[i]], [x[i - 1], x[i]])
    right = np.interp(half, [y[j + 1], y[j]], [x[j + 1], x[j]])
    return right - left


@pytest.mark.parametrize("kind", ["gaussian", "lorentzian", "voigt"])
def test_profiles_unit_area_and_fwhm(kind):
    x = np.linspace(-2000.0, 2000.0, 2_000_001)
    y = line_profile(x, 0.0, 1.0, kind)
    # Unit area by construction (normalised profiles); a Lorentzian keeps 1 − 2/(π·4000)
    # of its area within ±2000 FWHM (analytic arctan tail), hence 2e-4.
    assert np.trapezoid(y, x) == pytest.approx(1.0, abs=2e-4)
    # FWHM 1 by definition; Voigt via Olivero & Longbothum 1977 (0.02 % accuracy, from memory).
    assert _measured_fwhm(x, y) == pytest.approx(1.0, rel=5e-4)


def test_profile_peak_heights():
    # Peak heights of unit-area profiles: Gaussian 2√(ln2/π)/FWHM, Lorentzian 2/(π·FWHM) (analytic).
    assert line_profile(0.0, 0.0, 2.0, "gaussian") == pytest.approx(
        math.sqrt(math.log(2) / math.pi)
    )
    assert line_profile(0.0, 0.0, 2.0, "lorentzian") == pytest.approx(1 / math.pi)
    f_g, f_l = voigt_widths(1.0, 0.0)
    assert (f_g, f_l) == (pytest.approx(1.0), pytest.approx(0.0))  # pure Gaussian limit


def test_render_area_conservation():
    x = np.linspace(400.0, 420.0, 200_001)
    pos = [402.0, 405.5, 410.0, 415.25]
    areas = [1.0, 3.5, 0.25, 10.0]
    y = render_lines(pos, areas, x, resolving_power=20_000)
    # Total area equals the sum of the line intensities (area-normalised rendering).
    assert np.trapezoid(y, x) == pytest.approx(sum(areas), rel=1e-6)
    # Each line on its own window:
    for p, a in zip(pos, areas, strict=True):
        sel = np.abs(x - p) < 0.5
        assert np.trapezoid(y[sel], x[sel]) == pytest.approx(a, rel=1e-6)


def test_rendered_gaussian_fwhm_equals_lambda_over_R():
    x = np.linspace(499.0, 501.0, 400_001)
    y = render_lines([500.0], [1.0], x, resolving_power=10_000, profile="gaussian")
    # FWHM = λ/R = 500/10000 = 0.05 nm (definition of resolving power).
    assert _measured_fwhm(x, y) == pytest.approx(0.05, rel=1e-4)


def test_synthetic_spectrum_deterministic_and_labelled():
    kwargs = dict(x_range=(390.0, 410.0), n_points=5001, resolving_power=5000, noise_sigma=0.01)
    a = synthetic_spectrum([395.0, 404.0], [1.0, 0.5], seed=20261202, **kwargs)
    b = synthetic_spectrum([395.0, 404.0], [1.0, 0.5], seed=20261202, **kwargs)
    c = synthetic_spectrum([395.0, 404.0], [1.0, 0.5], seed=7, **kwargs)
    assert isinstance(a, Spectrum)
    assert np.array_equal(a.y, b.y) and not np.array_equal(a.y, c.y)
    assert a.medium == "air" and a.axis == "wavelength" and "invented" in a.y_label
    resid = a.y - synthetic_spectrum([395.0, 404.0], [1.0, 0.5], **{**kwargs, "noise_sigma": 0}).y
    assert np.std(resid) == pytest.approx(0.01, rel=0.05)  # the noise σ we asked for


def test_continuum_options():
    x_range = (1.0, 2.0)
    flat = synthetic_spectrum([1.5], [0.0], axis="energy", medium=None, x_range=x_range,
                              n_points=11, fwhm=0.01, continuum=2.0)  # fmt: skip
    assert np.all(flat.y == 2.0) and flat.medium is None
    sloped = synthetic_spectrum([1.5], [0.0], axis="energy", medium=None, x_range=x_range,
                                n_points=11, fwhm=0.01, continuum=lambda x: 3 * x)  # fmt: skip
    assert sloped.y == pytest.approx(3 * sloped.x)
    with pytest.raises(ValueRangeError, match="continuum has 3 values"):
        synthetic_spectrum([1.5], [1.0], axis="energy", medium=None, x_range=x_range,
                           n_points=11, fwhm=0.01, continuum=[1, 2, 3])  # fmt: skip


def test_absorption_spectrum_depths():
    s = absorption_spectrum([500.0, 510.0], [0.4, 1.0], x_range=(495.0, 515.0), n_points=40_001,
                            fwhm=0.2)  # fmt: skip
    # Central depth d gives continuum·(1 − d) at the line centre (definition used here).
    i500 = int(np.argmin(np.abs(s.x - 500.0)))
    i510 = int(np.argmin(np.abs(s.x - 510.0)))
    assert s.y[i500] == pytest.approx(0.6, abs=1e-9)
    assert s.y[i510] == pytest.approx(0.0, abs=1e-9)
    assert s.y[0] == pytest.approx(1.0) and s.y.min() >= 0.0
    assert "invented" in s.y_label
    with pytest.raises(ValueRangeError, match="depth of line 0"):
        absorption_spectrum([500.0], [1.5], x_range=(495.0, 505.0), fwhm=0.2)


def test_large_grid_windowing_matches_full_evaluation():
    # Windowed rendering equals a full evaluation where both are computed (common practice).
    rng = np.random.default_rng(20261202)
    x = np.linspace(300.0, 310.0, 100_001)
    pos = rng.uniform(300.5, 309.5, 40)
    inten = rng.uniform(0.1, 1.0, 40)
    y = render_lines(pos, inten, x, fwhm=0.01)
    full = sum(a * line_profile(x, p, 0.01) for p, a in zip(pos, inten, strict=True))
    assert np.max(np.abs(y - full)) < 1e-9 * np.max(full)


def test_bad_arguments():
    x = np.linspace(0.0, 1.0, 11)
    with pytest.raises(ValueRangeError, match="exactly one of resolving_power and fwhm"):
        render_lines([0.5], [1.0], x)
    with pytest.raises(ValueRangeError, match="strictly increasing"):
        render_lines([0.5], [1.0], x[::-1], fwhm=0.1)
    with pytest.raises(ValueRangeError, match="unknown line profile"):
        render_lines([0.5], [1.0], x, fwhm=0.1, profile="box")  # type: ignore[arg-type]
    with pytest.raises(ValueRangeError, match="energy axis has no medium"):
        synthetic_spectrum([1.0], [1.0], axis="energy", x_range=(0.5, 1.5), fwhm=0.1)
    with pytest.raises(ValueRangeError, match="lorentz_fraction"):
        line_profile(x, 0.5, 0.1, "voigt", lorentz_fraction=2.0)


def test_voigt_wing_approximation_close_to_exact():
    from scipy.special import voigt_profile

    # Exact Voigt (scipy.special.voigt_profile, registry package) vs the windowed/wing form.
    x = np.linspace(-200.0, 200.0, 40_001)
    f_g, f_l = voigt_widths(1.0, 0.5)
    exact = voigt_profile(x, f_g / (2 * np.sqrt(2 * np.log(2))), f_l / 2)
    ours = line_profile(x, 0.0, 1.0, "voigt", lorentz_fraction=0.5)
    assert np.max(np.abs(ours - exact) / exact) < 1e-3
