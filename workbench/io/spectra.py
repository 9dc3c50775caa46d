"""Sampled spectra: x and y from the columns of a table or from a JCAMP-DX block.

Every position must be finite and within range; x is converted to nm (with a
medium) or eV and must be strictly monotonic (a descending axis is reversed,
with a note; a file of several scans written one after another, such as
spectrometer channels, is joined by :mod:`workbench.io.stitch`, with a note;
a repeated or out-of-order position is refused, naming the row).

A missing intensity (an empty cell, NaN, a null in Parquet, ``?`` in
JCAMP-DX) is a sample the instrument or its pipeline did not measure: a dead
or masked pixel, a saturated column blanked by the reduction, a chip gap
written out as NaN. Such rows are left out with a note naming them, and the
spectrum keeps its other samples; the hole they leave is judged like any
other stretch of the axis without samples
(:func:`workbench.peaks.sampling.sampling_gaps`: wider than three sampling
steps, it is a gap, and lines inside it are neither found nor counted
missing). Refusing the whole file for one blank pixel would make the analyst
edit the evidence by hand; the original bytes are kept either way. An
infinite intensity is still refused: it is an export fault, not a missing
measurement.
"""

from __future__ import annotations

import numpy as np

from workbench.datamodel import Spectrum
from workbench.errors import (
    ColumnMappingError,
    FileFormatError,
    InputError,
    ValueRangeError,
)
from workbench.io.assemble import input_source, jcamp_context
from workbench.io.columns import (
    axis_for,
    check_unit_plausibility,
    map_columns,
    parse_header,
)
from workbench.io.resolve import (
    check_magnitude,
    check_positions,
    comment_media,
    resolve_medium,
    resolve_unit,
    to_canonical,
)
from workbench.io.source import RawInput
from workbench.io.stitch import MIN_SCAN_POINTS, join_scans, split_scans
from workbench.io.tabular import (
    Columns,
)

__all__ = ["MIN_SPECTRUM_POINTS", "jcamp_spectrum", "spectrum_from_columns", "spectrum_from_xy"]

#: Fewest points a spectrum may have.
MIN_SPECTRUM_POINTS = 5


def spectrum_from_xy(
    x: np.ndarray,
    y: np.ndarray,
    *,
    u: str,
    axis: str,
    med: str | None,
    row_label,
    where: str,
    x_label: str,
    y_label: str,
    raw: RawInput,
    fmt: str,
    notes: list[str],
    check_units: bool,
    unit_stated: bool = False,
) -> Spectrum:
    """Check x and y and build the spectrum (x converted to nm or eV, increasing).

    Parameters
    ----------
    x, y : numpy.ndarray
        Positions in unit ``u`` and intensities.
    u, axis, med : str, str, str or None
        Canonical unit, axis and medium already resolved.
    row_label : callable
        ``row_label(i)`` names point ``i`` in messages.
    where, x_label, y_label : str
        Names for messages and the y label of the result.
    raw : RawInput
        The input (for provenance).
    fmt : str
        Format name.
    notes : list of str
        Receives what was decided.
    check_units : bool
        Refuse x values implausible in their unit.
    unit_stated : bool
        The analyst stated the unit: implausible values are noted, not refused.

    Returns
    -------
    Spectrum
        Strictly increasing x (a descending axis reversed, with a note);
        rows without a measured y (NaN) left out, with a note naming them.
    """
    if x.size < MIN_SPECTRUM_POINTS:
        raise FileFormatError(
            f"{where} has only {x.size} points",
            f"a spectrum needs at least {MIN_SPECTRUM_POINTS} points",
        )
    n_file = x.size
    if axis == "energy":
        x, y, row_label = _leave_out_non_positive_energies(x, y, row_label, x_label, notes)
    missing = np.isnan(y)
    for arr, label, bad in (
        (x, x_label, ~np.isfinite(x)),
        (y, y_label, ~np.isfinite(y) & ~missing),
    ):
        if bad.any():
            i = int(np.argmax(bad))
            raise ValueRangeError(
                f"{where}: {row_label(i)}, {label} is {arr[i]} (not a finite number)",
                f"remove {row_label(i)} or replace the value",
            )
    n_measured = x.size - int(np.count_nonzero(missing))
    if n_measured < MIN_SPECTRUM_POINTS:
        raise FileFormatError(
            f"{where} has only {n_measured} points with a measured {y_label} "
            f"({x.size - n_measured} empty or NaN)",
            f"a spectrum needs at least {MIN_SPECTRUM_POINTS} measured points",
        )
    check_magnitude(np.where(missing, 0.0, y), y_label, row_label, where)

    check_positions(x, x_label, row_label, where)
    if check_units:
        check_unit_plausibility(x, u, f"{where} {x_label}", stated=unit_stated, notes=notes)
    xc = to_canonical(x, u)
    # xc holds no NaN, so b − a > 0 exactly when b > a (a difference of unequal
    # doubles is never rounded to zero): compare neighbours without the differences.
    if not np.all(xc[1:] > xc[:-1]):
        if np.all(xc[1:] < xc[:-1]):
            xc, y = xc[::-1].copy(), y[::-1].copy()
            notes.append("axis was in descending order; reversed")
        else:
            unit = "nm" if axis == "wavelength" else "eV"
            xc, y = _scans_or_refuse(xc, y, x, row_label, where, x_label, unit, notes)
    if missing.any():
        notes.append(_missing_note(missing, row_label, y_label, n_file))
        keep = ~np.isnan(y)
        xc, y = xc[keep], y[keep]
    src = input_source(raw, "spectrum", fmt, notes)
    return Spectrum(
        x=np.ascontiguousarray(xc, dtype=np.float64),
        y=np.ascontiguousarray(y, dtype=np.float64),
        axis=axis,  # type: ignore[arg-type]
        medium=med,  # type: ignore[arg-type]
        source=src,
        y_label=y_label,
    )


def _leave_out_non_positive_energies(x: np.ndarray, y: np.ndarray, row_label, x_label: str, notes):
    """Drop channels at or below zero energy (EDS/XRF spectra start there), with a note.

    An energy spectrum's first channels often sit at or below 0 eV (a
    negative offset, the detector's zero-energy noise peak); no X-ray line
    lies there, so they are left out rather than refusing the file. Row
    labels keep naming the file's rows.
    """
    below = np.isfinite(x) & (x <= 0)
    if not below.any():
        return x, y, row_label
    keep = np.flatnonzero(~below)
    notes.append(
        f"{int(below.sum())} channel(s) at or below zero {x_label} left out (no X-ray line "
        "lies there; an energy spectrum's first channels often do)"
    )

    def label(i: int) -> str:
        return row_label(int(keep[i]))

    return x[keep], y[keep], label


def _scans_or_refuse(
    xc: np.ndarray,
    y: np.ndarray,
    x: np.ndarray,
    row_label,
    where: str,
    x_label: str,
    unit: str,
    notes: list[str],
) -> tuple[np.ndarray, np.ndarray]:
    """Join a file of several scans (:mod:`workbench.io.stitch`), or refuse, naming the row."""
    d = np.diff(xc)
    increasing = np.count_nonzero(d > 0) >= np.count_nonzero(d < 0)
    xs, ys = (xc, y) if increasing else (xc[::-1], y[::-1])
    scans = split_scans(xs)
    if scans is not None:
        xs, ys, note = join_scans(xs, ys, scans, unit)
        notes.append(note)
        return xs, ys
    bad = (d <= 0) if increasing else (d >= 0)
    i = int(np.argmax(bad)) + 1
    if d[i - 1] == 0:
        problem = f"{where}: {row_label(i)} repeats the {x_label} of {row_label(i - 1)}"
        remedy = "remove duplicated positions (average them first if needed)"
    else:
        problem = (
            f"{where}: {x_label} is not monotonic: {row_label(i)} "
            f"({x[i]:g}) breaks the order of {row_label(i - 1)} ({x[i - 1]:g})"
        )
        remedy = (
            "sort the spectrum by position, or give each scan at least "
            f"{MIN_SCAN_POINTS} samples if the file holds several (spectrometer channels)"
        )
    raise ValueRangeError(problem, remedy)


def _missing_note(missing: np.ndarray, row_label, y_label: str, n_rows: int) -> str:
    """The note for rows left out without a measured intensity, naming the first few."""
    rows = np.flatnonzero(missing)
    named = ", ".join(row_label(int(i)) for i in rows[:3])
    more = f" and {rows.size - 3} more" if rows.size > 3 else ""
    return (
        f"{rows.size} of {n_rows} rows have no measured {y_label} (empty or NaN) and were "
        f"left out ({named}{more}); a hole wider than three sampling steps is a sampling "
        "gap, where lines are neither found nor counted missing"
    )


def spectrum_from_columns(
    cols: Columns,
    raw: RawInput,
    *,
    unit: str | None,
    medium: str | None,
    columns: dict[str, str] | None,
    check_units: bool,
    notes: list[str],
) -> Spectrum:
    """A spectrum from the columns of a table (see :func:`workbench.io.read_spectrum`).

    Parameters
    ----------
    cols : Columns
        The table's columns.
    raw : RawInput
        The input (for provenance).
    unit, medium : str or None
        Explicit unit of x and medium of wavelengths.
    columns : dict or None
        Explicit column choices.
    check_units : bool
        Refuse x values implausible in their unit.
    notes : list of str
        Receives what was decided.

    Returns
    -------
    Spectrum
        The spectrum.
    """
    header_unit = None
    header_medium = None
    name = ""
    if cols.headers is not None:
        headers = cols.headers
        try:
            mapping = map_columns(
                headers,
                where=cols.name,
                columns=columns,
                label_columns=cols.label_columns,
            )
        except ColumnMappingError:
            if len(headers) != 2 or columns:
                raise
            mapping = {}
        if mapping:
            xi = mapping["position"].index
            if "intensity" in mapping:
                yi = mapping["intensity"].index
            else:
                others = [i for i in range(len(headers)) if i != xi]
                if not others:
                    raise ColumnMappingError(f"{cols.name}: no intensity column", "add one")
                yi = others[0]
        else:
            xi, yi = 0, 1
            notes.append("header not recognised; column 1 read as x, column 2 as y")
        h = parse_header(headers[xi])
        header_unit, header_medium, name = h.unit, h.medium, h.name
        x_label, y_label = headers[xi], headers[yi]
    else:
        xi, yi = 0, 1
        x_label, y_label = "column 1", "column 2"
        if cols.details.get("n_columns", 2) != 2:
            notes.append("no header row: column 1 read as x, column 2 as y")
    x, _, cell_unit = cols.get(xi, x_label, False)
    # Missing intensities are allowed here and left out by spectrum_from_xy.
    y, _, _ = cols.get(yi, y_label, True)
    u = resolve_unit(unit, header_unit, cell_unit, cols.comments, cols.name, notes)
    axis = axis_for(u, name)
    stated = [(header_medium, f"header {x_label!r}"), *comment_media(cols.comments)]
    med = resolve_medium(axis, u, medium, stated, cols.name, notes)
    notes.append(f"x from {x_label!r} (unit {u}), y from {y_label!r}")
    if cols.headers is not None:
        # Other numeric columns are other spectra of the same axis (ASTM G173:
        # extraterrestrial, global, direct): say which were left, and how to
        # choose one, so that the first is not taken unknowingly.
        text = cols.text_columns
        left = [h for i, h in enumerate(cols.headers) if i not in (xi, yi) and i not in text]
        if left:
            shown = ", ".join(repr(h) for h in left)
            notes.append(
                f"other column(s) not read: {shown} (choose one with --columns "
                f"intensity=HEADER, 'Columns by header' in the app, or columns=)"
            )
    return spectrum_from_xy(
        x,
        y,
        u=u,
        axis=axis,
        med=med,
        row_label=cols.row_label,
        where=cols.name,
        x_label=x_label,
        y_label=y_label,
        raw=raw,
        fmt=cols.fmt,
        notes=notes,
        check_units=check_units,
        unit_stated=unit is not None,
    )


def jcamp_spectrum(b, raw, unit, medium, check_units, notes) -> Spectrum:
    """A spectrum from a JCAMP-DX data block (not a peak table).

    Parameters
    ----------
    b : JcampBlock
        The block.
    raw : RawInput
        The input (for provenance).
    unit, medium : str or None
        Explicit unit and medium.
    check_units : bool
        Refuse x values implausible in their unit.
    notes : list of str
        Receives what was decided.

    Returns
    -------
    Spectrum
        The spectrum.
    """
    where, u, axis, med = jcamp_context(b, unit, medium, raw.name, notes)
    if b.kind == "peaktable":
        raise InputError(
            f"{where} holds a peak table, not a spectrum",
            "read it with read_peak_list (or kind='peak_list'), or choose another block",
        )
    lines = b.point_lines

    def row_label(i: int) -> str:
        return f"point {i + 1} (line {lines[i]})" if i < lines.size else f"point {i + 1}"

    return spectrum_from_xy(
        b.x,
        b.y,
        u=u,
        axis=axis,
        med=med,
        row_label=row_label,
        where=where,
        x_label="x",
        y_label=b.yunits.strip().lower() or "intensity",
        raw=raw,
        fmt="jcamp-dx",
        notes=notes,
        check_units=check_units,
        unit_stated=unit is not None,
    )
