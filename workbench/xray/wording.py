"""XRF wording for every face (CLI, app, findings sheet): small pure functions.

Energies are shown to 1 eV (detector resolution is ~100–200 eV, and line
tables are good to about 1 eV); line families as ``"Pb L"``, ``"Ti K"``;
overlaps in eV and as resolved / unresolved at the instrument's detector;
no temperature or LTE wording on an energy axis.
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "artefact_lines",
    "family_label",
    "format_energy_eV",
    "instrument_line",
    "overlap_text",
]

_KIND_WORDS = {
    "rayleigh": "tube scatter (Rayleigh)",
    "compton": "tube scatter (Compton)",
    "escape": "escape peak",
    "sum": "sum (pile-up) peak",
    "air": "argon in air",
}


def format_energy_eV(energy_eV: float | None) -> str:
    """An energy to 1 eV with its unit (``"10551 eV"``); ``"–"`` when missing."""
    if energy_eV is None or energy_eV != energy_eV:
        return "–"
    return f"{energy_eV:.0f} eV"


def family_label(element: str, family: str | None) -> str:
    """Family label as an XRF analyst writes it: ``family_label("Pb", "L") == "Pb L"``."""
    return f"{element} {family}" if family else element


def overlap_text(separation_eV: float, fwhm_eV: float) -> str:
    """Overlap stated in eV and against the detector's resolution.

    Two lines closer than the detector FWHM at their energy form one peak.
    """
    state = "unresolved" if abs(separation_eV) < fwhm_eV else "resolved"
    return (
        f"{abs(separation_eV):.0f} eV apart; {state} at this detector (FWHM {fwhm_eV:.0f} eV here)"
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
        kinds = ", ".join(_KIND_WORDS.get(k, k) for k in str(a["kinds"]).split(","))
        note = "" if a["explained"] else " — exceeds the prediction; the excess is kept as evidence"
        out.append(f"  {format_energy_eV(a['observed_eV']):>9}  {kinds}: {a['origin']}{note}")
    return out
