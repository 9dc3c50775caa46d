"""XRF wording for every face (CLI, app, findings sheet): small pure functions.

Energies are shown to 1 eV (detector resolution is ~100–200 eV, and line
tables are good to about 1 eV); line families as ``"Pb L"``, ``"Ti K"``;
overlaps in eV and as resolved / unresolved at the instrument's detector;
no temperature or LTE wording on an energy axis.
"""

from __future__ import annotations

import math
import re
from typing import Any

__all__ = [
    "ARTEFACT_KIND_WORDS",
    "artefact_kind_label",
    "artefact_lines",
    "family_label",
    "format_energy_eV",
    "instrument_line",
    "overlap_text",
    "xrf_message",
]

#: The artefact kinds of ``xray.artefact_peaks[].kinds`` in an XRF analyst's
#: words; the one word list of every face (warnings, CLI table, app, sheet).
#: Common practice, no source.
ARTEFACT_KIND_WORDS: dict[str, str] = {
    "rayleigh": "tube scatter (Rayleigh)",
    "compton": "tube scatter (Compton)",
    "escape": "escape peak",
    "sum": "sum (pile-up) peak",
    "air": "argon in air (Ar K)",
}


def artefact_kind_label(kinds: str, sep: str = ", ") -> str:
    """Words for an artefact's ``kinds`` field.

    ``"compton,sum"`` → ``"tube scatter (Compton), sum (pile-up) peak"``;
    ``sep=" + "`` joins them as one peak's kinds in a table cell.
    """
    return sep.join(ARTEFACT_KIND_WORDS.get(k, k) for k in str(kinds).split(",") if k)


def format_energy_eV(energy_eV: float | None) -> str:
    """An energy to 1 eV with its unit (``"10551 eV"``); ``"–"`` when missing."""
    if energy_eV is None or energy_eV != energy_eV:
        return "–"
    return f"{math.floor(energy_eV + 0.5)} eV"


def family_label(element: str, family: str | None) -> str:
    """Family label as an XRF analyst writes it: ``family_label("Pb", "L") == "Pb L"``."""
    return f"{element} {family}" if family else element


def overlap_text(separation_eV: float, fwhm_eV: float) -> str:
    """Overlap stated in eV and against the detector's resolution.

    Two lines closer than the detector FWHM at their energy form one peak.
    """
    state = "unresolved" if abs(separation_eV) < fwhm_eV else "resolved"
    return (
        f"{abs(separation_eV):.0f} eV apart; {state} at this detector, "
        f"whose FWHM is {fwhm_eV:.0f} eV here"
    )


def instrument_line(xray: dict[str, Any]) -> str:
    """One line describing the instrument of a result's ``xray`` record."""
    inst = xray["instrument"]
    assumed = " (assumed default)" if xray.get("instrument_assumed") else ""
    return (
        f"instrument {inst['anode']} tube {inst['tube_kV']:g} kV, {inst['detector']} detector "
        f"{inst['fwhm_MnKa_eV']:g} eV at Mn Kα, {inst['atmosphere']} path{assumed}"
    )


def artefact_lines(xray: dict[str, Any]) -> list[str]:
    """Text lines listing the artefact peaks of a result's ``xray`` record."""
    out = ["artefact peaks (not evidence for any element):"]
    for a in xray.get("artefact_peaks", []):
        note = (
            ""
            if a["explained"]
            else " — stronger than predicted: the excess is kept as evidence for elements"
        )
        out.append(f"  {format_energy_eV(a['observed_eV']):>9}  {a['origin']}{note}")
    hidden = xray.get("artefacts_without_peak", [])
    if hidden:
        out.append("predicted artefacts with no separate peak (merged with a neighbour or weak):")
        for a in hidden:
            n = a.get("expected_counts")
            counts = f" (about {n:.0f} counts expected)" if n is not None else ""
            out.append(f"  {format_energy_eV(a['energy_eV']):>9}  {a['origin']}{counts}")
    return out


_SEPARATION = re.compile(r"separation ([0-9.]+) eV; separating them needs R ≥ [0-9,]+")
_DECIMAL_EV = re.compile(r"(?<![0-9.])([0-9]{3,6})\.[0-9]+(?=( eV|,| and| [A-Z]| \())")


def xrf_message(message: str, fwhm_at: Any) -> str:
    """Rewrite an engine message in XRF terms.

    Overlaps become "N eV apart; resolved/unresolved at this detector, whose
    FWHM is M eV here" instead of a resolving power, and energies are shown to 1 eV.

    Parameters
    ----------
    message : str
        The message as the engine wrote it.
    fwhm_at : callable
        Detector FWHM (eV) at an energy (eV), e.g.
        ``lambda e: float(fwhm_eV(e, instrument))``.

    Returns
    -------
    str
    """
    energies = [float(m.group(1)) for m in _DECIMAL_EV.finditer(message)]
    at = energies[0] if energies else 6000.0

    def _sep(m: re.Match[str]) -> str:
        return overlap_text(float(m.group(1)), float(fwhm_at(at)))

    text = _SEPARATION.sub(_sep, message)
    # Half-up rounding (4466.5 → 4467), as tables print.
    return _DECIMAL_EV.sub(lambda m: str(math.floor(float(m.group(0)) + 0.5)), text)
