"""Saha ionisation balance, Saha–Boltzmann line ratios and partition functions.

The Saha equation for stages z and z+1 in LTE,

    n_{z+1} n_e / n_z = 2 (2π m_e k T / h²)^{3/2} · U_{z+1}/U_z · exp(−(E_ion − ΔE)/kT),

has the thermal de Broglie factor in m⁻³ when written in SI. Electron
densities here are given in cm⁻³ (as in the plasma-diagnostics literature)
and converted explicitly (1 cm⁻³ = 10⁶ m⁻³). ``ionization_lowering_eV`` (ΔE)
is the reduction of the ionisation energy by the plasma (Debye shielding),
which the caller supplies; 0 by default.

Constants from :mod:`scipy.constants` (CODATA). Partition functions must come
from level data (:func:`partition_function_from_levels`); no approximation
is built in.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike
from scipy import constants as sc

from workbench.errors import PhysicsError, ValueRangeError
from workbench.physics.boltzmann import K_B_EV_PER_K

__all__ = [
    "M3_PER_CM3",
    "partition_function_from_levels",
    "saha_boltzmann_line_ratio",
    "saha_factor_per_cm3",
    "saha_ion_neutral_ratio",
    "temperature_from_saha_boltzmann_ratio",
]

#: Cubic metres per cubic centimetre (number densities: n[m⁻³] = 1e6 · n[cm⁻³]).
M3_PER_CM3: float = 1e-6


def _positive(value: float, name: str, unit: str) -> float:
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise ValueRangeError(
            f"{name} = {value!r} {unit} is not positive", f"give {name} in {unit}"
        )
    return v


def saha_factor_per_cm3(temperature_K: float) -> float:
    """The factor 2 (2π m_e k T / h²)^{3/2} in cm⁻³.

    Parameters
    ----------
    temperature_K : float
        Electron temperature.

    Returns
    -------
    float
        2/λ_th³ in cm⁻³ (≈ 4.83e15 T^{3/2} cm⁻³).
    """
    t = _positive(temperature_K, "temperature_K", "K")
    per_m3 = 2.0 * (2.0 * math.pi * sc.m_e * sc.k * t / sc.h**2) ** 1.5
    return per_m3 * M3_PER_CM3


def saha_ion_neutral_ratio(
    temperature_K: float,
    electron_density_per_cm3: float,
    ionization_energy_eV: float,
    partition_ion: float,
    partition_neutral: float,
    ionization_lowering_eV: float = 0.0,
) -> float:
    """Population ratio n_{z+1}/n_z of two adjacent ion stages in LTE (Saha).

    Parameters
    ----------
    temperature_K : float
        Temperature (electrons and ions in equilibrium).
    electron_density_per_cm3 : float
        Electron number density in cm⁻³.
    ionization_energy_eV : float
        Ionisation energy of stage z (e.g. Fe I → Fe II: 7.9025 eV).
    partition_ion, partition_neutral : float
        Partition functions U_{z+1} and U_z at ``temperature_K``.
    ionization_lowering_eV : float
        Lowering of the ionisation energy by the plasma (≥ 0).

    Returns
    -------
    float
        n_{z+1}/n_z.
    """
    ne = _positive(electron_density_per_cm3, "electron_density_per_cm3", "cm⁻³")
    u_ion = _positive(partition_ion, "partition_ion", "(dimensionless)")
    u_neu = _positive(partition_neutral, "partition_neutral", "(dimensionless)")
    e_eff = _effective_ionization(ionization_energy_eV, ionization_lowering_eV)
    kt = K_B_EV_PER_K * _positive(temperature_K, "temperature_K", "K")
    return saha_factor_per_cm3(temperature_K) / ne * (u_ion / u_neu) * math.exp(-e_eff / kt)


def _effective_ionization(ionization_energy_eV: float, ionization_lowering_eV: float) -> float:
    e_ion = _positive(ionization_energy_eV, "ionization_energy_eV", "eV")
    low = float(ionization_lowering_eV)
    if not (math.isfinite(low) and 0.0 <= low < e_ion):
        raise ValueRangeError(
            f"ionization_lowering_eV = {ionization_lowering_eV!r} is outside 0 ≤ ΔE < E_ion "
            f"({e_ion:g} eV)",
            "give the lowering in eV (typically < 0.1 eV); use 0 to neglect it",
        )
    return e_ion - low


def saha_boltzmann_line_ratio(
    temperature_K: float,
    electron_density_per_cm3: float,
    ionization_energy_eV: float,
    ion_line: tuple[float, float, float, float],
    neutral_line: tuple[float, float, float, float],
    ionization_lowering_eV: float = 0.0,
    photon_counting: bool = False,
) -> float:
    """Intensity ratio of an ion line to a neutral line of the same element in LTE.

    I_ion/I_neu = [(gA/λ)_ion / (gA/λ)_neu] · S(T)/n_e ·
    exp(−(E_ion − ΔE + E_k,ion − E_k,neu)/kT) with S(T) = 2(2π m_e kT/h²)^{3/2};
    the partition functions cancel because each line's population is
    n_z g_k exp(−E_k/kT)/U_z. ``E_k,ion`` is measured from the ion's ground level.

    Parameters
    ----------
    temperature_K, electron_density_per_cm3, ionization_energy_eV
        As for :func:`saha_ion_neutral_ratio`.
    ion_line, neutral_line : (g_upper, A_ki_per_s, E_upper_eV, wavelength_nm)
        Atomic data of the two lines.
    ionization_lowering_eV : float
        Lowering ΔE of the ionisation energy.
    photon_counting : bool
        Photon-rate intensities (drop the 1/λ factor).

    Returns
    -------
    float
        I_ion / I_neutral.
    """
    t = _positive(temperature_K, "temperature_K", "K")
    ne = _positive(electron_density_per_cm3, "electron_density_per_cm3", "cm⁻³")
    e_eff = _effective_ionization(ionization_energy_eV, ionization_lowering_eV)
    w_ion, e_ion_k = _line_weight(ion_line, "ion_line", photon_counting)
    w_neu, e_neu_k = _line_weight(neutral_line, "neutral_line", photon_counting)
    kt = K_B_EV_PER_K * t
    return (
        (w_ion / w_neu) * saha_factor_per_cm3(t) / ne * math.exp(-(e_eff + e_ion_k - e_neu_k) / kt)
    )


def _line_weight(
    line: tuple[float, float, float, float], name: str, photon_counting: bool
) -> tuple[float, float]:
    try:
        g, a, e_k, lam = (float(v) for v in line)
    except (TypeError, ValueError) as exc:
        raise ValueRangeError(
            f"{name} must be (g_upper, A_ki_per_s, E_upper_eV, wavelength_nm), got {line!r}",
            "give the four numbers of the line",
        ) from exc
    _positive(g, f"{name} g_upper", "(dimensionless)")
    _positive(a, f"{name} A_ki_per_s", "s⁻¹")
    _positive(lam, f"{name} wavelength_nm", "nm")
    if not (math.isfinite(e_k) and e_k >= 0):
        raise ValueRangeError(f"{name} E_upper_eV = {e_k!r} is not ≥ 0", "give E_upper in eV")
    return (g * a if photon_counting else g * a / lam), e_k


def temperature_from_saha_boltzmann_ratio(
    measured_ratio: float,
    electron_density_per_cm3: float,
    ionization_energy_eV: float,
    ion_line: tuple[float, float, float, float],
    neutral_line: tuple[float, float, float, float],
    ionization_lowering_eV: float = 0.0,
    photon_counting: bool = False,
    temperature_bounds_K: tuple[float, float] = (2000.0, 100_000.0),
) -> float:
    """Temperature at which :func:`saha_boltzmann_line_ratio` equals a measured ratio.

    The ratio rises monotonically with T (for E_ion + E_k,ion − E_k,neu > 0), so
    the root is unique and found by Brent's method inside ``temperature_bounds_K``.

    Returns
    -------
    float
        Temperature in K.

    Raises
    ------
    PhysicsError
        If the measured ratio lies outside what the bounds allow.
    """
    from scipy.optimize import brentq

    r = _positive(measured_ratio, "measured_ratio", "(dimensionless)")
    lo, hi = (float(v) for v in temperature_bounds_K)
    if not 0 < lo < hi:
        raise ValueRangeError(
            f"temperature_bounds_K={temperature_bounds_K!r} is not an increasing positive pair",
            "give (lowest_K, highest_K)",
        )

    def f(t: float) -> float:
        model = saha_boltzmann_line_ratio(
            t,
            electron_density_per_cm3,
            ionization_energy_eV,
            ion_line,
            neutral_line,
            ionization_lowering_eV,
            photon_counting,
        )
        return math.log(model) - math.log(r)

    f_lo, f_hi = f(lo), f(hi)
    if f_lo * f_hi > 0:
        raise PhysicsError(
            f"measured ion/neutral ratio {r:.4g} is not reached between {lo:g} K and {hi:g} K "
            f"at n_e = {electron_density_per_cm3:.3g} cm⁻³",
            "check the electron density, the line assignments and the intensity calibration, "
            "or widen temperature_bounds_K",
        )
    return float(brentq(f, lo, hi, xtol=1e-6, rtol=1e-12))


def partition_function_from_levels(E_eV: ArrayLike, g: ArrayLike, temperature_K: float) -> float:
    """Partition function U(T) = Σ g_i exp(−E_i/kT) over the given levels.

    Parameters
    ----------
    E_eV : array_like
        Level energies above the ground level (≥ 0), eV.
    g : array_like
        Statistical weights 2J+1 (> 0).
    temperature_K : float
        Temperature.

    Returns
    -------
    float
        U(T). The sum is only as complete as the level list: truncate it
        sensibly below the (lowered) ionisation limit.
    """
    e = np.atleast_1d(np.asarray(E_eV, dtype=np.float64))
    w = np.atleast_1d(np.asarray(g, dtype=np.float64))
    if e.shape != w.shape or e.ndim != 1 or e.size == 0:
        raise ValueRangeError(
            f"E_eV and g differ in length or are empty ({e.size} vs {w.size})",
            "give one weight per level",
        )
    if np.any(~np.isfinite(e) | (e < 0)):
        i = int(np.flatnonzero(~np.isfinite(e) | (e < 0))[0])
        raise ValueRangeError(f"level {i} energy {e[i]!r} eV is not ≥ 0", "fix or drop that level")
    if np.any(~np.isfinite(w) | (w <= 0)):
        i = int(np.flatnonzero(~np.isfinite(w) | (w <= 0))[0])
        raise ValueRangeError(f"level {i} weight g={w[i]!r} is not positive", "use g = 2J + 1")
    kt = K_B_EV_PER_K * _positive(temperature_K, "temperature_K", "K")
    return float(np.sum(w * np.exp(-e / kt)))
