"""Which X-ray lines a tube can excite, and which the beam path lets through.

Excitation
    A line needs a vacancy in its initial shell: when that shell's absorption
    edge lies above the tube voltage (e.g. Pb K, edge 88.0 keV, with a 40 kV
    tube) the line is not expected at all. Edge energies from xraylib 4
    (``EdgeEnergy``).
Measurability
    Low-energy lines are absorbed by the atmosphere between sample and
    detector and by the detector window. A line counts as measurable when the
    beam path and detector together pass at least
    :data:`MIN_MEASURABLE_TRANSMISSION` of its photons (attenuation from
    xraylib ``CS_Total``; air as N 75.5 %, O 23.2 %, Ar 1.3 % by mass at
    1.205 mg/cm³, the US Standard Atmosphere at 20 °C, from memory). With the
    default 10 mm of air this cuts between Mg Kα (1.25 keV) and Al Kα
    (1.49 keV): light elements below about Al are not measurable in air.
Family ratios
    K, L and M lines of one element are excited independently, and their
    ratio depends on the excitation spectrum and, above all, on absorption in
    the sample (a low-energy family is absorbed far more than a high-energy
    one). :func:`family_ratio` gives the thin-sample ratio from fundamental
    parameters with a multiplicative uncertainty
    (:data:`FAMILY_RATIO_UNCERTAINTY`): an observed ratio within that factor
    is consistent; the class rules may use it to link families.
"""

from __future__ import annotations

import numpy as np

from workbench.xray.detector import detector_efficiency
from workbench.xray.instrument import Instrument

__all__ = [
    "AIR_COMPOSITION",
    "FAMILY_RATIO_UNCERTAINTY",
    "MIN_MEASURABLE_TRANSMISSION",
    "edge_energy_eV",
    "excitable",
    "family_ratio",
    "measurable",
    "path_transmission",
]

#: Dry air by mass fraction (US Standard Atmosphere 1976, from memory).
AIR_COMPOSITION: dict[str, float] = {"N": 0.7553, "O": 0.2318, "Ar": 0.0129}
AIR_DENSITY_G_CM3 = 1.205e-3
HELIUM_DENSITY_G_CM3 = 1.66e-4

#: A line is measurable when path × detector pass at least this fraction
#: (common practice, no source: below ~10 % a trace of the element is lost in
#: the low-energy noise of a handheld unit).
MIN_MEASURABLE_TRANSMISSION: float = 0.1

#: Multiplicative 1σ uncertainty of a predicted family ratio of one element
#: (K/L, L/M) for an unknown matrix: absorption of the lower-energy family in
#: a thick sample can change the thin-sample ratio by a factor of ~3 either
#: way (common practice, no source; from the spread of matrix corrections in
#: fundamental-parameter quantification).
FAMILY_RATIO_UNCERTAINTY: float = 3.0

_SHELL_NAMES = ("K", "L1", "L2", "L3", "M1", "M2", "M3", "M4", "M5")


def edge_energy_eV(element: str, shell: str) -> float:
    """Absorption-edge energy (eV) of ``shell`` (``"K"``, ``"L3"``, ``"M5"``…), NaN if none."""
    import xraylib

    if shell not in _SHELL_NAMES:
        return float("nan")
    try:
        z = xraylib.SymbolToAtomicNumber(element)
        code = getattr(xraylib, f"{shell}_SHELL")
        e = xraylib.EdgeEnergy(z, code) * 1000.0
    except ValueError:
        return float("nan")
    return float(e) if e > 0 else float("nan")


def excitable(
    element: np.ndarray | list[str], initial_level: np.ndarray | list[str], instrument: Instrument
) -> np.ndarray:
    """Per line, whether the edge of its initial level lies below the tube voltage.

    ``initial_level`` is the IUPAC initial level of each line (``"K"``,
    ``"L3"``, ``"M5"``); unknown levels count as excitable.
    """
    e0 = instrument.tube_kV * 1000.0
    cache: dict[tuple[str, str], float] = {}
    out = np.ones(len(element), dtype=bool)
    for i, (el, lev) in enumerate(zip(element, initial_level, strict=True)):
        key = (str(el), str(lev))
        if key not in cache:
            cache[key] = edge_energy_eV(*key)
        edge = cache[key]
        out[i] = not (np.isfinite(edge) and edge >= e0)
    return out


def path_transmission(energy_eV: np.ndarray | float, instrument: Instrument) -> np.ndarray:
    """Transmission of the atmosphere over ``air_path_mm`` (sample to detector)."""
    from workbench.xray.tube import transmission

    e = np.atleast_1d(np.asarray(energy_eV, dtype=np.float64))
    half_cm = 0.1 * instrument.air_path_mm
    if instrument.atmosphere == "air":
        return transmission(AIR_COMPOSITION, AIR_DENSITY_G_CM3, half_cm, e)
    if instrument.atmosphere == "helium":
        return transmission({"He": 1.0}, HELIUM_DENSITY_G_CM3, half_cm, e)
    return np.ones(e.size)


def measurable(energy_eV: np.ndarray | float, instrument: Instrument) -> np.ndarray:
    """Per line energy, whether path and detector pass ≥ :data:`MIN_MEASURABLE_TRANSMISSION`."""
    e = np.atleast_1d(np.asarray(energy_eV, dtype=np.float64))
    t = path_transmission(e, instrument) * detector_efficiency(e, instrument)
    return t >= MIN_MEASURABLE_TRANSMISSION


def family_ratio(
    element: str, numerator: str, denominator: str, instrument: Instrument
) -> tuple[float, float]:
    """Thin-sample intensity ratio of two line families of one element.

    Parameters
    ----------
    element : str
        Element symbol.
    numerator, denominator : {"K", "L", "M"}
        Families.
    instrument : Instrument
        Tube, filter, path and detector.

    Returns
    -------
    (ratio, factor) : tuple of float
        Predicted detected-count ratio for a thin sample, and the
        multiplicative 1σ uncertainty :data:`FAMILY_RATIO_UNCERTAINTY`
        (ratio NaN when the denominator family is not excited).
    """
    from workbench.xray.forward import family_yield

    num = family_yield(element, numerator, instrument)
    den = family_yield(element, denominator, instrument)
    ratio = num / den if den > 0 else float("nan")
    return float(ratio), FAMILY_RATIO_UNCERTAINTY
