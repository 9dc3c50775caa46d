"""X-ray tube output: Kramers continuum plus the anode's characteristic lines.

Continuum (Kramers 1923)::

    dN/dE = k · Z_anode · (E0/E − 1)        photons / (s · sr · µA · eV)

with k = 13 (tuned so that the modelled count rate is realistic; the forward model's
absolute count rate is not a check value anywhere). Characteristic lines of
a shell with edge E_edge, overvoltage U = E0/E_edge > 1::

    N_shell = A · ω_shell · (n_shell/2) · (U − 1)^1.67     photons / (s · sr · µA)

(n_shell the sub-shell's electrons) shared among the shell's lines by their
radiative rates. The exponent 1.67
is the usual empirical overvoltage law (Green & Cosslett 1968, from memory);
A = 1.3e4·k·Z makes the Rh K lines at 40 kV comparable to about 3 keV of
continuum around them, as in published Rh-tube spectra (approximate, from
memory). Both pass the tube's Be window and the optional primary filter.
Anode self-absorption is left out (documented simplification: it softens
the low-energy continuum, which matters little above 2 keV).

Atomic data (edges, yields, radiative rates, line energies, attenuation)
from xraylib 4; xraylib is imported inside the functions only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.xray.instrument import Instrument

__all__ = ["TubeLine", "transmission", "tube_continuum", "tube_lines"]

_KRAMERS_K = 13.0
_CHAR_A = 1.3e4 * _KRAMERS_K

#: Main lines of each shell used for tube scatter: (xraylib macro name, Siegbahn name).
SHELL_LINES: dict[str, tuple[tuple[str, str], ...]] = {
    "K": (("KL3", "Kα1"), ("KL2", "Kα2"), ("KM3", "Kβ1"), ("KM2", "Kβ3"), ("KN3", "Kβ2")),
    "L3": (("L3M5", "Lα1"), ("L3M4", "Lα2"), ("L3N5", "Lβ2"), ("L3M1", "Ll")),
    "L2": (("L2M4", "Lβ1"), ("L2N4", "Lγ1")),
    "L1": (("L1M3", "Lβ3"), ("L1M2", "Lβ4")),
}

#: Electrons per sub-shell: ionisation is taken in proportion (K 2, L1 2, L2 2,
#: L3 4; a first approximation, from memory), so that Lα outshines Lβ1.
_ELECTRONS = {"K": 2, "L1": 2, "L2": 2, "L3": 4}


def transmission(
    composition: dict[str, float], density_g_cm3: float, thickness_cm: float, energy_eV: np.ndarray
) -> np.ndarray:
    """Beer–Lambert transmission of a layer (xraylib total mass attenuation)."""
    import xraylib
    import xraylib_np

    e_keV = np.clip(np.atleast_1d(np.asarray(energy_eV, dtype=np.float64)) / 1000.0, 0.1, 800.0)
    mu = np.zeros(e_keV.size)
    for sym, w in composition.items():
        z = xraylib.SymbolToAtomicNumber(sym)
        mu += w * xraylib_np.CS_Total(np.array([z]), e_keV)[0]
    return np.exp(-mu * density_g_cm3 * thickness_cm)


def _beam_filters(energy_eV: np.ndarray, instrument: Instrument) -> np.ndarray:
    import xraylib

    t = transmission({"Be": 1.0}, 1.848, instrument.tube_window_Be_um * 1e-4, energy_eV)
    if instrument.filter_element:
        z = xraylib.SymbolToAtomicNumber(instrument.filter_element)
        rho = xraylib.ElementDensity(z)
        t = t * transmission(
            {instrument.filter_element: 1.0}, rho, instrument.filter_thickness_um * 1e-4, energy_eV
        )
    return t


def tube_continuum(energy_eV: np.ndarray, instrument: Instrument) -> np.ndarray:
    """Continuum photons / (s · sr · eV) leaving the tube (after window and filter)."""
    import xraylib

    e = np.asarray(energy_eV, dtype=np.float64)
    e0 = instrument.tube_kV * 1000.0
    z = xraylib.SymbolToAtomicNumber(instrument.anode)
    with np.errstate(divide="ignore"):
        n = _KRAMERS_K * z * np.clip(e0 / e - 1.0, 0.0, None)
    n = np.where(e > 0, n, 0.0) * instrument.tube_current_uA
    return n * _beam_filters(e, instrument)


@dataclass(frozen=True)
class TubeLine:
    """A characteristic line of the anode leaving the tube."""

    element: str
    line: str  # Siegbahn name
    energy_eV: float
    photons_per_s_sr: float


def tube_lines(instrument: Instrument) -> list[TubeLine]:
    """The anode's characteristic lines excited at the tube voltage (after window and filter)."""
    import xraylib

    z = xraylib.SymbolToAtomicNumber(instrument.anode)
    e0 = instrument.tube_kV * 1000.0
    shells = {"K": xraylib.K_SHELL, "L1": xraylib.L1_SHELL, "L2": xraylib.L2_SHELL}
    shells["L3"] = xraylib.L3_SHELL
    out: list[TubeLine] = []
    for shell, lines in SHELL_LINES.items():
        try:
            edge = xraylib.EdgeEnergy(z, shells[shell]) * 1000.0
        except ValueError:  # shell not occupied
            continue
        if edge <= 0 or e0 <= edge:
            continue
        omega = xraylib.FluorYield(z, shells[shell])
        n_shell = (
            _CHAR_A
            * z
            * omega
            * _ELECTRONS[shell]
            / 2.0
            * (e0 / edge - 1.0) ** 1.67
            * instrument.tube_current_uA
        )
        for macro, name in lines:
            code = getattr(xraylib, f"{macro}_LINE")
            try:
                rate = xraylib.RadRate(z, code)
                energy = xraylib.LineEnergy(z, code) * 1000.0
            except ValueError:  # line not listed for this element
                continue
            if rate <= 0 or energy <= 0:
                continue
            n = n_shell * rate * float(_beam_filters(np.array([energy]), instrument)[0])
            out.append(TubeLine(instrument.anode, name, energy, n))
    return out
