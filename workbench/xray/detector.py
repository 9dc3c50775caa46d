"""Energy-dispersive detector: resolution, efficiency and escape peaks.

Resolution (Fano statistics plus electronic noise, added in quadrature)::

    FWHM(E) = √(noise² + 2.355² · F · ε · E)

with F the Fano factor and ε the mean energy per electron-hole pair of the
sensor (:data:`workbench.xray.instrument.DETECTOR_MATERIALS`). The noise term
is derived from the instrument's measured FWHM at Mn Kα (5898.75 eV), so
the user gives one number they can read off their own spectrum.

Efficiency: transmission of the Be entrance window times the fraction
absorbed in the sensor, ``exp(−μ_Be ρ t_Be) · (1 − exp(−μ_det ρ t_det))``,
with mass attenuation coefficients from xraylib (``CS_Total``).

Escape peaks: a photon absorbed in the sensor may leave a sensor atom's own
K photon escaping through the front face; the pulse then lacks that energy.
The escape fraction for normal incidence on a thick sensor is the
Reed–Ware (1972) expression::

    f = ½ · ω_K · (1 − 1/J) · p · [1 − (μ_x/μ_E) · ln(1 + μ_E/μ_x)]

(ω_K fluorescence yield, J the K-edge jump ratio, p the fraction of K
emission in the escaping line, μ_E and μ_x the sensor attenuation at the
incident and escaping energies). Atomic data from xraylib (edge energies,
line energies, yields, jump factors, radiative rates: the xraylib 4
database, Elam/Schoonjans compilations); xraylib is imported inside the
functions only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.xray.instrument import DETECTOR_MATERIALS, Instrument

__all__ = [
    "MN_KA_EV",
    "EscapeLine",
    "blend_maxima",
    "detector_efficiency",
    "escape_fraction",
    "escape_lines",
    "fwhm_eV",
    "noise_fwhm_eV",
    "snip_iterations_for",
]

#: Mn Kα1 energy at which detector resolution is quoted (Deslattes et al.
#: 2003, Rev. Mod. Phys. 75, 35: 5898.75 eV).
MN_KA_EV: float = 5898.75

_GAUSS = 2.0 * np.sqrt(2.0 * np.log(2.0))  # FWHM / σ of a Gaussian (2.3548)

_DETECTOR_ELEMENTS: dict[str, tuple[tuple[str, float], ...]] = {
    # (element, mass fraction)
    "Si": (("Si", 1.0),),
    "Ge": (("Ge", 1.0),),
    "CdTe": (("Cd", 0.4683), ("Te", 0.5317)),  # molar masses 112.41 and 127.60
}


def noise_fwhm_eV(instrument: Instrument) -> float:
    """Electronic-noise FWHM (eV) implied by the instrument's FWHM at Mn Kα.

    Zero when the given FWHM is at or below the Fano limit (a detector cannot
    do better than Fano statistics).
    """
    fano_sq = _GAUSS**2 * instrument.fano_factor * instrument.pair_energy_eV * MN_KA_EV
    return float(np.sqrt(max(instrument.fwhm_MnKa_eV**2 - fano_sq, 0.0)))


def fwhm_eV(energy_eV: np.ndarray | float, instrument: Instrument) -> np.ndarray:
    """Detector FWHM (eV) at each energy: √(noise² + 2.355²·F·ε·E)."""
    e = np.maximum(np.asarray(energy_eV, dtype=np.float64), 0.0)
    noise = noise_fwhm_eV(instrument)
    return np.sqrt(noise**2 + _GAUSS**2 * instrument.fano_factor * instrument.pair_energy_eV * e)


def blend_maxima(
    position_eV: np.ndarray,
    weight: np.ndarray,
    group: np.ndarray,
    start_eV: np.ndarray,
    sigma_eV: np.ndarray,
    n_steps: int,
) -> np.ndarray:
    """Where each group of Gaussian lines peaks together, by mean shift (eV).

    A group's lines, each a Gaussian of standard deviation ``sigma_eV`` (the
    detector's, per group) weighted by ``weight``, add up to one peak; the
    peak finder reports its maximum, not the strongest line (a Kα1/Kα2
    doublet under a 150–200 eV FWHM peaks between them, nearer Kα1). From
    ``start_eV`` each step moves to the Gaussian-weighted mean of the group's
    lines around the current estimate; a fixed point is a stationary point
    of the blend, reached in a few steps from the strongest line.

    Parameters
    ----------
    position_eV, weight, group : numpy.ndarray
        Energy, weight and group index (0 … n − 1) of every line.
    start_eV, sigma_eV : numpy.ndarray
        Per group: the starting estimate and the Gaussian σ.
    n_steps : int
        Mean-shift steps.

    Returns
    -------
    numpy.ndarray
        Per group, the estimate after ``n_steps`` (unchanged where a group's
        weights vanish).
    """
    n = start_eV.size
    m = np.asarray(start_eV, dtype=np.float64).copy()
    for _ in range(n_steps):
        k = weight * np.exp(-0.5 * ((position_eV - m[group]) / sigma_eV[group]) ** 2)
        den = np.bincount(group, weights=k, minlength=n)
        num = np.bincount(group, weights=k * position_eV, minlength=n)
        m = np.where(den > 0, num / np.maximum(den, 1e-300), m)
    return m


def _mu(elements: tuple[tuple[str, float], ...], energy_keV: np.ndarray) -> np.ndarray:
    """Mass attenuation coefficient (cm²/g) of a mixture, total cross-section."""
    import xraylib
    import xraylib_np

    e = np.atleast_1d(np.asarray(energy_keV, dtype=np.float64))
    out = np.zeros(e.size)
    for sym, w in elements:
        z = xraylib.SymbolToAtomicNumber(sym)
        out += w * xraylib_np.CS_Total(np.array([z]), e)[0]
    return out


def detector_efficiency(energy_eV: np.ndarray | float, instrument: Instrument) -> np.ndarray:
    """Fraction of photons at each energy that the detector records in full (0–1)."""
    e_keV = np.clip(np.atleast_1d(np.asarray(energy_eV, dtype=np.float64)) / 1000.0, 0.1, 800.0)
    be = _mu((("Be", 1.0),), e_keV) * 1.848 * instrument.detector_window_Be_um * 1e-4
    mat = DETECTOR_MATERIALS[instrument.detector]
    absorbed = 1.0 - np.exp(
        -_mu(_DETECTOR_ELEMENTS[instrument.detector], e_keV)
        * mat["density_g_cm3"]
        * instrument.detector_thickness_mm
        * 0.1
    )
    return np.exp(-be) * absorbed


@dataclass(frozen=True)
class EscapeLine:
    """A sensor line that can escape: its element, Siegbahn name and energy."""

    element: str
    line: str
    energy_eV: float
    edge_eV: float  # the sensor element's K edge: only photons above it make escapes


def escape_lines(instrument: Instrument) -> list[EscapeLine]:
    """Escaping K lines of the sensor material (Si Kα; Ge, Cd, Te Kα and Kβ)."""
    import xraylib

    out = []
    for sym, _w in _DETECTOR_ELEMENTS[instrument.detector]:
        z = xraylib.SymbolToAtomicNumber(sym)
        edge = xraylib.EdgeEnergy(z, xraylib.K_SHELL) * 1000.0
        # Kα (KL3 energy; KL2 lies within a few eV) and, above Z = 20, Kβ.
        out.append(EscapeLine(sym, "Kα", xraylib.LineEnergy(z, xraylib.KL3_LINE) * 1000.0, edge))
        if z > 20:
            out.append(
                EscapeLine(sym, "Kβ", xraylib.LineEnergy(z, xraylib.KM3_LINE) * 1000.0, edge)
            )
    return out


def escape_fraction(energy_eV: np.ndarray | float, instrument: Instrument) -> dict[str, np.ndarray]:
    """Escape fraction per escaping line at each incident energy (Reed–Ware).

    Returns
    -------
    dict
        ``"<element> <line>"`` → fraction of the photons at each energy that
        appear in that escape peak instead of the main peak (0 below the
        sensor's K edge).
    """
    import xraylib

    e = np.atleast_1d(np.asarray(energy_eV, dtype=np.float64))
    e_keV = np.clip(e / 1000.0, 0.1, 800.0)
    parts = _DETECTOR_ELEMENTS[instrument.detector]
    mu_total = _mu(parts, e_keV)
    out: dict[str, np.ndarray] = {}
    for esc in escape_lines(instrument):
        z = xraylib.SymbolToAtomicNumber(esc.element)
        w = dict(parts)[esc.element]
        omega = xraylib.FluorYield(z, xraylib.K_SHELL)
        jump = xraylib.JumpFactor(z, xraylib.K_SHELL)
        if esc.line == "Kα":
            p = xraylib.RadRate(z, xraylib.KL3_LINE) + xraylib.RadRate(z, xraylib.KL2_LINE)
        else:
            p = 1.0 - xraylib.RadRate(z, xraylib.KL3_LINE) - xraylib.RadRate(z, xraylib.KL2_LINE)
        # Share of the absorptions that happen in this element's K shell.
        mu_el = _mu(((esc.element, w),), e_keV)
        share = np.where(mu_total > 0, mu_el / mu_total, 0.0) * (1.0 - 1.0 / jump)
        mu_x = float(_mu(parts, np.array([esc.energy_eV / 1000.0]))[0])
        ratio = mu_x / np.maximum(mu_total, 1e-12)
        geom = 1.0 - ratio * np.log1p(1.0 / np.maximum(ratio, 1e-12))
        f = 0.5 * omega * p * share * geom
        out[f"{esc.element} {esc.line}"] = np.where(e > esc.edge_eV, np.maximum(f, 0.0), 0.0)
    return out


def snip_iterations_for(instrument: Instrument, channel_eV: float) -> int:
    """SNIP half-window (channels) matched to the detector: 1.5 × FWHM at Mn Kα.

    A SNIP window much wider than the peaks clips the curved continuum of an
    XRF spectrum (scatter and pile-up) and leaves Poisson bumps standing as
    "peaks"; one much narrower eats into the peaks. One and a half FWHM per
    side keeps a peak's wings in and follows the continuum (common practice,
    no source; measured on the forward model in tests/xray).
    """
    return max(3, round(1.5 * instrument.fwhm_MnKa_eV / float(channel_eV)))
