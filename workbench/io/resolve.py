"""Deciding units and medium, converting to canonical units, and checking values.

A unit given explicitly wins over the header, which wins over units written
in the cells, which win over a ``units: ...`` comment; a missing unit is an
error. A wavelength's medium comes from the caller, the header or comments
(air is assumed, with a note, when nothing states it); wavenumbers are
vacuum quantities. Every number read must be finite and within
±:data:`MAX_ABS_VALUE`, so that later arithmetic (squares, sums) cannot
overflow.
"""

from __future__ import annotations

import re

import numpy as np

from workbench.errors import UnitError, ValueRangeError
from workbench.io.columns import medium_from_text
from workbench.physics.units import ENERGY_UNITS, WAVELENGTH_UNITS, normalise_unit

__all__ = [
    "MAX_ABS_VALUE",
    "canonical_unit",
    "check_magnitude",
    "check_positions",
    "comment_media",
    "resolve_medium",
    "resolve_unit",
    "to_canonical",
    "width_to_canonical",
]

#: Largest magnitude accepted for any number read (its square stays finite).
MAX_ABS_VALUE: float = 1e150
_UNIT_COMMENT = re.compile(r"\b(?:x\s*)?units?\s*[:=]\s*([^\s,;]+)", re.IGNORECASE)


def resolve_unit(
    explicit: str | None,
    header_unit: str | None,
    cell_unit: str | None,
    comments: list[str],
    where: str,
    notes: list[str],
) -> str:
    """The positions' unit: explicit, else header, else cells, else a comment.

    Raises
    ------
    UnitError
        When nothing states the unit.
    """
    if explicit is not None:
        unit = normalise_unit(explicit)
        stated = header_unit or cell_unit
        if stated is not None and canonical_unit(stated) not in (None, unit):
            notes.append(f"unit {unit} given explicitly overrides {stated!r} stated in the file")
        return unit
    for stated in (header_unit, cell_unit):
        if stated is not None:
            return normalise_unit(stated)
    for c in comments:
        m = _UNIT_COMMENT.search(c)
        if m:
            unit = normalise_unit(m.group(1).strip("()[]"))
            notes.append(f"unit {unit} taken from comment line {c!r}")
            return unit
    raise UnitError(
        f"{where}: the unit of the positions is not stated",
        "put it in the header, e.g. 'wavelength (nm)' or 'energy (keV)', or pass --unit",
    )


def canonical_unit(unit: str) -> str | None:
    """Canonical unit name, or None when the text is not a known unit."""
    try:
        return normalise_unit(unit)
    except UnitError:
        return None


def resolve_medium(
    axis: str,
    unit: str,
    explicit: str | None,
    stated: list[tuple[str | None, str]],
    where: str,
    notes: list[str],
) -> str | None:
    """The medium of a wavelength axis (None for energies), with notes saying why.

    Raises
    ------
    UnitError
        When the sources disagree or name both air and vacuum.
    """
    if explicit is not None and explicit not in ("air", "vacuum"):
        raise ValueRangeError(f"unknown medium {explicit!r}", "use 'air' or 'vacuum'")
    if axis == "energy":
        if explicit is not None:
            notes.append(f"medium {explicit!r} ignored: an energy axis has no medium")
        return None
    found = [(m, src) for m, src in stated if m is not None]
    for m, src in found:
        if m == "ambiguous":
            raise UnitError(
                f"{where}: {src} names both air and vacuum",
                "state one medium, or pass --medium air|vacuum",
            )
    if unit == "cm-1":
        if explicit == "air" or any(m == "air" for m, _ in found):
            raise UnitError(
                f"{where}: wavenumbers (cm-1) are vacuum quantities but the medium says air",
                "drop the air medium; wavenumbers convert to vacuum wavelengths",
            )
        notes.append("wavenumbers converted to vacuum wavelengths")
        return "vacuum"
    if explicit is not None:
        if found and found[0][0] != explicit:
            notes.append(f"medium {explicit} given explicitly overrides {found[0][1]}")
        return explicit
    media = {m for m, _ in found}
    if len(media) > 1:
        raise UnitError(
            f"{where}: the file states both air and vacuum ({', '.join(s for _, s in found)})",
            "correct the file, or pass --medium air|vacuum",
        )
    if found:
        notes.append(f"medium {found[0][0]} from {found[0][1]}")
        return found[0][0]
    notes.append("medium not stated; assumed air")
    return "air"


def comment_media(comments: list[str] | tuple[str, ...]) -> list[tuple[str | None, str]]:
    """Media stated in comment lines, each with the comment it came from."""
    return [(medium_from_text(c), f"comment {c!r}") for c in comments if medium_from_text(c)]


def to_canonical(values: np.ndarray, unit: str) -> np.ndarray:
    """Positions in nm (wavelength units, wavenumbers) or eV (energy units)."""
    from workbench.physics.units import energy_to_eV, wavelength_to_nm

    return energy_to_eV(values, unit) if unit in ENERGY_UNITS else wavelength_to_nm(values, unit)


def width_to_canonical(width: np.ndarray, unit: str, positions_in_unit: np.ndarray) -> np.ndarray:
    """Widths in nm or eV; a wavenumber width converts at its own line."""
    if unit in ENERGY_UNITS:
        return width * ENERGY_UNITS[unit]
    if unit == "cm-1":
        # dλ = 1e7 / ν̃² dν̃ (nm per cm-1): a width in wavenumbers at its line.
        return width * 1e7 / positions_in_unit**2
    return width * WAVELENGTH_UNITS[unit]


def check_magnitude(values: np.ndarray, label: str, row_label, where: str) -> None:
    """Refuse any value beyond ±:data:`MAX_ABS_VALUE`, naming its row."""
    # Two comparisons (boolean temporaries) instead of abs() (a float temporary).
    bad = (values > MAX_ABS_VALUE) | (values < -MAX_ABS_VALUE)
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueRangeError(
            f"{where}: {row_label(i)}, {label!r} is {values[i]:g}, beyond ±{MAX_ABS_VALUE:g}",
            "check the export (a spreadsheet overflow or a wrong column) and correct the value",
        )


def check_positions(values: np.ndarray, label: str, row_label, where: str) -> None:
    """Refuse positions that are not positive (or beyond the magnitude limit)."""
    check_magnitude(values, label, row_label, where)
    bad = values <= 0
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueRangeError(
            f"{where}: {row_label(i)}, column {label!r} is {values[i]:g}; positions must be "
            "positive",
            f"remove {row_label(i)} or correct its value",
        )
