"""Conversions between wavelength, wavenumber, frequency and photon energy.

All constants are CODATA values from :mod:`scipy.constants`. Photon energy
depends on the *vacuum* wavelength (E = h·c/λ_vac); functions that accept an
air wavelength convert it with :mod:`workbench.physics.airvac` first.

:mod:`scipy.constants` is imported where a constant is first used, not when
this module is: importing it loads scipy's array-API layer (about 0.1 s),
while the readers import this module only for its unit names.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from workbench.errors import UnitError, ValueRangeError

__all__ = [
    "ENERGY_UNITS",
    "HC_EV_NM",
    "WAVELENGTH_UNITS",
    "energy_J_to_eV",
    "energy_eV_to_J",
    "energy_eV_to_frequency_Hz",
    "energy_eV_to_wavelength_vac_nm",
    "energy_eV_to_wavenumber_per_cm",
    "energy_to_eV",
    "frequency_Hz_to_wavelength_vac_nm",
    "normalise_unit",
    "wavelength_from_nm",
    "wavelength_nm_to_energy_eV",
    "wavelength_to_nm",
    "wavelength_vac_nm_to_energy_eV",
    "wavelength_vac_nm_to_frequency_Hz",
    "wavelength_vac_nm_to_wavenumber_per_cm",
    "wavenumber_per_cm_to_energy_eV",
    "wavenumber_per_cm_to_wavelength_vac_nm",
]

#: h·c/e in eV·nm (≈ 1239.842 eV·nm), from CODATA via scipy.constants. Declared
#: here, computed by ``__getattr__`` below on first access.
HC_EV_NM: float


def _codata():
    """The :mod:`scipy.constants` module (CODATA), imported on first use."""
    from scipy import constants

    return constants


def _hc_ev_nm() -> float:
    sc = _codata()
    return sc.h * sc.c / sc.e * 1e9


def __getattr__(name: str) -> float:
    # HC_EV_NM is computed on first access so that importing this module does not
    # import scipy.
    if name == "HC_EV_NM":
        value = _hc_ev_nm()
        globals()[name] = value  # later look-ups find it without this function
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


#: Factor from wavelength unit to nanometres.
WAVELENGTH_UNITS: dict[str, float] = {"nm": 1.0, "angstrom": 0.1, "um": 1e3, "pm": 1e-3}
#: Factor from energy unit to electronvolts.
ENERGY_UNITS: dict[str, float] = {"eV": 1.0, "keV": 1e3, "meV": 1e-3}

_ALIASES: dict[str, str] = {
    "nm": "nm",
    "nanometer": "nm",
    "nanometre": "nm",
    "nanometers": "nm",
    "nanometres": "nm",
    "a": "angstrom",
    "å": "angstrom",
    "Å": "angstrom",
    "ang": "angstrom",
    "angstrom": "angstrom",
    "angstroms": "angstrom",
    "um": "um",
    "µm": "um",
    "μm": "um",
    "micron": "um",
    "microns": "um",
    "micrometer": "um",
    "micrometre": "um",
    "pm": "pm",
    "cm-1": "cm-1",
    "cm^-1": "cm-1",
    "cm⁻¹": "cm-1",
    "1/cm": "cm-1",
    "wavenumber": "cm-1",
    "ev": "eV",
    "kev": "keV",
    "mev": "meV",
}


def normalise_unit(unit: str) -> str:
    """Return the canonical spelling of a unit name.

    Parameters
    ----------
    unit : str
        A unit as a user might write it (``"Å"``, ``"A"``, ``"microns"``, ``"1/cm"``).

    Returns
    -------
    str
        One of ``"nm"``, ``"angstrom"``, ``"um"``, ``"pm"``, ``"cm-1"``,
        ``"eV"``, ``"keV"``, ``"meV"``.

    Raises
    ------
    UnitError
        If the unit is not recognised.
    """
    key = unit.strip()
    if key in ("Å", "µm", "μm", "cm⁻¹"):
        return _ALIASES[key]
    found = _ALIASES.get(key.lower().replace(" ", ""))
    if found is None:
        known = "nm, Å (or A, angstrom), µm (or um), pm, cm-1, eV, keV"
        raise UnitError(f"unknown unit {unit!r}", f"use one of: {known}")
    return found


def _positive(values: ArrayLike, what: str) -> np.ndarray:
    arr = np.asarray(values, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise ValueRangeError(f"{what} contains NaN or infinite values", "remove those values")
    if np.any(arr <= 0):
        raise ValueRangeError(f"{what} must be positive", "remove zero or negative values")
    return arr


def wavelength_to_nm(values: ArrayLike, unit: str) -> np.ndarray:
    """Convert wavelengths (or vacuum wavenumbers in cm⁻¹) to nanometres.

    Parameters
    ----------
    values : array_like
        Positive wavelengths in ``unit``.
    unit : str
        ``"nm"``, ``"angstrom"``, ``"um"``, ``"pm"`` or ``"cm-1"`` (any alias
        accepted by :func:`normalise_unit`). Wavenumbers are vacuum quantities,
        so the result is a vacuum wavelength in that case.

    Returns
    -------
    numpy.ndarray
        Wavelengths in nm.
    """
    u = normalise_unit(unit)
    arr = _positive(values, "wavelength")
    if u == "cm-1":
        return wavenumber_per_cm_to_wavelength_vac_nm(arr)
    if u not in WAVELENGTH_UNITS:
        raise UnitError(f"{unit!r} is not a wavelength unit", "use nm, Å, µm or cm-1")
    return arr * WAVELENGTH_UNITS[u]


def wavelength_from_nm(values_nm: ArrayLike, unit: str) -> np.ndarray:
    """Convert wavelengths in nm to ``unit`` (inverse of :func:`wavelength_to_nm`)."""
    u = normalise_unit(unit)
    arr = _positive(values_nm, "wavelength")
    if u == "cm-1":
        return wavelength_vac_nm_to_wavenumber_per_cm(arr)
    if u not in WAVELENGTH_UNITS:
        raise UnitError(f"{unit!r} is not a wavelength unit", "use nm, Å, µm or cm-1")
    return arr / WAVELENGTH_UNITS[u]


def energy_to_eV(values: ArrayLike, unit: str) -> np.ndarray:
    """Convert photon energies in ``unit`` (eV, keV, meV) to eV."""
    u = normalise_unit(unit)
    if u not in ENERGY_UNITS:
        raise UnitError(f"{unit!r} is not an energy unit", "use eV or keV")
    return _positive(values, "energy") * ENERGY_UNITS[u]


def wavelength_vac_nm_to_energy_eV(wavelength_vac_nm: ArrayLike) -> np.ndarray:
    """Photon energy E = h·c/λ for vacuum wavelengths in nm."""
    return _hc_ev_nm() / _positive(wavelength_vac_nm, "wavelength")


def energy_eV_to_wavelength_vac_nm(energy_eV: ArrayLike) -> np.ndarray:
    """Vacuum wavelength λ = h·c/E in nm for photon energies in eV."""
    return _hc_ev_nm() / _positive(energy_eV, "energy")


def wavelength_nm_to_energy_eV(
    wavelength_nm: ArrayLike, medium: Literal["air", "vacuum"]
) -> np.ndarray:
    """Photon energy for a wavelength in the stated medium.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths in nm.
    medium : {"air", "vacuum"}
        Medium in which the wavelengths were measured. Air wavelengths are
        converted to vacuum (IAU standard formula) before E = h·c/λ.

    Returns
    -------
    numpy.ndarray
        Photon energies in eV.
    """
    from workbench.physics.airvac import air_to_vacuum_nm

    if medium == "air":
        return wavelength_vac_nm_to_energy_eV(air_to_vacuum_nm(wavelength_nm))
    if medium == "vacuum":
        return wavelength_vac_nm_to_energy_eV(wavelength_nm)
    raise ValueRangeError(f"unknown medium {medium!r}", "use 'air' or 'vacuum'")


def wavelength_vac_nm_to_wavenumber_per_cm(wavelength_vac_nm: ArrayLike) -> np.ndarray:
    """Vacuum wavenumber ν̃ = 1/λ_vac in cm⁻¹ (1e7 / λ[nm])."""
    return 1e7 / _positive(wavelength_vac_nm, "wavelength")


def wavenumber_per_cm_to_wavelength_vac_nm(wavenumber_per_cm: ArrayLike) -> np.ndarray:
    """Vacuum wavelength in nm from a wavenumber in cm⁻¹."""
    return 1e7 / _positive(wavenumber_per_cm, "wavenumber")


def wavenumber_per_cm_to_energy_eV(wavenumber_per_cm: ArrayLike) -> np.ndarray:
    """Energy in eV of a level or photon given in cm⁻¹ (zero allowed: ground levels)."""
    arr = np.asarray(wavenumber_per_cm, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise ValueRangeError("wavenumber contains NaN or infinite values", "remove them")
    sc = _codata()
    return arr * 100.0 * sc.h * sc.c / sc.e


def energy_eV_to_wavenumber_per_cm(energy_eV: ArrayLike) -> np.ndarray:
    """Energy in cm⁻¹ from eV (inverse of :func:`wavenumber_per_cm_to_energy_eV`)."""
    arr = np.asarray(energy_eV, dtype=np.float64)
    sc = _codata()
    return arr * sc.e / (100.0 * sc.h * sc.c)


def wavelength_vac_nm_to_frequency_Hz(wavelength_vac_nm: ArrayLike) -> np.ndarray:
    """Frequency f = c/λ_vac in Hz."""
    sc = _codata()
    return sc.c / (_positive(wavelength_vac_nm, "wavelength") * 1e-9)


def frequency_Hz_to_wavelength_vac_nm(frequency_Hz: ArrayLike) -> np.ndarray:
    """Vacuum wavelength in nm from a frequency in Hz."""
    sc = _codata()
    return sc.c / _positive(frequency_Hz, "frequency") * 1e9


def energy_eV_to_frequency_Hz(energy_eV: ArrayLike) -> np.ndarray:
    """Frequency f = E/h in Hz for an energy in eV."""
    sc = _codata()
    return _positive(energy_eV, "energy") * sc.e / sc.h


def energy_eV_to_J(energy_eV: ArrayLike) -> np.ndarray:
    """Energy in joules from electronvolts."""
    sc = _codata()
    return np.asarray(energy_eV, dtype=np.float64) * sc.e


def energy_J_to_eV(energy_J: ArrayLike) -> np.ndarray:
    """Energy in electronvolts from joules."""
    sc = _codata()
    return np.asarray(energy_J, dtype=np.float64) / sc.e
