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

This module decides what an input holds (:func:`sniff`, the detection in
:func:`read_any`) and dispatches; the results are assembled by
:mod:`workbench.io.peaklists` and :mod:`workbench.io.spectra`, with the
provenance record and JCAMP-DX block choice in :mod:`workbench.io.assemble`.
"""

from __future__ import annotations

from typing import Literal

import numpy as np

from workbench.datamodel import PeakList, Spectrum
from workbench.errors import ColumnMappingError, InputError, ValueRangeError
from workbench.io.assemble import pick_block
from workbench.io.columns import ColumnChoice, map_columns
from workbench.io.peaklists import jcamp_peak_list, peak_list_from_columns
from workbench.io.resolve import MAX_ABS_VALUE
from workbench.io.source import DEFAULT_MAX_BYTES
from workbench.io.spectra import jcamp_spectrum, spectrum_from_columns
from workbench.io.tabular import Parsed, Progress, Source, parse_source, report_progress

__all__ = [
    "INPUT_FORMATS",
    "MAX_ABS_VALUE",
    "Progress",
    "parse_block_choice",
    "read_any",
    "read_peak_list",
    "read_spectrum",
    "sniff",
]


def parse_block_choice(text: str | None) -> int | str | None:
    """The ``block`` asked for in words (CLI ``--block``, the app's reading options).

    Blank is ``None`` (the first part holding data); digits are a 0-based
    index; anything else is a JCAMP-DX block title or a workbook sheet name.
    """
    t = (text or "").strip()
    if not t:
        return None
    return int(t) if t.isdigit() else t


#: The formats the readers take, in words (CLI help, the app's upload label).
INPUT_FORMATS: str = (
    "CSV/TSV/text, Excel/OpenDocument workbooks, JCAMP-DX, Parquet, FITS, JSON, EMSA/MAS"
)


# --------------------------------------------------------------------------- detection


def _guess_kind(parsed: Parsed, block: int | str | None) -> tuple[str, str]:
    if parsed.blocks is not None:
        b = pick_block(parsed.blocks, block, parsed.raw.name, [])
        if b.kind == "peaktable":
            return "peak_list", "JCAMP-DX block holds a ##PEAK TABLE"
        return "spectrum", f"JCAMP-DX block holds ##{b.kind.upper()}"
    cols = parsed.cols
    assert cols is not None
    if cols.details.get("sampled"):
        return "spectrum", str(cols.details.get("sampled"))
    roles: dict[str, ColumnChoice] = {}
    if cols.headers is not None:
        try:
            roles = map_columns(
                cols.headers,
                where=cols.name,
                label_columns=cols.label_columns,
            )
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
    if _steps_even_one_way(x):
        return "spectrum", f"{cols.n_rows} evenly spaced rows"
    d = np.diff(x)
    finite = np.isfinite(d)
    if not finite.all():
        d = d[finite]
    # Mostly monotonic and evenly stepped means a sampled spectrum; a few bad steps
    # (a duplicated or out-of-order row) must still reach the spectrum checks, which
    # name the row, instead of silently becoming a peak list.
    if d.size:
        up, down = np.count_nonzero(d > 0), np.count_nonzero(d < 0)
        if max(up, down) >= 0.95 * d.size and max(up, down) > 0:
            # The steps are |d| of the majority direction. The 5th and 95th percentiles
            # lie between their extremes, so steps within a factor of 3 of each other
            # settle it without np.percentile (whose np.unique imports numpy.ma,
            # ~20 ms); the percentiles decide otherwise. All steps one way (the usual
            # case) give the extremes from d itself, without copies.
            steps = None
            if up == d.size:
                smallest, largest = d.min(), d.max()
            elif down == d.size:
                smallest, largest = -d.max(), -d.min()
            else:
                steps = np.abs(d[d > 0] if up >= down else d[d < 0])
                smallest, largest = steps.min(), steps.max()
            if largest < 3.0 * smallest:
                return "spectrum", f"{cols.n_rows} evenly spaced rows"
            if steps is None:
                steps = np.abs(d)
            lo, hi = np.percentile(steps, [5.0, 95.0])
            if hi <= 3.0 * lo:
                return "spectrum", f"{cols.n_rows} evenly spaced rows"
            if _piecewise_even(steps):
                return "spectrum", f"{cols.n_rows} rows in stretches of even steps"
    return "peak_list", "positions are irregularly spaced"


def _piecewise_even(steps: np.ndarray) -> bool:
    """Whether positive ``steps`` are a few stretches of one step each.

    Spectra are often sampled finer where it matters and coarser elsewhere
    (ASTM G173-03: 0.5 nm to 400 nm, 1 nm to 1700 nm, 5 nm beyond; a merged
    scan of two gratings): the step changes at a handful of places and stays
    put between them. A peak list's spacings change at nearly every row. A
    change is a step more than 5 % away from the one before; at most 1 % of
    the steps (at least 2) may change (common practice, no source).
    """
    if steps.size < 49:
        return False
    change = np.abs(np.diff(steps)) > 0.05 * np.minimum(steps[1:], steps[:-1])
    return bool(np.count_nonzero(change) <= max(2.0, 0.01 * steps.size))


#: Positions per block in :func:`_steps_even_one_way` (a cache-sized slice).
_STEP_BLOCK = 1 << 16


def _steps_even_one_way(x: np.ndarray) -> bool:
    """True when every step of ``x`` is finite, one way, and within 3× of the others.

    Such an axis is a spectrum under the rule of :func:`_guess_kind` (the
    percentiles of the steps lie between their extremes); it is recognised
    block by block, without the differences of a whole long axis in memory.
    False means "not settled here", and the full rule decides.
    """
    n = x.size
    if n < 2:
        return False
    lo = hi = None
    sign = 0
    for a in range(0, n - 1, _STEP_BLOCK):
        d = np.diff(x[a : a + _STEP_BLOCK + 1])
        if not np.isfinite(d).all():
            return False
        if sign == 0:
            sign = 1 if d[0] > 0 else -1
        if not (np.all(d > 0) if sign > 0 else np.all(d < 0)):
            return False
        b_lo, b_hi = (d.min(), d.max()) if sign > 0 else (-d.max(), -d.min())
        lo = b_lo if lo is None else min(lo, b_lo)
        hi = b_hi if hi is None else max(hi, b_hi)
    return bool(hi < 3.0 * lo)


def _build(parsed: Parsed, kind: str, kw: dict) -> PeakList | Spectrum:
    notes: list[str] = []
    if parsed.encoding not in (None, "utf-8"):
        notes.append(f"decoded as {parsed.encoding}")
    if parsed.table is not None:
        t = parsed.table
        if parsed.fmt != "spreadsheet":  # a workbook's rows were tab-joined by the reader
            notes.append(
                f"delimiter: {t.delimiter_name}" + ("; decimal comma" if t.decimal_comma else "")
            )
        if t.units_line is not None:
            notes.append(f"units on line {t.units_line} joined to the column names above them")
        if t.title_lines:
            shown = ", ".join(str(n) for n in t.title_lines)
            where = "the header" if t.header is not None else "the data (no header)"
            notes.append(f"title line(s) above {where} kept as comments (line {shown})")
        if t.footer_lines:
            shown = ", ".join(str(n) for n in t.footer_lines)
            notes.append(f"text line(s) below the data kept as comments (line {shown})")
        if t.inner_comments:
            shown = ", ".join(str(n) for n in t.inner_comments[:10])
            more = f" and {len(t.inner_comments) - 10} more" if len(t.inner_comments) > 10 else ""
            notes.append(
                f"{len(t.inner_comments)} comment line(s) among the data rows skipped "
                f"(line {shown}{more})"
            )
    unit, medium, check = kw.get("unit"), kw.get("medium"), kw.get("check_units", True)
    if parsed.blocks is not None:
        b = pick_block(parsed.blocks, kw.get("block"), parsed.raw.name, notes)
        if kind == "peak_list":
            return jcamp_peak_list(
                b, parsed.raw, unit, medium, kw.get("mode", "emission"), check, notes
            )
        return jcamp_spectrum(b, parsed.raw, unit, medium, check, notes)
    cols = parsed.cols
    assert cols is not None
    if "note" in cols.details:  # what a FITS, JSON or workbook reader decided
        notes.append(str(cols.details["note"]))
    if kind == "peak_list":
        return peak_list_from_columns(
            cols,
            parsed.raw,
            unit=unit,
            medium=medium,
            mode=kw.get("mode", "emission"),
            columns=kw.get("columns"),
            check_units=check,
            notes=notes,
        )
    return spectrum_from_columns(
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
    """Read a peak list (delimited text, pasted cells, Parquet, FITS table, JCAMP-DX peak table).

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
        JCAMP-DX block index (0-based) or title; in a spreadsheet workbook,
        the sheet (0-based index or name).
    check_units : bool
        Refuse positions that look implausible in the unit the file gives
        them; a ``unit`` given here is taken as stated (the doubt becomes a
        note).
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
    parsed = parse_source(source, name, max_bytes, progress, part=block)
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
    """Read a sampled spectrum (two-column text, JCAMP-DX, Parquet or FITS).

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
        the first data block (a note lists the others). In a spreadsheet
        workbook, the sheet (0-based index or name); default the first
        holding a table.
    columns : dict, optional
        Explicit column choices ``{"position": header, "intensity": header}``.
    check_units : bool
        Refuse x values that look implausible in the unit the file gives
        them; a ``unit`` given here is taken as stated (the doubt becomes a
        note).
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
    parsed = parse_source(source, name, max_bytes, progress, part=block)
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

    JCAMP-DX is recognised by its leading ``##TITLE=``, Parquet and FITS by
    their first bytes; a FITS 1-D image is a spectrum. A table with at least
    50 rows whose positions step
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
    parsed = parse_source(source, name, max_bytes, progress, part=block)
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
                mapping = map_columns(
                    cols.headers,
                    where=cols.name,
                    label_columns=cols.label_columns,
                )
                out["mapping"] = {
                    cols.headers[c.index]: {"role": r, "score": c.score, "unit": c.header.unit}
                    for r, c in mapping.items()
                }
            except ColumnMappingError as exc:
                out["mapping_error"] = str(exc)
    return out
