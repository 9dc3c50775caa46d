"""Public readers: peak lists and spectra from delimited text, JCAMP-DX and Parquet.

Every reader keeps the original bytes' SHA-256 and size in the result's
:class:`~workbench.datamodel.InputSource`, with notes saying what it decided
(columns mapped, units, medium assumed, block chosen, order reversed). Bad
input raises one error from :mod:`workbench.errors` naming the row or column
and the fix; nothing is returned half-read.

Delimited text is read by sniffing its head and parsing the bulk in one
polars call (:mod:`workbench.io.fastcsv`); only when that refuses does the
careful line parser run, to name the first bad row. Every number read must
be finite and within ±:data:`MAX_ABS_VALUE`, so that later arithmetic
(squares, sums) cannot overflow. The readers take an optional ``progress``
callable ``progress(fraction, message)`` for the app's progress bar.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
import polars as pl

from workbench.datamodel import AXIS_COLUMN, FWHM_COLUMN, InputSource, PeakList, Spectrum
from workbench.errors import (
    ColumnMappingError,
    FileFormatError,
    InputError,
    UnitError,
    ValueRangeError,
)
from workbench.io.columns import (
    ColumnChoice,
    axis_for,
    check_unit_plausibility,
    map_columns,
    medium_from_text,
    parse_header,
)
from workbench.io.jcamp import JcampBlock, jcamp_unit
from workbench.io.resolve import (
    MAX_ABS_VALUE,
    canonical_unit,
    check_magnitude,
    check_positions,
    comment_media,
    resolve_medium,
    resolve_unit,
    to_canonical,
    width_to_canonical,
)
from workbench.io.source import DEFAULT_MAX_BYTES, RawInput
from workbench.io.tabular import (
    Columns,
    Parsed,
    Progress,
    Source,
    parse_source,
    report_progress,
)
from workbench.physics.units import normalise_unit

__all__ = ["MAX_ABS_VALUE", "Progress", "read_any", "read_peak_list", "read_spectrum", "sniff"]

_MIN_SPECTRUM_POINTS = 5


# --------------------------------------------------------------------------- peak lists


def _source(raw: RawInput, kind: str, fmt: str, notes: list[str]) -> InputSource:
    return InputSource(
        name=raw.name,
        sha256=raw.sha256,
        size_bytes=raw.size_bytes,
        kind=kind,  # type: ignore[arg-type]
        format=fmt,
        notes=tuple(notes),
    )


def _peak_list_from_columns(
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
        headers = ["position", "intensity", *extra_cols]
        notes.append("no header row: column 1 read as position, column 2 as intensity")
    else:
        headers = cols.headers
    mapping = map_columns(headers, where=cols.name, columns=columns)
    pos = mapping["position"]
    pos_label = headers[pos.index]
    values, _, cell_unit = cols.get(pos.index, pos_label, False)
    u = resolve_unit(unit, pos.header.unit, cell_unit, cols.comments, cols.name, notes)
    axis = axis_for(u, pos.header.name)
    stated = [(pos.header.medium, f"header {pos_label!r}"), *comment_media(cols.comments)]
    med = resolve_medium(axis, u, medium, stated, cols.name, notes)
    check_positions(values, pos_label, cols.row_label, cols.name)
    if check_units:
        check_unit_plausibility(values, u, f"{cols.name} column {pos_label!r}")
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
        notes.append(f"column {label!r} → {role} (score {choice.score:.0f})")
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
        source=_source(raw, "peak_list", cols.fmt, notes),
        mode=mode,  # type: ignore[arg-type]
        extra={"mapping": extra_map},
    )


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


# --------------------------------------------------------------------------- spectra


def _spectrum_from_xy(
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
) -> Spectrum:
    if x.size < _MIN_SPECTRUM_POINTS:
        raise FileFormatError(
            f"{where} has only {x.size} points",
            f"a spectrum needs at least {_MIN_SPECTRUM_POINTS} points",
        )
    for arr, label in ((x, x_label), (y, y_label)):
        bad = ~np.isfinite(arr)
        if bad.any():
            i = int(np.argmax(bad))
            raise ValueRangeError(
                f"{where}: {row_label(i)}, {label} is {arr[i]} (not a finite number)",
                f"remove {row_label(i)} or replace the value",
            )
    check_magnitude(y, y_label, row_label, where)
    check_positions(x, x_label, row_label, where)
    if check_units:
        check_unit_plausibility(x, u, f"{where} {x_label}")
    xc = to_canonical(x, u)
    d = np.diff(xc)
    if not np.all(d > 0):
        if np.all(d < 0):
            xc, y = xc[::-1].copy(), y[::-1].copy()
            notes.append("axis was in descending order; reversed")
        else:
            increasing = np.count_nonzero(d > 0) >= np.count_nonzero(d < 0)
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
                remedy = "sort the spectrum by position or split it into separate scans"
            raise ValueRangeError(problem, remedy)
    src = _source(raw, "spectrum", fmt, notes)
    return Spectrum(
        x=np.ascontiguousarray(xc, dtype=np.float64),
        y=np.ascontiguousarray(y, dtype=np.float64),
        axis=axis,  # type: ignore[arg-type]
        medium=med,  # type: ignore[arg-type]
        source=src,
        y_label=y_label,
    )


def _spectrum_from_columns(
    cols: Columns,
    raw: RawInput,
    *,
    unit: str | None,
    medium: str | None,
    columns: dict[str, str] | None,
    check_units: bool,
    notes: list[str],
) -> Spectrum:
    header_unit = None
    header_medium = None
    name = ""
    if cols.headers is not None:
        headers = cols.headers
        try:
            mapping = map_columns(headers, where=cols.name, columns=columns)
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
    y, _, _ = cols.get(yi, y_label, False)
    u = resolve_unit(unit, header_unit, cell_unit, cols.comments, cols.name, notes)
    axis = axis_for(u, name)
    stated = [(header_medium, f"header {x_label!r}"), *comment_media(cols.comments)]
    med = resolve_medium(axis, u, medium, stated, cols.name, notes)
    notes.append(f"x from {x_label!r} (unit {u}), y from {y_label!r}")
    return _spectrum_from_xy(
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
    )


# --------------------------------------------------------------------------- JCAMP


def _pick_block(blocks: list[JcampBlock], block: int | str | None, name: str, notes: list[str]):
    if block is None:
        chosen = blocks[0]
        if len(blocks) > 1:
            titles = ", ".join(f"{b.index}: {b.title!r}" for b in blocks)
            notes.append(
                f"file has {len(blocks)} data blocks ({titles}); used the first, "
                f"{chosen.title!r} (choose with block=)"
            )
        return chosen
    if isinstance(block, int):
        if not 0 <= block < len(blocks):
            raise InputError(
                f"{name} has {len(blocks)} data block(s); block {block} does not exist",
                f"give a block index from 0 to {len(blocks) - 1} or a block title",
            )
        chosen = blocks[block]
    else:
        hits = [b for b in blocks if b.title.strip().lower() == block.strip().lower()]
        if not hits:
            raise InputError(
                f"{name} has no block titled {block!r}",
                f"choose one of: {', '.join(repr(b.title) for b in blocks)}",
            )
        chosen = hits[0]
    notes.append(f"used data block {chosen.index} ({chosen.title!r})")
    return chosen


def _jcamp_context(b: JcampBlock, unit: str | None, medium: str | None, name: str, notes):
    where = f"{name} block {b.index} ({b.title!r})"
    if unit is not None:
        u = normalise_unit(unit)
        if b.xunits:
            notes.append(f"unit {u} given explicitly overrides ##XUNITS={b.xunits}")
    else:
        u = normalise_unit(jcamp_unit(b.xunits, where))
    axis = axis_for(u)
    stated: list[tuple[str | None, str]] = [
        (medium_from_text(v), f"##{k}={v}") for k, v in b.labels.items() if "MEDIUM" in k
    ]
    stated += comment_media(b.comments)
    med = resolve_medium(axis, u, medium, stated, name, notes)
    return where, u, axis, med


def _jcamp_spectrum(b, raw, unit, medium, check_units, notes) -> Spectrum:
    where, u, axis, med = _jcamp_context(b, unit, medium, raw.name, notes)
    if b.kind == "peaktable":
        raise InputError(
            f"{where} holds a peak table, not a spectrum",
            "read it with read_peak_list (or kind='peak_list'), or choose another block",
        )
    lines = b.point_lines

    def row_label(i: int) -> str:
        return f"point {i + 1} (line {lines[i]})" if i < lines.size else f"point {i + 1}"

    return _spectrum_from_xy(
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
    )


def _jcamp_peak_list(b, raw, unit, medium, mode, check_units, notes) -> PeakList:
    where, u, axis, med = _jcamp_context(b, unit, medium, raw.name, notes)
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
        check_unit_plausibility(b.x, u, f"{where} peak table")
    data: dict[str, object] = {AXIS_COLUMN[axis]: to_canonical(b.x, u), "intensity": b.y}
    if b.width is not None:
        data[FWHM_COLUMN[axis]] = width_to_canonical(b.width, u, b.x)
    table = pl.DataFrame(data).sort(AXIS_COLUMN[axis])
    notes.append(f"peak table: {b.x.size} peaks (unit {u})")
    return PeakList(
        table=table,
        axis=axis,
        medium=med,
        source=_source(raw, "peak_list", "jcamp-dx", notes),
        mode=mode,  # type: ignore[arg-type]
        extra={"mapping": {"##PEAK TABLE": {"role": "position", "score": 100.0, "unit": u}}},
    )


# --------------------------------------------------------------------------- detection


def _guess_kind(parsed: Parsed, block: int | str | None) -> tuple[str, str]:
    if parsed.blocks is not None:
        b = _pick_block(parsed.blocks, block, parsed.raw.name, [])
        if b.kind == "peaktable":
            return "peak_list", "JCAMP-DX block holds a ##PEAK TABLE"
        return "spectrum", f"JCAMP-DX block holds ##{b.kind.upper()}"
    cols = parsed.cols
    assert cols is not None
    roles: dict[str, ColumnChoice] = {}
    if cols.headers is not None:
        try:
            roles = map_columns(cols.headers, where=cols.name)
        except ColumnMappingError:
            roles = {}
        if {"fwhm", "area", "snr"} & roles.keys():
            return "peak_list", "has peak columns (fwhm/area/snr)"
    if cols.n_rows < 50:
        return "peak_list", f"only {cols.n_rows} rows (a spectrum has >= 50 evenly spaced)"
    xi = roles["position"].index if "position" in roles else 0
    try:
        x, _, _ = cols.get(xi, "x", True)
    except InputError:
        return "peak_list", "position column could not be read as evenly spaced numbers"
    d = np.diff(x)
    d = d[np.isfinite(d)]
    # Mostly monotonic and evenly stepped means a sampled spectrum; a few bad steps
    # (a duplicated or out-of-order row) must still reach the spectrum checks, which
    # name the row, instead of silently becoming a peak list.
    if d.size:
        up, down = np.count_nonzero(d > 0), np.count_nonzero(d < 0)
        steps = np.abs(d[d > 0] if up >= down else d[d < 0])
        if max(up, down) >= 0.95 * d.size and steps.size:
            # The 5th and 95th percentiles lie between the extremes, so steps within
            # a factor of 3 of each other settle it without np.percentile (whose
            # np.unique imports numpy.ma, ~20 ms); the percentiles decide otherwise.
            if steps.max() < 3.0 * steps.min():
                return "spectrum", f"{cols.n_rows} evenly spaced rows"
            lo, hi = np.percentile(steps, [5.0, 95.0])
            if hi <= 3.0 * lo:
                return "spectrum", f"{cols.n_rows} evenly spaced rows"
    return "peak_list", "positions are irregularly spaced"


def _build(parsed: Parsed, kind: str, kw: dict) -> PeakList | Spectrum:
    notes: list[str] = []
    if parsed.encoding not in (None, "utf-8"):
        notes.append(f"decoded as {parsed.encoding}")
    if parsed.table is not None:
        t = parsed.table
        notes.append(
            f"delimiter: {t.delimiter_name}" + ("; decimal comma" if t.decimal_comma else "")
        )
        if t.inner_comments:
            shown = ", ".join(str(n) for n in t.inner_comments[:10])
            more = f" and {len(t.inner_comments) - 10} more" if len(t.inner_comments) > 10 else ""
            notes.append(
                f"{len(t.inner_comments)} comment line(s) among the data rows skipped "
                f"(line {shown}{more})"
            )
    unit, medium, check = kw.get("unit"), kw.get("medium"), kw.get("check_units", True)
    if parsed.blocks is not None:
        b = _pick_block(parsed.blocks, kw.get("block"), parsed.raw.name, notes)
        if kind == "peak_list":
            return _jcamp_peak_list(
                b, parsed.raw, unit, medium, kw.get("mode", "emission"), check, notes
            )
        return _jcamp_spectrum(b, parsed.raw, unit, medium, check, notes)
    cols = parsed.cols
    assert cols is not None
    if kind == "peak_list":
        return _peak_list_from_columns(
            cols,
            parsed.raw,
            unit=unit,
            medium=medium,
            mode=kw.get("mode", "emission"),
            columns=kw.get("columns"),
            check_units=check,
            notes=notes,
        )
    return _spectrum_from_columns(
        cols,
        parsed.raw,
        unit=unit,
        medium=medium,
        columns=kw.get("columns"),
        check_units=check,
        notes=notes,
    )


# --------------------------------------------------------------------------- public API


def read_peak_list(
    source: Source,
    *,
    name: str | None = None,
    unit: str | None = None,
    medium: str | None = None,
    mode: str = "emission",
    columns: dict[str, str] | None = None,
    block: int | str | None = None,
    check_units: bool = True,
    max_bytes: int = DEFAULT_MAX_BYTES,
    progress: Progress | None = None,
) -> PeakList:
    """Read a peak list (delimited text, pasted cells, Parquet or a JCAMP-DX peak table).

    Parameters
    ----------
    source : bytes, str or path-like
        A path, the file's bytes, or pasted text (see :func:`~workbench.io.source.load_source`).
    name : str, optional
        Name to record in the provenance.
    unit : str, optional
        Unit of the positions; overrides the header (e.g. ``"angstrom"``).
    medium : {"air", "vacuum"}, optional
        Medium of wavelengths; overrides the file. When nothing states it,
        ``"air"`` is assumed and a note says so.
    mode : {"emission", "absorption"}
        Whether the peaks are emission lines or absorption dips.
    columns : dict, optional
        Explicit column choices ``{role: header}`` (roles: position,
        intensity, area, fwhm, snr).
    block : int or str, optional
        JCAMP-DX block index (0-based) or title.
    check_units : bool
        Refuse positions that look implausible in their stated unit.
    max_bytes : int
        Refuse larger inputs before reading them.
    progress : callable, optional
        ``progress(fraction, message)``, called as reading advances (last with 1.0).

    Returns
    -------
    PeakList
        Positions in nm or eV, sorted; ``extra["mapping"]`` says which header
        became which role, with its score and unit.

    Raises
    ------
    InputError
        One of its subclasses, naming the row or column and the fix.
    """
    parsed = parse_source(source, name, max_bytes, progress)
    kw = {
        "unit": unit,
        "medium": medium,
        "mode": mode,
        "columns": columns,
        "block": block,
        "check_units": check_units,
    }
    result = _build(parsed, "peak_list", kw)
    assert isinstance(result, PeakList)
    report_progress(progress, 1.0, f"read {result.table.height:,} peaks")
    return result


def read_spectrum(
    source: Source,
    *,
    name: str | None = None,
    unit: str | None = None,
    medium: str | None = None,
    block: int | str | None = None,
    columns: dict[str, str] | None = None,
    check_units: bool = True,
    max_bytes: int = DEFAULT_MAX_BYTES,
    progress: Progress | None = None,
) -> Spectrum:
    """Read a sampled spectrum (two-column text, JCAMP-DX or Parquet).

    Parameters
    ----------
    source : bytes, str or path-like
        A path, the file's bytes, or pasted text.
    name : str, optional
        Name to record in the provenance.
    unit : str, optional
        Unit of the x axis; overrides the header or ``##XUNITS``.
    medium : {"air", "vacuum"}, optional
        Medium of a wavelength axis (assumed air, with a note, if unstated).
    block : int or str, optional
        JCAMP-DX block index (0-based among data blocks) or title; default
        the first data block (a note lists the others).
    columns : dict, optional
        Explicit column choices ``{"position": header, "intensity": header}``.
    check_units : bool
        Refuse x values that look implausible in their stated unit.
    max_bytes : int
        Refuse larger inputs before reading them.
    progress : callable, optional
        ``progress(fraction, message)``, called as reading advances (last with 1.0).

    Returns
    -------
    Spectrum
        Strictly increasing x in nm or eV (a descending axis is reversed, with a note).

    Raises
    ------
    InputError
        One of its subclasses, naming the row or column and the fix.
    """
    parsed = parse_source(source, name, max_bytes, progress)
    kw = {
        "unit": unit,
        "medium": medium,
        "block": block,
        "columns": columns,
        "check_units": check_units,
    }
    result = _build(parsed, "spectrum", kw)
    assert isinstance(result, Spectrum)
    report_progress(progress, 1.0, f"read {result.x.size:,} points")
    return result


def read_any(
    source: Source,
    *,
    kind: Literal["peak_list", "spectrum"] | None = None,
    name: str | None = None,
    unit: str | None = None,
    medium: str | None = None,
    mode: str = "emission",
    block: int | str | None = None,
    columns: dict[str, str] | None = None,
    check_units: bool = True,
    max_bytes: int = DEFAULT_MAX_BYTES,
    progress: Progress | None = None,
) -> PeakList | Spectrum:
    """Read a peak list or a spectrum, deciding which from the content.

    JCAMP-DX is recognised by its leading ``##TITLE=``, Parquet by its magic
    bytes. A delimited table with at least 50 rows whose positions step
    (nearly: ≥ 95 % of steps) one way, evenly (95th-percentile step at most 3×
    the 5th), and no peak columns (fwhm, area, snr) is a spectrum, whose
    stricter checks then name any duplicated or out-of-order row; anything
    else is a peak list. ``kind`` forces the choice.

    Parameters
    ----------
    source : bytes, str or path-like
        A path, the file's bytes, or pasted text.
    kind : {"peak_list", "spectrum"}, optional
        Force the kind instead of detecting it.
    name, unit, medium, mode, block, columns, check_units, max_bytes, progress
        As for :func:`read_peak_list` and :func:`read_spectrum`.

    Returns
    -------
    PeakList or Spectrum
        What the input holds; the InputSource notes say why it was chosen.
    """
    if kind not in (None, "peak_list", "spectrum"):
        raise ValueRangeError(f"unknown kind {kind!r}", "use 'peak_list' or 'spectrum'")
    parsed = parse_source(source, name, max_bytes, progress)
    kw = {
        "unit": unit,
        "medium": medium,
        "mode": mode,
        "block": block,
        "columns": columns,
        "check_units": check_units,
    }
    if kind is None:
        kind, _ = _guess_kind(parsed, block)  # type: ignore[assignment]
    result = _build(parsed, kind, kw)  # type: ignore[arg-type]
    report_progress(progress, 1.0, "done")
    return result


def sniff(
    source: Source, *, name: str | None = None, max_bytes: int = DEFAULT_MAX_BYTES
) -> dict[str, object]:
    """Say what :func:`read_any` would do with an input, without converting it.

    Parameters
    ----------
    source : bytes, str or path-like
        A path, the file's bytes, or pasted text.
    name : str, optional
        Name to record.
    max_bytes : int
        Refuse larger inputs before reading them.

    Returns
    -------
    dict
        ``name``, ``sha256``, ``size_bytes``, ``format``, ``encoding``,
        ``kind`` and ``reason``; for tables also ``headers``, ``rows``,
        ``delimiter``, ``decimal_comma`` and ``mapping`` (header → role and
        score); for JCAMP-DX the list of ``blocks``.
    """
    parsed = parse_source(source, name, max_bytes)
    kind, reason = _guess_kind(parsed, None)
    out: dict[str, object] = {
        "name": parsed.raw.name,
        "sha256": parsed.raw.sha256,
        "size_bytes": parsed.raw.size_bytes,
        "format": parsed.fmt,
        "encoding": parsed.encoding,
        "kind": kind,
        "reason": reason,
    }
    if parsed.blocks is not None:
        out["blocks"] = [
            {"index": b.index, "title": b.title, "kind": b.kind, "points": int(b.x.size)}
            for b in parsed.blocks
        ]
    if parsed.cols is not None:
        cols = parsed.cols
        out["headers"] = cols.headers
        out["rows"] = cols.n_rows
        out.update({k: v for k, v in cols.details.items() if k != "n_columns"})
        if cols.headers is not None:
            try:
                mapping = map_columns(cols.headers, where=cols.name)
                out["mapping"] = {
                    cols.headers[c.index]: {"role": r, "score": c.score, "unit": c.header.unit}
                    for r, c in mapping.items()
                }
            except ColumnMappingError as exc:
                out["mapping_error"] = str(exc)
    return out
