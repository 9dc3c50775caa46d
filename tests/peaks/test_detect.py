"""Peak finding on synthetic spectra with known answers."""

from __future__ import annotations

import math

import numpy as np
import pytest

from workbench.datamodel import Spectrum
from workbench.errors import InsufficientDataError, ValueRangeError
from workbench.peaks import PeakFindingParameters, find_peaks, refine_centres

SEED = 20261202
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))  # Gaussian FWHM = 2√(2 ln 2)σ (analytic)


def _gauss(x, c, a, s):
    return a * np.exp(-0.5 * ((x - c) / s) ** 2)


def _emission(n=20001, noise=2.0, seed=SEED):
    rng = np.random.default_rng(seed)
    x = np.linspace(300.0, 700.0, n)
    dx = x[1] - x[0]
    sig = 2.5 * dx
    centres = np.array([350.1234, 420.5077, 510.0031, 640.777])
    amps = np.array([500.0, 200.0, 1000.0, 150.0])
    base = 50.0 + 0.05 * (x - 300.0) + 2e-4 * (x - 500.0) ** 2  # sloped + curved
    y = base + sum(_gauss(x, c, a, sig) for c, a in zip(centres, amps, strict=True))
    y = y + rng.normal(0.0, noise, n)
    return Spectrum(x, y, "wavelength", "air"), centres, amps, sig, dx


@pytest.mark.parametrize("baseline", ["snip", "als"])
def test_centres_fwhm_area_recovered(baseline):
    spec, centres, amps, sig, dx = _emission()
    peaks = find_peaks(spec, baseline=baseline)
    assert peaks.table.height == 4
    # Centres within 0.1 pixel at SNR >= 75 (common practice, no source).
    assert np.all(np.abs(peaks.positions - centres) < 0.1 * dx)
    fwhm = peaks.table["fwhm_nm"].to_numpy()
    np.testing.assert_allclose(fwhm, FWHM_PER_SIGMA * sig, rtol=0.03)
    # ∫ over ±FWHM of a Gaussian = erf(FWHM/(σ√2)) = erf(√(4 ln 2)) of the total (analytic).
    frac = math.erf(math.sqrt(4.0 * math.log(2.0)))
    np.testing.assert_allclose(
        peaks.table["area"].to_numpy(), frac * amps * sig * math.sqrt(2 * math.pi), rtol=0.03
    )
    np.testing.assert_allclose(peaks.intensities, amps, rtol=0.03)
    np.testing.assert_allclose(peaks.table["snr"].to_numpy(), amps / 2.0, rtol=0.1)  # σ = 2
    assert not peaks.table["saturated"].any()
    assert peaks.extra["peak_finding"]["baseline"] == baseline
    assert peaks.extra["baseline"].shape == spec.x.shape


def test_pure_noise_gives_no_more_than_expected_false_alarms():
    rng = np.random.default_rng(SEED)
    n = 200_000
    x = np.linspace(200.0, 900.0, n)
    y = 1000.0 + rng.normal(0.0, 5.0, n)
    peaks = find_peaks(Spectrum(x, y, "wavelength", "air"), min_snr=5.0)
    # Expected count ≈ n·P(Z > 5) = 2e5 × 2.87e-7 ≈ 0.06 (normal tail, analytic);
    # more than 2 would have Poisson probability < 1e-4.
    assert peaks.table.height <= 2


def test_absorption_dips_on_continuum():
    rng = np.random.default_rng(SEED)
    x = np.linspace(400.0, 600.0, 10001)
    dx = x[1] - x[0]
    sig = 2.0 * dx
    continuum = 1000.0 * (1.0 + 0.3 * (x - 500.0) / 100.0)
    centres = np.array([430.2222, 488.8881, 551.0101])
    depths = np.array([0.3, 0.5, 0.2])
    profile = 1.0 - sum(_gauss(x, c, d, sig) for c, d in zip(centres, depths, strict=True))
    y = continuum * profile + rng.normal(0.0, 2.0, x.size)
    peaks = find_peaks(Spectrum(x, y, "wavelength", "vacuum"), mode="absorption")
    assert peaks.mode == "absorption" and peaks.table.height == 3
    assert np.all(np.abs(peaks.positions - centres) < 0.1 * dx)
    np.testing.assert_allclose(peaks.intensities, depths, rtol=0.05)  # depth / continuum
    assert peaks.extra["intensity_unit"] == "fraction of continuum"


def test_saturated_peak_flagged():
    spec, centres, _, _, _ = _emission()
    y = spec.y.copy()
    top = 600.0 + 0.05 * (510.0 - 300.0) + 50.0  # below the 1000-count line's top
    y = np.minimum(y, top)
    peaks = find_peaks(Spectrum(spec.x, y, "wavelength", "air"))
    sat = dict(zip(np.round(peaks.positions, 1), peaks.table["saturated"].to_list(), strict=True))
    assert sat[510.0] is True
    assert sum(sat.values()) == 1
    # the centre of a clipped top is the middle of its flat run (symmetric line: true centre)
    assert abs(peaks.positions[np.argmin(np.abs(peaks.positions - 510.0))] - centres[2]) < 0.02


def _clipped_lines(ceiling_jitter, n_clipped, seed=SEED):
    """Five lines on a flat baseline; the ``n_clipped`` strongest clipped at a
    ceiling that varies by ``ceiling_jitter`` (relative) from sample to sample,
    as after bias subtraction or flat-fielding (synthetic input)."""
    rng = np.random.default_rng(seed)
    x = np.linspace(500.0, 600.0, 5001)
    sig = 3.0 * (x[1] - x[0])
    centres = np.array([510.0, 530.0, 550.0, 570.0, 590.0])
    amps = np.array([400.0, 3000.0, 2500.0, 5000.0, 4000.0])
    y = 20.0 + sum(_gauss(x, c, a, sig) for c, a in zip(centres, amps, strict=True))
    y = y + rng.normal(0.0, 1.0, x.size)
    clipped = np.argsort(-amps)[:n_clipped]
    ceiling = 0.9 * amps[clipped].min() * (1.0 + ceiling_jitter * rng.uniform(-1, 1, x.size))
    y = np.minimum(y, ceiling) if n_clipped else y
    return Spectrum(x, y, "wavelength", "air"), centres, clipped


@pytest.mark.parametrize("jitter", [0.0005, 0.003])
def test_ceiling_shared_by_three_clipped_lines_is_flagged(jitter):
    # 0.003: the spread of the clipped tops in the Keck LRIS arc (0.57 % of
    # its maximum, measured: tests/realdata/test_realspectra.py).
    spec, centres, clipped = _clipped_lines(jitter, 3)
    peaks = find_peaks(spec)
    near = np.abs(peaks.positions[:, None] - centres[None, :]).argmin(axis=1)
    flagged = set(centres[near[peaks.table["saturated"].to_numpy()]])
    assert flagged == set(centres[clipped])


def test_two_clipped_lines_at_an_uneven_ceiling_are_not_flagged():
    # Known limit: fewer than three flat tops at an uneven ceiling are not
    # told from two strong lines of nearly equal height (detect.CEILING_MIN_RUNS).
    spec, _, _ = _clipped_lines(0.003, 2)
    assert not find_peaks(spec).table["saturated"].any()


@pytest.mark.parametrize("seed", range(10))
def test_one_broad_noisy_top_is_not_a_ceiling(seed):
    # One broad line (FWHM 240 samples, as a Stark-broadened H-alpha sampled
    # finely) with noise of 0.5 % of its height: noise splits its top into
    # several runs within 1 % of the maximum, all one peak. Without the
    # separation rule half of these draws were flagged (measured: 10 of 20
    # seeds; synthetic input).
    rng = np.random.default_rng(seed)
    x = np.arange(3001.0)
    y = 10.0 + _gauss(x, 1500.0, 1000.0, 240.0 / FWHM_PER_SIGMA) + _gauss(x, 700.0, 300.0, 2.0)
    y = y + rng.normal(0.0, 5.0, x.size)
    spec = Spectrum(400.0 + 0.01 * x, y, "wavelength", "air")
    assert not find_peaks(spec).table["saturated"].any()


@pytest.mark.parametrize("seed", range(20))
def test_unclipped_lines_of_random_heights_are_not_flagged(seed):
    rng = np.random.default_rng(SEED + seed)
    x = np.linspace(400.0, 700.0, 6001)
    centres = np.sort(rng.uniform(405.0, 695.0, 40))
    amps = 10.0 ** rng.uniform(1.0, 4.0, 40)
    sig = rng.uniform(1.5, 6.0) * (x[1] - x[0])
    y = 5.0 + sum(_gauss(x, c, a, sig) for c, a in zip(centres, amps, strict=True))
    y = y + rng.normal(0.0, 0.5, x.size)
    assert not find_peaks(Spectrum(x, y, "wavelength", "air")).table["saturated"].any()


def test_saturation_level_parameter():
    spec, _, _, _, _ = _emission()
    peaks = find_peaks(spec, saturation_level=500.0)
    # lines of 500 and 1000 counts on a ~60-count baseline exceed 500 raw (synthetic input)
    assert peaks.table["saturated"].to_list() == [True, False, True, False]


def test_negative_values_after_background_subtraction():
    rng = np.random.default_rng(SEED)
    x = np.linspace(1000.0, 20000.0, 8001)  # energy axis in eV (XRF-like)
    dx = x[1] - x[0]
    lines = _gauss(x, 6403.8, 300.0, 2 * dx) + _gauss(x, 8047.8, 200.0, 2 * dx)
    y = rng.normal(0.0, 3.0, x.size) + lines
    assert (y < 0).any()
    peaks = find_peaks(Spectrum(x, y, "energy", None))
    # 3-point centre scatter ≈ 0.5·√2·(σ_noise/A)·σ_px² ≈ 0.04 px here (error propagation
    # through Caruana's formula, analytic); 0.2 px is ~5 standard deviations.
    np.testing.assert_allclose(peaks.positions, [6403.8, 8047.8], atol=0.2 * dx)
    assert "fwhm_eV" in peaks.table.columns


def test_flat_signal_gives_empty_table():
    x = np.linspace(400.0, 500.0, 100)
    peaks = find_peaks(Spectrum(x, np.full(100, 7.0), "wavelength", "air"))
    assert peaks.table.height == 0
    assert set(peaks.table.columns) >= {"wavelength_nm", "intensity", "fwhm_nm", "snr", "saturated"}


def test_refine_centres_exact_for_gaussian_and_parabola():
    # Three samples of an exact Gaussian: the log-parabola is exact (Caruana et al. 1986).
    k = np.arange(20, dtype=float)
    g = np.exp(-0.5 * ((k - 10.3) / 1.7) ** 2) * 40.0
    fi, h = refine_centres(g, np.array([10]))
    assert abs(fi[0] - 10.3) < 1e-10 and abs(h[0] - 40.0) < 1e-9
    # A value <= 0 falls back to the parabola, exact for a quadratic (analytic).
    q = 1.0 - (k - 10.25) ** 2  # q[9] < 0 forces the parabola
    fi, h = refine_centres(q, np.array([10]))
    assert abs(fi[0] - 10.25) < 1e-12 and abs(h[0] - 1.0) < 1e-12


def test_parameters_recorded_and_validated():
    prm = PeakFindingParameters(min_snr=4.0, baseline=None)
    assert prm.to_dict()["min_snr"] == 4.0 and prm.to_dict()["baseline"] is None
    with pytest.raises(ValueRangeError, match="mode"):
        PeakFindingParameters(mode="both")
    with pytest.raises(ValueRangeError, match="baseline"):
        PeakFindingParameters(baseline="poly")
    with pytest.raises(ValueRangeError, match="min_snr"):
        PeakFindingParameters(min_snr=0.0)


def test_too_short_spectrum():
    with pytest.raises(InsufficientDataError, match="at least 5"):
        find_peaks(Spectrum(np.arange(1.0, 4.0), np.ones(3), "wavelength", "air"))
