"""Peak lists: from the columns of a table or from a JCAMP-DX ``##PEAK TABLE``.

Positions are converted to nm (with a medium) or eV and sorted; the
intensity, FWHM, area and SNR columns are found by fuzzy header matching
(:mod:`workbench.io.columns`) and checked (finite, within range, widths
positive). The result's ``extra["mapping"]`` says which header became which
role.
"""

from __future__ import annotations

import numpy as np
import polars as pl

from workbench.datamodel import AXIS_COLUMN, FWHM_COLUMN, PeakList
from workbench.errors import (
    ColumnMappingError,
    InputError,
    UnitError,
    ValueRangeError,
)
from workbench.io.assemble import input_source, jcamp_context
from workbench.io.columns import (
    ColumnChoice,
    axis_for,
    check_unit_plausibility,
    is_counter_header,
    map_columns,
    parse_header,
)
from workbench.io.resolve import (
    canonical_unit,
    check_magnitude,
    check_positions,
    comment_media,
    resolve_medium,
    resolve_unit,
    to_canonical,
    width_to_canonical,
)
from workbench.io.source import RawInput
from workbench.io.tabular import (
    Columns,
)

__all__ = ["jcamp_peak_list", "peak_list_from_columns"]


def peak_list_from_columns(
    cols: Columns,
    raw: RawInput,
    *,
    unit: str | None,
    medium: str | None,
    mode: str,
    columns: dict[str, str] | None,
    check_units: bool,
    notes: list[str],
) -> PeakList:
    """A peak list from the columns of a table (see :func:`workbench.io.read_peak_list`).

    Parameters
    ----------
    cols : Columns
        The table's columns.
    raw : RawInput
        The input (for provenance).
    unit, medium : str or None
        Explicit unit of the positions and medium of wavelengths.
    mode : {"emission", "absorption"}
        Kind of lines.
    columns : dict or None
        Explicit column choices ``{role: header}``.
    check_units : bool
        Refuse positions implausible in their unit.
    notes : list of str
        Receives what was decided.

    Returns
    -------
    PeakList
        Sorted by position, with ``extra["mapping"]``.
    """
    if mode not in ("emission", "absorption"):
        raise ValueRangeError(f"unknown mode {mode!r}", "use 'emission' or 'absorption'")
    if cols.headers is None:
        if unit is None:
            raise ColumnMappingError(
                f"{cols.name}: the peak list has no header row",
                "add a header such as 'wavelength (nm), intensity', or pass --unit to read "
                "column 1 as positions and column 2 as intensities",
            )
        extra_cols = [f"column {i + 3}" for i in range(_n_columns(cols) - 2)]
        if 1 in cols.text_columns:
            # "3006.9314 ThII": a position and a label, no intensity.
            headers = ["position", "label", *extra_cols]
            notes.append("no header row: column 1 read as position; column 2 holds text, not read")
        else:
            headers = ["position", "intensity", *extra_cols]
            notes.append("no header row: column 1 read as position, column 2 as intensity")
    else:
        headers = cols.headers
    mapping = map_columns(
        headers,
        where=cols.name,
        columns=columns,
        label_columns=cols.label_columns,
    )
    pos = mapping["position"]
    pos_label = headers[pos.index]
    other = _only_other_column(headers, mapping, cols)
    if other is not None:
        # Two columns, the positions and one whose name no rule knows ("Intensidad",
        # "Impulse"): the other column of a peak table is its heights.
        mapping["intensity"] = ColumnChoice(other, parse_header(headers[other]), "intensity", 0.0)
    values, _, cell_unit = cols.get(pos.index, pos_label, False)
    u = resolve_unit(unit, pos.header.unit, cell_unit, cols.comments, cols.name, notes)
    axis = axis_for(u, pos.header.name)
    stated = [(pos.header.medium, f"header {pos_label!r}"), *comment_media(cols.comments)]
    med = resolve_medium(axis, u, medium, stated, cols.name, notes)
    check_positions(values, pos_label, cols.row_label, cols.name)
    if check_units:
        check_unit_plausibility(
            values, u, f"{cols.name} column {pos_label!r}", stated=unit is not None, notes=notes
        )
    canonical = to_canonical(values, u)
    data: dict[str, object] = {AXIS_COLUMN[axis]: canonical}
    extra_map: dict[str, object] = {
        pos_label: {"role": "position", "score": pos.score, "unit": u},
    }
    notes.append(f"column {pos_label!r} → position (score {pos.score:.0f}, unit {u})")
    for role in ("intensity", "fwhm", "area", "snr"):
        choice = mapping.get(role)
        if choice is None:
            continue
        label = headers[choice.index]
        vals, empty, _ = cols.get(choice.index, label, True)
        check_magnitude(vals, label, cols.row_label, cols.name)
        role_unit = None
        if role == "fwhm":
            role_unit = canonical_unit(choice.header.unit) if choice.header.unit else u
            if role_unit is None or axis_for(role_unit) != axis:
                raise UnitError(
                    f"{cols.name}: column {label!r} has unit {choice.header.unit!r}, which is "
                    f"not a {axis} unit",
                    f"state the width in the same kind of unit as the positions ({u})",
                )
            _check_widths(vals, empty, label, cols)
            with np.errstate(invalid="ignore"):
                vals = width_to_canonical(vals, role_unit, values)
            col_name = FWHM_COLUMN[axis]
        else:
            col_name = role
        data[col_name] = pl.Series(col_name, vals, dtype=pl.Float64).fill_nan(None)
        extra_map[label] = {"role": role, "score": choice.score, "unit": role_unit}
        why = (
            f"score {choice.score:.0f}"
            if choice.score > 0
            else "the only column beside the positions; its name is not one the reader knows"
        )
        notes.append(f"column {label!r} → {role} ({why})")
    if "intensity" not in data:
        data["intensity"] = pl.Series("intensity", [None] * len(canonical), dtype=pl.Float64)
        notes.append("no intensity column; intensities left empty")
    table = pl.DataFrame(data)
    order = np.argsort(canonical, kind="stable")
    if np.any(order != np.arange(order.size)):
        table = table[order.tolist()]
        notes.append("rows sorted by position")
    unmapped = [h for i, h in enumerate(headers) if i not in {c.index for c in mapping.values()}]
    if unmapped:
        notes.append(f"columns not used: {unmapped}")
    return PeakList(
        table=table,
        axis=axis,  # type: ignore[arg-type]
        medium=med,  # type: ignore[arg-type]
        source=input_source(raw, "peak_list", cols.fmt, notes),
        mode=mode,  # type: ignore[arg-type]
        extra={"mapping": extra_map},
    )


def _only_other_column(
    headers: list[str], mapping: dict[str, ColumnChoice], cols: Columns
) -> int | None:
    """The one column beside the positions, when no role took it and it holds heights.

    Not when it is text, a counter (channel, index), or carries a unit of
    position or energy (``uncertainty (nm)``: a width or an error, not a height).
    """
    if len(headers) != 2 or len(mapping) != 1 or "position" not in mapping:
        return None
    other = 1 - mapping["position"].index
    unit = parse_header(headers[other]).unit
    if (
        other in cols.text_columns
        or is_counter_header(headers[other])
        or (unit is not None and canonical_unit(unit) is not None)
    ):
        return None
    return other


def _n_columns(cols: Columns) -> int:
    return int(cols.details.get("n_columns", 2))


def _check_widths(vals: np.ndarray, empty: np.ndarray, label: str, cols: Columns) -> None:
    bad = (vals <= 0) & ~empty
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueRangeError(
            f"{cols.name}: {cols.row_label(i)}, column {label!r} is {vals[i]:g}; a width "
            "must be positive",
            f"correct {cols.row_label(i)} or leave the cell empty",
        )


def jcamp_peak_list(b, raw, unit, medium, mode, check_units, notes) -> PeakList:
    """A peak list from a JCAMP-DX ``##PEAK TABLE`` block.

    Parameters
    ----------
    b : JcampBlock
        The block (must hold a peak table).
    raw : RawInput
        The input (for provenance).
    unit, medium : str or None
        Explicit unit and medium.
    mode : {"emission", "absorption"}
        Kind of lines.
    check_units : bool
        Refuse positions implausible in their unit.
    notes : list of str
        Receives what was decided.

    Returns
    -------
    PeakList
        Sorted by position.
    """
    where, u, axis, med = jcamp_context(b, unit, medium, raw.name, notes)
    if b.kind != "peaktable":
        raise InputError(
            f"{where} holds a spectrum ({b.kind}), not a peak table",
            "read it with read_spectrum and find its peaks (workbench peaks)",
        )
    lines = b.point_lines

    def row_label(i: int) -> str:
        return f"peak {i + 1} (line {lines[i]})"

    for arr, label in ((b.x, "x"), (b.y, "y")):
        bad = ~np.isfinite(arr)
        if bad.any():
            i = int(np.argmax(bad))
            raise ValueRangeError(f"{where}: {row_label(i)}, {label} is missing", "fix the table")
    check_positions(b.x, "x", row_label, where)
    check_magnitude(b.y, "y", row_label, where)
    if b.width is not None:
        # The same rule as a width column in a table: finite and positive, or absent.
        wbad = ~(np.isfinite(b.width) & (b.width > 0)) & ~np.isnan(b.width)
        if wbad.any():
            i = int(np.argmax(wbad))
            raise ValueRangeError(
                f"{where}: {row_label(i)}, width is {b.width[i]:g}; a width must be a "
                "positive finite number",
                f"correct {row_label(i)} or give '?' for an unknown width",
            )
        check_magnitude(b.width, "width", row_label, where)
    if check_units:
        check_unit_plausibility(b.x, u, f"{where} peak table", stated=unit is not None, notes=notes)
    data: dict[str, object] = {AXIS_COLUMN[axis]: to_canonical(b.x, u), "intensity": b.y}
    if b.width is not None:
        data[FWHM_COLUMN[axis]] = width_to_canonical(b.width, u, b.x)
    table = pl.DataFrame(data).sort(AXIS_COLUMN[axis])
    notes.append(f"peak table: {b.x.size} peaks (unit {u})")
    return PeakList(
        table=table,
        axis=axis,
        medium=med,
        source=input_source(raw, "peak_list", "jcamp-dx", notes),
        mode=mode,  # type: ignore[arg-type]
        extra={"mapping": {"##PEAK TABLE": {"role": "position", "score": 100.0, "unit": u}}},
    )
