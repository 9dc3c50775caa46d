import numpy as np
import pytest
from scipy import constants as sc

from workbench.errors import InsufficientDataError, PhysicsError, ValueRangeError
from workbench.physics.boltzmann import K_B_EV_PER_K, boltzmann_plot, relative_line_intensities

# Invented Fe I-like lines (values made up for the test, loosely in the range of
# real Fe I data): g_upper, A_ki (s⁻¹), E_upper (eV), wavelength (nm).
LINES = np.array(
    [
        (11, 1.6e7, 3.33, 371.99),
        (9, 6.2e6, 3.37, 373.49),
        (7, 2.4e7, 4.18, 404.58),
        (9, 3.1e7, 4.55, 438.35),
        (5, 8.0e6, 4.99, 495.76),
        (11, 4.3e7, 5.07, 526.95),
        (7, 1.3e7, 5.31, 532.80),
        (9, 2.2e7, 5.59, 537.15),
        (13, 4.7e7, 5.87, 561.56),
        (3, 9.5e6, 6.17, 589.00),
        (9, 1.9e7, 6.35, 613.70),
        (11, 3.6e7, 6.58, 641.99),
    ]
)
G, A, E, LAM = LINES.T


def test_k_b_in_eV():
    assert K_B_EV_PER_K == pytest.approx(8.617333262e-5, rel=1e-9)  # CODATA 2018 k/e, from memory


def test_relative_intensities_formula():
    rel = relative_line_intensities(G, A, E, LAM, 9000.0)
    # Direct evaluation of g A/λ exp(−E/kT) (formula in the brief), normalised to max 1.
    raw = G * A / LAM * np.exp(-E * sc.e / (sc.k * 9000.0))
    assert rel.max() == 1.0
    assert rel == pytest.approx(raw / raw.max(), rel=1e-12)
    photon = relative_line_intensities(G, A, E, LAM, 9000.0, photon_counting=True)
    raw_p = G * A * np.exp(-E * sc.e / (sc.k * 9000.0))
    assert photon == pytest.approx(raw_p / raw_p.max(), rel=1e-12)


def test_exact_data_give_exact_temperature():
    intensity = 123.0 * relative_line_intensities(G, A, E, LAM, 9000.0)
    fit = boltzmann_plot(intensity, G, A, E, LAM)
    assert fit.temperature_K == pytest.approx(9000.0, rel=1e-10)  # synthesised at 9000 K
    assert fit.r_squared == pytest.approx(1.0, abs=1e-12)
    assert fit.n_lines == 12 and fit.used.all()
    assert fit.energy_span_eV == pytest.approx(6.58 - 3.33, rel=1e-12)
    photon = relative_line_intensities(G, A, E, LAM, 12000.0, photon_counting=True)
    fit_p = boltzmann_plot(photon, G, A, E, LAM, photon_counting=True)
    assert fit_p.temperature_K == pytest.approx(12000.0, rel=1e-10)  # synthesised at 12000 K


def test_noisy_data_recover_9000_K():
    rng = np.random.default_rng(20261202)
    clean = relative_line_intensities(G, A, E, LAM, 9000.0)
    noisy = clean * (1 + 0.02 * rng.standard_normal(clean.size))  # 2 % noise
    fit = boltzmann_plot(noisy, G, A, E, LAM)
    assert fit.temperature_K == pytest.approx(9000.0, abs=100.0)  # synthesised at 9000 K
    assert 0 < fit.temperature_uncertainty_K < 200
    weighted = boltzmann_plot(noisy, G, A, E, LAM, intensity_uncertainty=0.02 * noisy)
    assert weighted.weighted
    assert weighted.temperature_K == pytest.approx(9000.0, abs=100.0)
    # σ_T from σ_slope: σ_T = σ_s/(k s²), propagated by hand from the fit's own numbers.
    s, ss = weighted.slope_per_eV, weighted.slope_uncertainty_per_eV
    assert weighted.temperature_uncertainty_K == pytest.approx(ss / (K_B_EV_PER_K * s * s))


def test_uncertainty_scales_with_noise():
    # Monte-Carlo spread vs reported σ_T over 200 seeded replicates (common practice).
    rng = np.random.default_rng(20261202)
    clean = relative_line_intensities(G, A, E, LAM, 9000.0)
    temps, sigmas = [], []
    for _ in range(200):
        noisy = clean * (1 + 0.02 * rng.standard_normal(clean.size))
        fit = boltzmann_plot(noisy, G, A, E, LAM, intensity_uncertainty=0.02 * clean)
        temps.append(fit.temperature_K)
        sigmas.append(fit.temperature_uncertainty_K)
    assert np.std(temps) == pytest.approx(np.mean(sigmas), rel=0.2)


def test_unusable_lines_are_masked():
    intensity = relative_line_intensities(G, A, E, LAM, 9000.0)
    intensity[3] = np.nan
    intensity[5] = -1.0
    fit = boltzmann_plot(intensity, G, A, E, LAM)
    assert fit.n_lines == 10
    assert not fit.used[3] and not fit.used[5]
    assert np.isnan(fit.residuals[3]) and np.isnan(fit.y_ln[5])
    assert fit.temperature_K == pytest.approx(9000.0, rel=1e-10)
    d = fit.to_dict()
    assert d["residuals"][3] is None and d["used"][5] is False


def test_refuses_too_few_lines():
    intensity = relative_line_intensities(G[:2], A[:2], E[:2], LAM[:2], 9000.0)
    with pytest.raises(InsufficientDataError, match="at least 3 usable lines, got 2") as err:
        boltzmann_plot(intensity, G[:2], A[:2], E[:2], LAM[:2])
    assert "wider spread of upper-level energies" in err.value.remedy


def test_refuses_narrow_energy_span():
    idx = [0, 1, 2]  # 3.33 .. 4.18 eV: span 0.85 eV < 1 eV
    intensity = relative_line_intensities(G[idx], A[idx], E[idx], LAM[idx], 9000.0)
    with pytest.raises(InsufficientDataError, match=r"span of the 3 lines is 0\.850 eV") as err:
        boltzmann_plot(intensity, G[idx], A[idx], E[idx], LAM[idx])
    assert "wider spread" in err.value.remedy
    fit = boltzmann_plot(intensity, G[idx], A[idx], E[idx], LAM[idx], min_energy_span_eV=0.5)
    assert fit.temperature_K == pytest.approx(9000.0, rel=1e-10)


def test_refuses_non_negative_slope():
    intensity = relative_line_intensities(G, A, -E + 10, LAM, 9000.0)  # inverted population
    with pytest.raises(PhysicsError, match="not negative"):
        boltzmann_plot(intensity, G, A, E, LAM)


def test_bad_inputs():
    with pytest.raises(ValueRangeError, match="differ in length"):
        boltzmann_plot([1, 2, 3], G, A, E, LAM)
    bad_a = A.copy()
    bad_a[4] = 0.0
    with pytest.raises(ValueRangeError, match="A_ki_per_s of line 4"):
        relative_line_intensities(G, bad_a, E, LAM, 9000.0)
    with pytest.raises(ValueRangeError, match="temperature"):
        relative_line_intensities(G, A, E, LAM, -5.0)
