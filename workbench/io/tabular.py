"""From an input's bytes to columns: format detection and the column adapters.

:func:`parse_source` loads the bytes (:mod:`workbench.io.source`), recognises
Parquet and FITS (:mod:`workbench.io.fits`) by their first bytes, Excel and
OpenDocument workbooks (:mod:`workbench.io.spreadsheet`) by their container, JSON
tables (:mod:`workbench.io.jsontable`) by a leading ``{`` or ``[`` that
parses, EMSA/MAS (:mod:`workbench.io.msa`) by its ``#FORMAT`` line, and
JCAMP-DX by its leading ``##TITLE=``, and
reads anything else as delimited text: its head is sniffed and the bulk
parsed by polars (:mod:`workbench.io.fastcsv`); the careful line parser
(:mod:`workbench.io.delimited`) runs only when that refuses, and only up to
:data:`~workbench.io.fastcsv.CAREFUL_MAX_BYTES`. Tabular inputs become
:class:`Columns`: numeric columns fetched on demand, each with row labels
for messages, whatever the format.
"""

from __future__ import annotations

import dataclasses
import hashlib
import io
import os
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import polars as pl

from workbench.errors import FileFormatError, ValueRangeError
from workbench.io.columnset import Columns
from workbench.io.delimited import Table, numeric_column, parse_delimited
from workbench.io.fastcsv import (
    CAREFUL_MAX_BYTES,
    MAX_SNIFF_BYTES,
    SNIFF_BYTES,
    FastTable,
    NeedCarefulParser,
    first_problem,
    read_fast,
)
from workbench.io.fits import columns_from_fits, looks_like_fits
from workbench.io.jcamp import JcampBlock, looks_like_jcamp, parse_jcamp
from workbench.io.jsontable import columns_from_json, looks_like_json
from workbench.io.msa import columns_from_msa, looks_like_msa
from workbench.io.source import BackgroundSha256, RawInput, decode_text, read_source
from workbench.io.spreadsheet import looks_like_spreadsheet, table_from_spreadsheet

__all__ = [
    "Columns",
    "Parsed",
    "Progress",
    "Source",
    "columns_from_fast",
    "columns_from_parquet",
    "columns_from_table",
    "parse_source",
    "report_progress",
]

Source = bytes | str | os.PathLike[str]
#: ``progress(fraction, message)``: called with 0 < fraction <= 1 as reading advances.
Progress = Callable[[float, str], None]


def columns_from_table(table: Table) -> Columns:
    """Columns of a table split by the careful parser (cells parsed on demand)."""

    def get(index: int, label: str, allow_empty: bool):
        return numeric_column(table, index, label, allow_empty=allow_empty)

    details = {
        "delimiter": table.delimiter_name,
        "decimal_comma": table.decimal_comma,
        "header_line": table.header_line,
        "text_columns": table.text_columns,
        "label_columns": table.label_columns,
    }
    return Columns(
        name=table.name,
        headers=table.header,
        n_rows=len(table.rows),
        get=get,
        row_label=lambda i: f"row {table.line_numbers[i]}",
        comments=table.comments,
        details=details,
    )


def columns_from_fast(ft: FastTable, name: str) -> Columns:
    """Columns of a table read in bulk (already floats; rows labelled by line)."""
    t = ft.head

    def row_label(i: int) -> str:
        return f"row {ft.line_of(i)}"

    def get(index: int, label: str, allow_empty: bool):
        values = ft.columns[index]
        # The bulk parse reads an empty cell and "nan" alike as NaN: both are a
        # missing value where one is allowed (as in the careful parser).
        missing = np.isnan(values) if allow_empty else np.zeros(values.size, dtype=bool)
        bad = ~np.isfinite(values) & ~missing
        if bad.any():
            i = int(np.argmax(bad))
            raise ValueRangeError(
                f"{name}: {row_label(i)}, column {label!r} is '{values[i]}' (not a finite number)",
                "remove the row or replace the value with a measured number",
            )
        return values, missing, None

    details = {
        "delimiter": t.delimiter_name,
        "decimal_comma": t.decimal_comma,
        "header_line": t.header_line,
        "text_columns": t.text_columns,
        "label_columns": t.label_columns,
        "n_columns": t.n_columns,
    }
    return Columns(
        name=name,
        headers=t.header,
        n_rows=ft.n_rows,
        get=get,
        row_label=row_label,
        comments=t.comments,
        details=details,
    )


def _numeric_dtype(dtype: object) -> bool:
    return bool(getattr(dtype, "is_numeric", lambda: False)()) and dtype != pl.Decimal


def columns_from_parquet(data: bytes, name: str) -> Columns:
    """Columns of a Parquet table; only numeric columns are numbers.

    Raises
    ------
    FileFormatError
        For a damaged file (a Rust panic included) or an empty table.
    """
    unreadable = FileFormatError(
        f"{name} is not a readable Parquet file (damaged or not Parquet)",
        "re-export the table as Parquet or CSV",
    )
    try:
        df = pl.read_parquet(io.BytesIO(data))
    except BaseException as exc:  # a Rust panic (PanicException) is a BaseException
        if isinstance(exc, KeyboardInterrupt | SystemExit):
            raise
        raise unreadable from None
    if df.height == 0:
        raise FileFormatError(f"{name} has columns but no rows", "give a table with data rows")
    headers = list(df.columns)

    def get(index: int, label: str, allow_empty: bool):
        col = df.get_column(headers[index])
        # Booleans, dates, durations, text, lists and structs cast to numbers
        # without complaint (True -> 1, a date -> days): only numbers are numbers.
        if not _numeric_dtype(col.dtype):
            raise FileFormatError(
                f"{name}: column {label!r} is {col.dtype}, not numbers",
                "store the column as floating-point or integer numbers",
            )
        try:
            series = col.cast(pl.Float64, strict=True)
            values = series.fill_null(np.nan).to_numpy().astype(np.float64)
            empty = series.is_null().to_numpy()
            if allow_empty:
                empty = empty | np.isnan(values)  # NaN: a missing value, like a null
        except BaseException as exc:
            if isinstance(exc, KeyboardInterrupt | SystemExit):
                raise
            raise FileFormatError(
                f"{name}: column {label!r} ({col.dtype}) cannot be read as numbers",
                "store the column as floating-point numbers",
            ) from None
        if empty.any() and not allow_empty:
            i = int(np.argmax(empty))
            raise ValueRangeError(
                f"{name}: data row {i + 1}, column {label!r} is empty (null)",
                "fill the value or drop the row",
            )
        bad = ~np.isfinite(values) & ~empty
        if bad.any():
            i = int(np.argmax(bad))
            raise ValueRangeError(
                f"{name}: data row {i + 1}, column {label!r} is {values[i]} (not a finite number)",
                "remove the row or replace the value with a measured number",
            )
        return values, empty, None

    return Columns(
        name=name,
        headers=headers,
        n_rows=df.height,
        get=get,
        row_label=lambda i: f"data row {i + 1}",
        fmt="parquet",
    )


@dataclass
class Parsed:
    """An input after format detection: its bytes and its columns or JCAMP-DX blocks."""

    raw: RawInput
    fmt: str
    encoding: str | None = None
    cols: Columns | None = None
    blocks: list[JcampBlock] | None = None
    table: Table | None = None


def report_progress(progress: Progress | None, fraction: float, message: str) -> None:
    """Call ``progress(fraction, message)`` when a callback was given."""
    if progress is not None:
        progress(fraction, message)


def _ascii_head(data: bytes) -> str:
    # Labels of JCAMP-DX are ASCII: latin-1 decodes any byte, so detection never fails.
    return data[:SNIFF_BYTES].removeprefix(b"\xef\xbb\xbf").decode("latin-1")


def parse_source(
    source: Source,
    name: str | None,
    max_bytes: int,
    progress: Progress | None = None,
    *,
    part: int | str | None = None,
) -> Parsed:
    """Load an input and split it into columns (or JCAMP-DX blocks).

    Parameters
    ----------
    source : bytes, str or path-like
        See :func:`~workbench.io.source.load_source`.
    name : str, optional
        Name to record.
    max_bytes : int
        Refuse larger inputs before reading them.
    progress : callable, optional
        ``progress(fraction, message)``.
    part : int or str, optional
        The sheet of a spreadsheet workbook (0-based index or name); JCAMP-DX
        blocks are chosen later, from the parsed blocks.

    Returns
    -------
    Parsed
        Format, encoding and content.

    Raises
    ------
    InputError
        One of its subclasses, naming the row or column and the fix.
    """
    label, data = read_source(source, name=name, max_bytes=max_bytes)
    if len(data) < _HASH_IN_THREAD_BYTES:
        raw = RawInput(label, data, hashlib.sha256(data).hexdigest())
        return _parse_raw(raw, progress, part)
    # A large input is hashed in a thread while it is parsed; the parse sees a
    # record without the hash, replaced by the complete one before returning.
    hasher = BackgroundSha256(data)
    parsed = _parse_raw(RawInput(label, data, ""), progress, part)
    return dataclasses.replace(parsed, raw=RawInput(label, data, hasher.hexdigest()))


#: Inputs at least this large are hashed in a thread while they are parsed.
_HASH_IN_THREAD_BYTES = 1 << 20


def _parse_raw(raw: RawInput, progress: Progress | None, part: int | str | None = None) -> Parsed:
    report_progress(progress, 0.1, f"read {raw.size_bytes:,} bytes")
    if raw.data[:4] == b"PAR1":
        parsed = Parsed(raw, "parquet", cols=columns_from_parquet(raw.data, raw.name))
    elif looks_like_fits(raw.data):
        parsed = Parsed(raw, "fits", cols=columns_from_fits(raw.data, raw.name))
    elif looks_like_spreadsheet(raw.data):
        table, note = table_from_spreadsheet(raw.data, raw.name, sheet=part)
        cols = columns_from_table(table)
        cols.details["n_columns"] = table.n_columns
        cols.details["note"] = note
        parsed = Parsed(raw, "spreadsheet", cols=cols, table=table)
    elif looks_like_json(raw.data) and (js := columns_from_json(raw.data, raw.name)) is not None:
        parsed = Parsed(raw, "json", cols=js)
    elif raw.data.startswith((b"\xff\xfe", b"\xfe\xff")):
        # UTF-16 (rare): decode once, then treat the UTF-8 re-encoding like any file.
        text, encoding = decode_text(raw.data, raw.name)
        if looks_like_jcamp(text):
            parsed = Parsed(raw, "jcamp-dx", encoding, blocks=parse_jcamp(text, raw.name))
        else:
            parsed = _parse_delimited(text.encode("utf-8"), raw, encoding)
    elif looks_like_msa(_ascii_head(raw.data)):
        text, encoding = decode_text(raw.data, raw.name)
        parsed = Parsed(raw, "emsa-mas", encoding, cols=columns_from_msa(text, raw.name))
    elif looks_like_jcamp(_ascii_head(raw.data)):
        text, encoding = decode_text(raw.data, raw.name)
        parsed = Parsed(raw, "jcamp-dx", encoding, blocks=parse_jcamp(text, raw.name))
    else:
        parsed = _parse_delimited(raw.data, raw, None)
    report_progress(progress, 0.8, "parsed")
    return parsed


def _parse_delimited(data: bytes, raw: RawInput, encoding: str | None) -> Parsed:
    try:
        ft = read_fast(data, raw.name)
    except NeedCarefulParser as exc:
        if len(data) > CAREFUL_MAX_BYTES:
            if exc.head is None:
                raise FileFormatError(
                    f"{raw.name} ({len(data):,} bytes) has no readable table in its first "
                    f"{MAX_SNIFF_BYTES // 2**20} MiB, a first line over {SNIFF_BYTES:,} "
                    "bytes, line breaks other than LF/CRLF, or an unusual text encoding",
                    "save it as UTF-8 text with one row per line and a short preamble",
                ) from None
            raise first_problem(data, raw.name, exc.head) from None
        text, enc = decode_text(data, raw.name)
        table = parse_delimited(text, raw.name)
        del text
        cols = columns_from_table(table)
        cols.details["n_columns"] = table.n_columns
        return Parsed(raw, "delimited", encoding or enc, cols=cols, table=table)
    # The bulk rows parsed as numbers, so they are ASCII: only the lines before
    # them (header, comments) decide how the file was encoded.
    enc = encoding or ("utf-8-sig" if data.startswith(b"\xef\xbb\xbf") else "utf-8")
    if encoding is None and _not_utf8(data[: ft.offset]):
        enc = "latin-1"
    return Parsed(raw, "delimited", enc, cols=columns_from_fast(ft, raw.name), table=ft.head)


def _not_utf8(data: bytes) -> bool:
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return True
    return False
