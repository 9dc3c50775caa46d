"""Air ↔ vacuum wavelength conversion.

Two methods:

``"iau"`` (default)
    The IAU standard formula for dry air at 15 °C, 101 325 Pa, 450 ppm CO₂,
    in the form given by Morton (2000, ApJS 130, 403, eq. 8) and used by the
    NIST Atomic Spectra Database. Valid from 200 nm to 2 µm. The forward
    direction (vacuum → air) is the formula itself; air → vacuum is its exact
    numerical inverse (Newton iteration, converged far below 1e-9 nm), not
    a second approximate fit, so a round trip returns the input.
``"ciddor"``
    Ciddor (1996, Appl. Opt. 35, 1566) with temperature, pressure, relative
    humidity and CO₂ fraction, for labs that record air conditions. Ciddor
    validated it from 300 nm to 1690 nm; it is offered over the same
    200 nm – 2 µm span as the IAU formula and flagged in its docstring.

Below 200 nm wavelengths are conventionally quoted in vacuum (air absorbs
there); by default a request for an air wavelength below 200 nm raises
:class:`~workbench.errors.OutOfRangeError`. ``below_200nm="vacuum"`` applies the
convention instead and returns the vacuum value unchanged.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from workbench.errors import OutOfRangeError, ValueRangeError

__all__ = [
    "MAX_NM",
    "MIN_AIR_NM",
    "MIN_NM",
    "AirConditions",
    "Method",
    "air_to_vacuum_nm",
    "refractive_index_ciddor",
    "refractive_index_iau",
    "vacuum_to_air_nm",
]

#: Lower validity limit of both formulas, nm.
MIN_NM: float = 200.0
#: Upper validity limit of both formulas, nm.
MAX_NM: float = 2000.0

Method = Literal["iau", "ciddor"]
Below200 = Literal["raise", "vacuum"]


@dataclass(frozen=True)
class AirConditions:
    """Laboratory air for the Ciddor formula.

    Attributes
    ----------
    temperature_C : float
        Air temperature in °C (Ciddor's range: -40 to 100).
    pressure_Pa : float
        Total pressure in Pa (10 kPa to 140 kPa).
    relative_humidity : float
        Relative humidity as a fraction, 0 to 1.
    co2_ppm : float
        CO₂ mole fraction in µmol/mol.
    """

    temperature_C: float = 15.0
    pressure_Pa: float = 101_325.0
    relative_humidity: float = 0.0
    co2_ppm: float = 450.0

    def __post_init__(self) -> None:
        if not -40.0 <= self.temperature_C <= 100.0:
            raise ValueRangeError(
                f"air temperature {self.temperature_C} °C is outside -40..100 °C",
                "give the laboratory temperature in °C",
            )
        if not 10_000.0 <= self.pressure_Pa <= 140_000.0:
            raise ValueRangeError(
                f"air pressure {self.pressure_Pa} Pa is outside 10–140 kPa",
                "give the pressure in Pa (e.g. 101325), not hPa or mbar",
            )
        if not 0.0 <= self.relative_humidity <= 1.0:
            raise ValueRangeError(
                f"relative humidity {self.relative_humidity} is outside 0..1",
                "give humidity as a fraction (0.45 for 45 %)",
            )
        if not 0.0 <= self.co2_ppm <= 2000.0:
            raise ValueRangeError(
                f"CO2 fraction {self.co2_ppm} ppm is outside 0..2000 ppm",
                "give CO2 in µmol/mol (ppm); 450 is typical",
            )


def _validate(wavelength_nm: ArrayLike, what: str) -> np.ndarray:
    arr = np.asarray(wavelength_nm, dtype=np.float64)
    # Air values up to 2000 nm are accepted too (their vacuum images reach
    # ~2000.5 nm): a 0.03 % extrapolation that keeps round trips working.
    limit = MAX_NM
    if not np.all(np.isfinite(arr)):
        raise ValueRangeError(f"{what} wavelengths contain NaN or infinity", "remove them")
    if np.any(arr <= 0):
        raise ValueRangeError(f"{what} wavelengths must be positive", "remove non-positive values")
    if np.any(arr > limit):
        bad = float(arr[arr > limit].max())
        raise OutOfRangeError(
            f"{what} wavelength {bad:g} nm is above {limit:g} nm, where the air-vacuum "
            "formulas are not validated",
            "keep wavelengths within 200 nm – 2 µm or work in vacuum wavelengths",
        )
    return arr


def refractive_index_iau(wavelength_vac_nm: ArrayLike) -> np.ndarray:
    """Refractive index of standard air by the IAU formula (Morton 2000, eq. 8).

    Parameters
    ----------
    wavelength_vac_nm : array_like
        Vacuum wavelengths in nm.

    Returns
    -------
    numpy.ndarray
        n − 1 added to one, i.e. the refractive index n.
    """
    s2 = (1e3 / np.asarray(wavelength_vac_nm, dtype=np.float64)) ** 2  # µm⁻²
    return 1.0 + 8.34254e-5 + 2.406147e-2 / (130.0 - s2) + 1.5998e-4 / (38.9 - s2)


#: Air image of the 200 nm vacuum limit (IAU formula): the lower end of valid air input.
MIN_AIR_NM: float = float(MIN_NM / refractive_index_iau(MIN_NM))


def _compressibility(p: float, t_K: float, x_w: float) -> float:
    # Ciddor (1996) eq. 12 with BIPM 1981/91 constants.
    t = t_K - 273.15
    a0, a1, a2 = 1.58123e-6, -2.9331e-8, 1.1043e-10
    b0, b1 = 5.707e-6, -2.051e-8
    c0, c1 = 1.9898e-4, -2.376e-6
    d, e = 1.83e-11, -0.765e-8
    pt = p / t_K
    return (
        1.0
        - pt * (a0 + a1 * t + a2 * t * t + (b0 + b1 * t) * x_w + (c0 + c1 * t) * x_w * x_w)
        + pt * pt * (d + e * x_w * x_w)
    )


def refractive_index_ciddor(
    wavelength_vac_nm: ArrayLike, conditions: AirConditions | None = None
) -> np.ndarray:
    """Refractive index of moist air with CO₂ by Ciddor (1996).

    Parameters
    ----------
    wavelength_vac_nm : array_like
        Vacuum wavelengths in nm (Ciddor validated 300–1690 nm).
    conditions : AirConditions, optional
        Laboratory air; defaults to dry air at 15 °C, 101 325 Pa, 450 ppm CO₂.

    Returns
    -------
    numpy.ndarray
        The refractive index n.
    """
    c = conditions or AirConditions()
    sigma2 = (1e3 / np.asarray(wavelength_vac_nm, dtype=np.float64)) ** 2  # µm⁻²
    t_K = c.temperature_C + 273.15
    p = c.pressure_Pa
    # Dispersion of standard dry air (eq. 1) and its CO2 correction (eq. 2).
    n_as = 1e-8 * (5_792_105.0 / (238.0185 - sigma2) + 167_917.0 / (57.362 - sigma2))
    n_axs = n_as * (1.0 + 0.534e-6 * (c.co2_ppm - 450.0))
    # Standard water vapour (eq. 3, with the 1.022 correction factor).
    n_ws = 1.022e-8 * (295.235 + 2.6422 * sigma2 - 0.032380 * sigma2**2 + 0.004028 * sigma2**3)
    # Mole fraction of water vapour: saturation pressure (eq. 4) and enhancement factor.
    svp = np.exp(1.2378847e-5 * t_K**2 - 1.9121316e-2 * t_K + 33.93711047 - 6.3431645e3 / t_K)
    f = 1.00062 + 3.14e-8 * p + 5.6e-7 * c.temperature_C**2
    x_w = f * c.relative_humidity * svp / p
    R = 8.314510
    M_a = 1e-3 * (28.9635 + 12.011e-6 * (c.co2_ppm - 400.0))
    M_w = 0.018015
    rho_axs = 101_325.0 * M_a / (_compressibility(101_325.0, 288.15, 0.0) * R * 288.15)
    rho_ws = 1333.0 * M_w / (_compressibility(1333.0, 293.15, 1.0) * R * 293.15)
    z = _compressibility(p, t_K, x_w)
    rho_a = p * M_a * (1.0 - x_w) / (z * R * t_K)
    rho_w = p * M_w * x_w / (z * R * t_K)
    return 1.0 + (rho_a / rho_axs) * n_axs + (rho_w / rho_ws) * n_ws


def _index(
    wavelength_vac_nm: np.ndarray, method: Method, conditions: AirConditions | None
) -> np.ndarray:
    if method == "iau":
        if conditions is not None:
            raise ValueRangeError(
                "air conditions were given with the IAU method, which assumes standard air",
                "use method='ciddor' to apply laboratory air conditions",
            )
        return refractive_index_iau(wavelength_vac_nm)
    if method == "ciddor":
        return refractive_index_ciddor(wavelength_vac_nm, conditions)
    raise ValueRangeError(f"unknown air-vacuum method {method!r}", "use 'iau' or 'ciddor'")


def vacuum_to_air_nm(
    wavelength_vac_nm: ArrayLike,
    method: Method = "iau",
    conditions: AirConditions | None = None,
    below_200nm: Below200 = "raise",
) -> np.ndarray:
    """Convert vacuum wavelengths to air wavelengths.

    Parameters
    ----------
    wavelength_vac_nm : array_like
        Vacuum wavelengths in nm, at most 2000 nm.
    method : {"iau", "ciddor"}
        Refractive-index formula (see module docstring).
    conditions : AirConditions, optional
        Air conditions; only with ``method="ciddor"``.
    below_200nm : {"raise", "vacuum"}
        What to do below 200 nm: raise, or follow the convention that such
        wavelengths are quoted in vacuum and return them unchanged.

    Returns
    -------
    numpy.ndarray
        Air wavelengths in nm (same shape as the input).
    """
    lam = _validate(wavelength_vac_nm, "vacuum")
    low = lam < MIN_NM
    if np.any(low) and below_200nm == "raise":
        raise OutOfRangeError(
            f"vacuum wavelength {float(lam[low].min()):g} nm is below 200 nm, where "
            "wavelengths are quoted in vacuum and no air value is defined",
            "keep the vacuum value (below_200nm='vacuum') or stay above 200 nm",
        )
    out = lam / _index(np.where(low, MIN_NM, lam), method, conditions)
    return np.where(low, lam, out)


def air_to_vacuum_nm(
    wavelength_air_nm: ArrayLike,
    method: Method = "iau",
    conditions: AirConditions | None = None,
    below_200nm: Below200 = "raise",
) -> np.ndarray:
    """Convert air wavelengths to vacuum wavelengths (exact inverse of :func:`vacuum_to_air_nm`).

    Parameters
    ----------
    wavelength_air_nm : array_like
        Air wavelengths in nm, at most 2000 nm.
    method : {"iau", "ciddor"}
        Refractive-index formula (see module docstring).
    conditions : AirConditions, optional
        Air conditions; only with ``method="ciddor"``.
    below_200nm : {"raise", "vacuum"}
        Below 200 nm an "air" wavelength is taken to be a vacuum one by
        convention (``"vacuum"``) or refused (``"raise"``).

    Returns
    -------
    numpy.ndarray
        Vacuum wavelengths in nm.
    """
    lam_air = _validate(wavelength_air_nm, "air")
    low = lam_air < MIN_AIR_NM
    if np.any(low) and below_200nm == "raise":
        raise OutOfRangeError(
            f"air wavelength {float(lam_air[low].min()):g} nm is below the air image of 200 nm "
            f"vacuum ({MIN_AIR_NM:.4f} nm); wavelengths "
            "there are quoted in vacuum by convention",
            "treat the value as vacuum (below_200nm='vacuum' or --medium vacuum)",
        )
    # Solve λ_vac / n(λ_vac) = λ_air by Newton's method; n varies slowly, so a
    # fixed-point start converges to ~1e-12 nm in three or four steps.
    lam_air = np.where(low, MIN_NM, lam_air)  # placeholder inside the formula's domain
    lam_vac = lam_air * _index(lam_air, method, conditions)
    for _ in range(8):
        h = 1e-6
        g = lam_vac / _index(lam_vac, method, conditions) - lam_air
        dg = (
            (lam_vac + h) / _index(lam_vac + h, method, conditions)
            - (lam_vac - h) / _index(lam_vac - h, method, conditions)
        ) / (2 * h)
        step = g / dg
        lam_vac = lam_vac - step
        if np.all(np.abs(step) < 1e-12):
            break
    return np.where(low, np.asarray(wavelength_air_nm, dtype=np.float64), lam_vac)
