"""Plain-words formatting for the findings sheet: positions, lines, custody status.

Wavelengths are printed to 0.0001 nm (the reference tables' precision) and
X-ray energies to 1 eV (tabulated emission energies are given to about 1 eV;
a handheld detector resolves about 130–180 eV, so finer digits would claim
precision the measurement does not have). X-ray species keep their family
label ("Pb L", "Ti K"); optical species their ion stage ("Fe I").

This is the sheet's own small formatter; it does not depend on the X-ray
package (:mod:`workbench.xray`), which may format differently for screens.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

__all__ = [
    "custody_status",
    "format_delta",
    "format_position",
    "format_rel",
    "line_name",
    "short_time",
]


def _num(x: Any) -> float | None:
    if isinstance(x, bool) or not isinstance(x, int | float) or not math.isfinite(x):
        return None
    return float(x)


def format_position(value: Any, unit: str) -> str:
    """Return a line position as printed: ``"405.7807"`` (nm) or ``"10551"`` (eV).

    Parameters
    ----------
    value : float
        Position in ``unit``.
    unit : str
        ``"nm"`` or ``"eV"``.

    Returns
    -------
    str
        The number without its unit; ``"–"`` when there is no number.
    """
    x = _num(value)
    if x is None:
        return "–"
    return f"{x:.4f}" if unit == "nm" else f"{x:.0f}"


def format_delta(value: Any, unit: str) -> str:
    """Return an observed-minus-reference difference with its sign (``"+0.0014"``, ``"-4"``)."""
    x = _num(value)
    if x is None:
        return "–"
    if unit == "nm":
        return f"{x:+.4f}"
    text = f"{x:+.0f}"
    return "0" if text in ("+0", "-0") else text


def format_rel(value: Any) -> str:
    """Return a relative intensity to two decimals (``"–"`` when absent)."""
    x = _num(value)
    return "–" if x is None else f"{x:.2f}"


def line_name(line: Mapping[str, Any], species: str, unit: str) -> str:
    """Name a reference line for a reader: ``"Fe I 404.5815 nm"``, ``"Pb L3-M5 10551 eV"``.

    Parameters
    ----------
    line : mapping
        A matched or missing line of the engine result.
    species : str
        Its species label.
    unit : str
        ``"nm"`` or ``"eV"``.

    Returns
    -------
    str
        The name.
    """
    pos = line.get(f"reference_{unit}", line.get("reference", line.get("position")))
    if unit == "eV":
        transition = str(line.get("transition") or "").strip()
        element = species.split(" ")[0]
        head = f"{element} {transition}" if transition else species
        return f"{head} {format_position(pos, unit)} eV"
    return f"{species} {format_position(pos, unit)} nm"


def short_time(stamp: Any) -> str:
    """Return a stored UTC time as ``"2026-11-20 10:00"`` (minutes are enough to read)."""
    text = str(stamp or "")
    if len(text) >= 16 and text[10] == "T":
        return f"{text[:10]} {text[11:16]}"
    return text


def custody_status(item: Mapping[str, Any]) -> str:
    """Describe an item's custody state in words.

    Parameters
    ----------
    item : mapping
        The store's item record as a dict (``holder``, ``seal_state``,
        ``seals``, ``disposed``, ``current_location`` or ``storage_location``).

    Returns
    -------
    str
        e.g. ``"held by Dr A (invented), sealed (NB-448120), at Store B, shelf 4"``.
    """
    parts = []
    if item.get("disposed") is True:
        parts.append("disposed of")
    elif item.get("holder"):
        parts.append(f"held by {item['holder']}")
    seals = [str(s) for s in item.get("seals") or [] if str(s).strip()]
    state = item.get("seal_state")
    if state == "sealed":
        parts.append(f"sealed ({', '.join(seals)})" if seals else "sealed")
    elif state == "open":
        parts.append("seal opened")
    else:
        parts.append("seal state not recorded")
    where = item.get("current_location") or item.get("storage_location")
    if where and item.get("disposed") is not True:
        parts.append(f"at {where}")
    if isinstance(item.get("event_count"), int):
        n = item["event_count"]
        parts.append(f"{n} custody event{'s' if n != 1 else ''} on record")
    return ", ".join(parts)
