"""Reading large delimited files: sniff the head, parse the bulk with polars in one call.

The first :data:`SNIFF_BYTES` (cut at a line end) go through the careful
line parser (:func:`~workbench.io.delimited.parse_delimited`), which decides
the header, delimiter, decimal comma and comment lines exactly as before.
The rest is handed to :func:`polars.read_csv` (tab, comma, semicolon) or
:func:`numpy.loadtxt` (runs of whitespace) in one call, as float columns,
reading the caller's bytes in place (nothing is decoded to ``str``).

When the bulk parser refuses the data, or the data hold something it would
read differently from the careful parser (comment or blank lines among the
data rows, empty cells, stray line-break characters, text in cells), the
caller falls back to the careful parser on the whole file, which names the
row and column at fault. That fallback holds every cell as a Python string
(about 30 times the file's size), so above :data:`CAREFUL_MAX_BYTES` it is
replaced by :func:`first_problem`, a streaming pass that names the first
offending row without holding the file's lines.
"""

from __future__ import annotations

import io
import re
import warnings
from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np

from workbench.errors import FileFormatError, InputError
from workbench.io.delimited import (
    Table,
    is_spreadsheet_error,
    looks_numeric_cell,
    parse_delimited,
    split_line,
)
from workbench.io.source import decode_text

__all__ = [
    "CAREFUL_MAX_BYTES",
    "MAX_SNIFF_BYTES",
    "SNIFF_BYTES",
    "FastTable",
    "NeedCarefulParser",
    "first_problem",
    "read_fast",
]

#: Bytes read by the careful parser to decide the layout.
SNIFF_BYTES: int = 65_536
#: The head may grow to this when a long preamble hides the table.
MAX_SNIFF_BYTES: int = 4 * 1024 * 1024
#: Largest input the careful (line-by-line) parser may take whole.
CAREFUL_MAX_BYTES: int = 32 * 1024 * 1024

# Line breaks other than \n that str.splitlines() honours: with any of them in
# the head, byte offsets and physical line numbers would disagree.
_ODD_BREAKS = re.compile(rb"\r(?!\n)|[\x0b\x0c\x1c\x1d\x1e]|\xc2\x85|\xe2\x80[\xa8\xa9]")
_BLANK_LINE = re.compile(rb"\n[ \t\r]*(?=\n)")


@dataclass
class FastTable:
    """Float columns of a delimited file read in bulk.

    Attributes
    ----------
    head : Table
        The careful parse of the head (header, delimiter, comments).
    columns : list of numpy.ndarray
        One float64 array per column, every row of the file.
    first_data_line : int
        1-based physical line of the first data row.
    offset : int
        Byte offset of the first data row.
    row_lines : numpy.ndarray or None
        Physical line of each row when rows do not follow one per line
        (blank lines were skipped); None when row i is on line
        ``first_data_line + i``.
    notes : list of str
        What the bulk pass decided.
    """

    head: Table
    columns: list[np.ndarray]
    first_data_line: int
    offset: int
    row_lines: np.ndarray | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def n_rows(self) -> int:
        """Number of data rows."""
        return int(self.columns[0].size)

    def line_of(self, i: int) -> int:
        """Physical line number of data row ``i`` (0-based)."""
        if self.row_lines is not None:
            return int(self.row_lines[i])
        return self.first_data_line + i


class NeedCarefulParser(Exception):
    """The bulk parser cannot take this input; use the careful parser.

    Attributes
    ----------
    head : Table or None
        The careful parse of the head, when it got that far.
    """

    def __init__(self, reason: str, head: Table | None = None) -> None:
        super().__init__(reason)
        self.head = head


def _head(data: bytes, name: str, size: int) -> tuple[str, int]:
    """Decode the head (cut at the last line end) and return it with its byte length."""
    if len(data) <= size:
        cut = len(data)
    else:
        cut = data.rfind(b"\n", 0, size) + 1
        if cut <= 0:
            raise NeedCarefulParser("no line end in the head")
    head = data[:cut]
    if _ODD_BREAKS.search(head):
        raise NeedCarefulParser("unusual line breaks")
    text, encoding = decode_text(head, name)
    if encoding not in ("utf-8", "utf-8-sig", "latin-1"):
        raise NeedCarefulParser(encoding)
    if encoding == "latin-1" and b"\x85" in head:
        # In latin-1 the byte 0x85 is NEL, a line break to str.splitlines: the
        # head's line numbers would no longer count the b"\n" of the bytes.
        raise NeedCarefulParser("unusual line breaks")
    return text, cut


def _offset_of_line(data: bytes, line: int) -> int:
    """Byte offset of the start of 1-based physical ``line``."""
    pos = 0
    for _ in range(line - 1):
        pos = data.find(b"\n", pos) + 1
        if pos == 0:  # the head counted a break the bytes do not hold
            raise NeedCarefulParser("line numbering")
    return pos


def read_fast(data: bytes, name: str) -> FastTable:
    """Read a delimited file's data rows as float columns in one bulk call.

    Parameters
    ----------
    data : bytes
        The file's bytes (read in place, not copied or decoded whole).
    name : str
        File name for messages.

    Returns
    -------
    FastTable
        Columns and layout.

    Raises
    ------
    InputError
        When the head itself is malformed (same messages as the careful parser).
    NeedCarefulParser
        When the bulk parser cannot take the input (the caller then uses the
        careful parser or :func:`first_problem`).
    """
    size = SNIFF_BYTES
    while True:
        text, cut = _head(data, name, size)
        try:
            head = parse_delimited(text, name)
            break
        except InputError as exc:
            # Only a head without data rows may be a long preamble; any other
            # error (a ragged row, a spreadsheet error) is the file's own.
            if cut >= len(data) or "no data rows" not in exc.problem:
                raise
            if size >= MAX_SNIFF_BYTES:
                raise NeedCarefulParser("no table in the head") from None
            # A long preamble (instrument metadata) can hide the data: look further.
            size *= 8
    try:
        return _bulk(data, name, head, cut)
    except NeedCarefulParser as exc:
        raise NeedCarefulParser(str(exc), head) from None


def _bulk(data: bytes, name: str, head: Table, cut: int) -> FastTable:
    if head.inner_comments:
        raise NeedCarefulParser("comment lines among the data")
    first_line = head.line_numbers[0]
    offset = _offset_of_line(data, first_line)
    width = head.n_columns
    raw_width = width + (1 if head.trailing_delimiter else 0)
    # Lines after the head that start with a comment marker: the careful parser
    # must see them (it notes them, or refuses a spreadsheet error).
    # A comment line after the head needs no search: as a row it is not a number
    # (or leaves cells empty), so the bulk parse below refuses it.
    if head.delimiter == " ":
        cols = _loadtxt(data, first_line, raw_width, head.decimal_comma)
        # loadtxt skips blank lines silently: number the rows around them.
        blank = _blank_lines(data, offset, first_line)
        row_lines = None
        if blank.size:
            lines = np.arange(first_line, first_line + cols[0].size + blank.size)
            row_lines = np.setdiff1d(lines, blank, assume_unique=True)
    else:
        cols, row_lines = _polars(data, offset, first_line, head, raw_width)
    if head.trailing_delimiter:
        if np.any(~np.isnan(cols[-1])):
            raise NeedCarefulParser("trailing cell not empty")
        cols = cols[:-1]
    return FastTable(head, cols, first_line, offset, row_lines)


def _blank_lines(data: bytes, offset: int, first_line: int) -> np.ndarray:
    """1-based numbers of the blank lines after ``offset`` (the data's start)."""
    numbers: list[int] = []
    line, pos = first_line, offset
    for m in _BLANK_LINE.finditer(data, max(offset - 1, 0)):
        line += data.count(b"\n", pos, m.start() + 1)
        pos = m.start() + 1
        numbers.append(line)
    return np.asarray(numbers, dtype=np.int64)


def _loadtxt(data: bytes, first_line: int, width: int, decimal_comma: bool) -> list[np.ndarray]:
    if decimal_comma:
        raise NeedCarefulParser("decimal comma with whitespace")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # "input contained no data": refused below
            arr = np.loadtxt(
                io.BytesIO(data),
                dtype=np.float64,
                comments=None,
                delimiter=None,
                skiprows=first_line - 1,
                ndmin=2,
                encoding="latin-1",
            )
    except (ValueError, UnicodeError) as exc:
        raise NeedCarefulParser(str(exc)) from None
    if arr.shape[0] == 0 or arr.shape[1] != width:
        raise NeedCarefulParser("column count")
    return [np.ascontiguousarray(arr[:, i]) for i in range(width)]


def _polars(
    data: bytes, offset: int, first_line: int, head: Table, width: int
) -> tuple[list[np.ndarray], np.ndarray | None]:
    import polars as pl

    names = [f"c{i}" for i in range(width)]
    kw = {
        "has_header": False,
        "separator": head.delimiter,
        "skip_lines": first_line - 1,
        "decimal_comma": head.decimal_comma,
        "encoding": "utf8-lossy",
        "new_columns": names,
        "raise_if_empty": False,
    }
    try:
        df = pl.read_csv(io.BytesIO(data), schema=dict.fromkeys(names, pl.Float64), **kw)
    except pl.exceptions.PolarsError:
        # Cells padded with spaces ("656.3, 120"): read as text, strip, convert.
        try:
            df = pl.read_csv(io.BytesIO(data), schema=dict.fromkeys(names, pl.String), **kw)
            df = df.select(pl.col(n).str.strip_chars(" \t\r").cast(pl.Float64) for n in names)
        except pl.exceptions.PolarsError as exc:
            raise NeedCarefulParser(str(exc)) from None
    except BaseException as exc:  # a Rust panic is a BaseException
        if isinstance(exc, KeyboardInterrupt | SystemExit):
            raise
        raise NeedCarefulParser(type(exc).__name__) from None
    if df.height == 0:
        raise NeedCarefulParser("no rows")
    row_lines = None
    check = names[:-1] if head.trailing_delimiter else names
    nulls = df.select(pl.any_horizontal(pl.col(n).is_null() for n in check)).to_series()
    if nulls.any():
        all_null = df.select(pl.all_horizontal(pl.col(n).is_null() for n in check)).to_series()
        blank = len(_BLANK_LINE.findall(data, offset - 1 if offset else 0))
        if (nulls != all_null).any() or int(all_null.sum()) != blank:
            raise NeedCarefulParser("empty cells")
        keep = ~all_null.to_numpy()
        row_lines = (np.arange(df.height, dtype=np.int64) + first_line)[keep]
        df = df.filter(pl.Series(keep))
    cols = [df.get_column(n).to_numpy().astype(np.float64, copy=False) for n in names]
    if head.trailing_delimiter:
        cols[-1] = df.get_column(names[-1]).fill_null(np.nan).to_numpy()
    return cols, row_lines


def _lines(data: bytes) -> Iterator[tuple[int, str]]:
    for number, raw in enumerate(io.BytesIO(data), start=1):
        yield number, raw.decode("utf-8", errors="replace").rstrip("\r\n")


def first_problem(data: bytes, name: str, head: Table) -> InputError:
    """Find the first row the careful parser would refuse, streaming line by line.

    Used instead of the careful parser for files above
    :data:`CAREFUL_MAX_BYTES`: memory stays at one line.

    Parameters
    ----------
    data : bytes
        The file's bytes.
    name : str
        File name for messages.
    head : Table
        The careful parse of the head (delimiter, width, decimal comma).

    Returns
    -------
    InputError
        The error to raise: the first bad row and column, or, when every
        row is readable but only by the careful parser (units in cells,
        comment lines among the data), why the file is too large for it.
    """
    width = head.n_columns
    labels = head.header or [f"column {i + 1}" for i in range(width)]
    first = head.line_numbers[0]
    markers = "#%" if head.delimiter == ";" else "#%;"
    for number, line in _lines(data):
        if number < first:
            continue
        s = line.strip()
        if not s:
            continue
        code = is_spreadsheet_error(s)
        if code:
            return FileFormatError(
                f"{name}: row {number} starts with the spreadsheet error {code!r}",
                "fix the formula in the spreadsheet, or delete the row, and export again",
            )
        if s[0] in markers:
            continue
        try:
            cells = [c.strip() for c in split_line(line, head.delimiter)]
        except InputError as exc:
            return FileFormatError(f"{name}: row {number}: {exc.problem}", exc.remedy)
        if head.trailing_delimiter and cells and cells[-1] == "":
            cells = cells[:-1]
        if len(cells) != width:
            return FileFormatError(
                f"{name}: row {number} has {len(cells)} cells but the "
                f"{'header' if head.header is not None else 'first row'} has {width}",
                f"make row {number} have {width} cells (check for a stray or missing "
                f"{head.delimiter_name} delimiter)",
            )
        for label, cell in zip(labels, cells, strict=True):
            c = cell.replace(",", ".") if head.decimal_comma else cell
            if c and not looks_numeric_cell(c):
                return FileFormatError(
                    f"{name}: row {number}, column {label!r} holds {cell[:40]!r}, "
                    "which is not a number",
                    "correct the cell (decimal point or decimal comma, no text)",
                )
    return FileFormatError(
        f"{name} ({len(data):,} bytes) has units in cells, empty cells or comment lines "
        f"among its data rows; files over {CAREFUL_MAX_BYTES // 2**20} MiB must be plain "
        "numeric tables",
        "put units in the header, remove comment lines from the data, or split the file",
    )
