"""Splitting delimited text (CSV, TSV, semicolon, whitespace, pasted cells) into a table.

The delimiter is found from the data lines (tab, then semicolon, then comma,
then runs of whitespace). With a semicolon, tab or whitespace delimiter a
decimal comma (``656,28``, common in European labs) is read as a decimal
point. Lines starting with ``#`` or ``%`` are comments, and so are lines
starting with ``;`` unless ``;`` is the delimiter. Text lines above the
header are a title (``ASTM G173-03 Reference Spectra …`` above the column
names of pvlib's copy of that spectrum; an instrument's name and date): where
two or more text lines precede the first line of numbers and the last of them
has at least two cells and no number, that last line is the header and those
above it are title lines, kept with the comments and noted. A line of units
under a line of names (``Wavelength, Intensity`` over ``nm, counts``) joins
it: the header is ``Wavelength (nm), Intensity (counts)``. A spectrometer's
export without a header (lines of settings, ``Integration Time (sec): 0.1``,
then a marker such as ``>>>>>Begin Spectral Data<<<<<`` above the numbers) is
read the same way: where the last text line above the numbers is one cell
and the numbers are two or more, every text line above them is a title line;
one-cell text lines below the last row of numbers (an end marker) are kept
with the comments too. Row numbers in messages
are 1-based physical line numbers, as a spreadsheet shows them (the header
and comment lines count).
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field

import numpy as np

from workbench.errors import FileFormatError, UnitError, ValueRangeError
from workbench.physics.units import normalise_unit

__all__ = [
    "Table",
    "is_spreadsheet_error",
    "looks_numeric_cell",
    "numeric_column",
    "parse_delimited",
    "split_line",
]

_NUMBER = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")
# A leading number and whatever follows it; the rest is checked without a regex
# so that a long run of spaces cannot make the match backtrack quadratically.
_LEADING_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_DIGIT = re.compile(r"\d")
# Error values Excel and LibreOffice write into a cell whose formula failed.
_SPREADSHEET_ERROR = re.compile(
    r"#(?:N/A|DIV/0!|VALUE!|REF!|NAME\?|NUM!|NULL!|SPILL!|CALC!|FIELD!|BLOCKED!|"
    r"CONNECT!|BUSY!|UNKNOWN!|GETTING_DATA|ERR:\d+|NV)",
    re.IGNORECASE,
)
#: Longest cell accepted (characters); csv's own limit is 131,072.
MAX_CELL_CHARS = 100_000
_DECIMAL_COMMA = re.compile(r"^\s*[+-]?\d*,\d+(?:[eE][+-]?\d+)?\s*$")
_DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", "|": "pipe", " ": "whitespace"}


@dataclass
class Table:
    """Cells of a delimited text file.

    Attributes
    ----------
    name : str
        File name for messages.
    header : list of str or None
        Header cells, when the first data line is not numeric.
    header_line : int or None
        1-based line number of the header.
    rows : list of list of str
        Data cells, row by row (all rows have ``n_columns`` cells).
    line_numbers : list of int
        1-based physical line number of each data row.
    delimiter : str
        a tab, ``";"``, ``","`` or ``" "`` (runs of whitespace).
    decimal_comma : bool
        Whether ``,`` was read as the decimal separator.
    comments : list of str
        Comment lines (without their marker) and title lines, for medium and
        unit hints.
    title_lines : list of int
        Line numbers of the title lines above the header, or above the data
        when there is no header (module docstring).
    footer_lines : list of int
        Line numbers of one-cell text lines below the data (module docstring).
    text_columns : list of int
        Columns whose cell in the first data row is text (a label column).
    label_columns : list of int
        Text columns whose every cell in the first rows is text (names such as
        ``Ca II K``): never a number column, whatever the header says. A
        column with text in its first row only (a typo) is not one, so that
        the typo is refused, naming it.
    units_line : int or None
        Line number of a row of units joined to the header (module docstring).
    inner_comments : list of int
        Line numbers of comment lines found among the data rows (skipped).
    trailing_delimiter : bool
        Whether every row ended in a delimiter (the empty last cell was dropped).
    """

    name: str
    header: list[str] | None
    header_line: int | None
    rows: list[list[str]]
    line_numbers: list[int]
    delimiter: str
    decimal_comma: bool
    comments: list[str] = field(default_factory=list)
    inner_comments: list[int] = field(default_factory=list)
    trailing_delimiter: bool = False
    title_lines: list[int] = field(default_factory=list)
    footer_lines: list[int] = field(default_factory=list)
    label_columns: list[int] = field(default_factory=list)
    text_columns: list[int] = field(default_factory=list)
    units_line: int | None = None

    @property
    def n_columns(self) -> int:
        """Number of columns."""
        return len(self.header) if self.header is not None else len(self.rows[0])

    @property
    def delimiter_name(self) -> str:
        """Human name of the delimiter."""
        return _DELIMITER_NAMES[self.delimiter]


def split_line(line: str, delimiter: str) -> list[str]:
    """Split one line into cells (quotes honoured; runs of whitespace for ``" "``).

    Raises
    ------
    FileFormatError
        For a cell longer than :data:`MAX_CELL_CHARS` or broken quoting.
    """
    if delimiter == " ":
        cells = line.split()
    else:
        try:
            cells = next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
        except csv.Error as exc:
            if "field limit" in str(exc):
                raise _too_long() from None
            raise FileFormatError(
                f"the line cannot be split into cells ({exc})",
                "check the quoting: every opening quote needs its closing quote",
            ) from None
    if len(line) > MAX_CELL_CHARS and max(map(len, cells), default=0) > MAX_CELL_CHARS:
        raise _too_long()
    return cells


def _too_long() -> FileFormatError:
    return FileFormatError(
        f"a cell is longer than {MAX_CELL_CHARS:,} characters",
        "check the delimiter and quoting; a data cell holds one number",
    )


def _split_numbered(line: str, delimiter: str, name: str, number: int) -> list[str]:
    try:
        return split_line(line, delimiter)
    except FileFormatError as exc:
        raise FileFormatError(f"{name}: row {number}: {exc.problem}", exc.remedy) from None


def is_spreadsheet_error(stripped_line: str) -> str | None:
    """The spreadsheet error value (``#VALUE!``, ``#N/A``, ...) a line starts with, or None."""
    m = _SPREADSHEET_ERROR.match(stripped_line)
    return m.group(0) if m else None


def looks_numeric_cell(cell: str) -> bool:
    """Whether a stripped cell is a number, NaN/inf, or a number followed by a unit."""
    return _is_number(cell, False) or _split_unit(cell) is not None


def _split_unit(cell: str) -> tuple[float, str | None] | None:
    """``"656.3 nm"`` -> (656.3, "nm"); ``"656.3"`` -> (656.3, None); else None."""
    c = cell.strip()
    m = _LEADING_NUMBER.match(c)
    if m is None:
        return None
    rest = c[m.end() :].strip()
    if rest and (rest[0] in ".+-" or _DIGIT.search(rest)):
        return None
    return float(m.group(0)), rest or None


def _choose_delimiter(lines: list[str]) -> str:
    sample = lines[1:201] if len(lines) > 1 else lines
    for cand in ("\t", ";", ",", "|"):
        counts = {line.count(cand) for line in sample}
        if len(counts) == 1 and next(iter(counts)) > 0:
            return cand
    ws = {len(line.split()) for line in sample}
    if len(ws) == 1 and next(iter(ws)) >= 2:
        return " "
    # Nothing is consistent: take the most widespread so the ragged row is named.
    best, best_n = " ", 0
    for cand in ("\t", ";", ","):
        n = sum(1 for line in sample if cand in line)
        if n > best_n:
            best, best_n = cand, n
    return best


def _is_number(cell: str, decimal_comma: bool) -> bool:
    c = cell.strip()
    if decimal_comma:
        c = c.replace(",", ".")
    if _NUMBER.match(c):
        return True
    return c.lower() in ("nan", "inf", "-inf", "+inf", "infinity")


def parse_delimited(text: str, name: str) -> Table:
    """Split delimited text into header and data cells.

    Parameters
    ----------
    text : str
        Decoded text of the file or paste.
    name : str
        File name for messages.

    Returns
    -------
    Table
        Header (if any), data rows and what was detected.

    Raises
    ------
    FileFormatError
        If there are no data rows, only one column, or a row has a different
        number of cells than the header (the message names the row).
    """
    comments: list[str] = []
    comment_lines: list[int] = []
    lines: list[tuple[int, str]] = []
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped[0] in "#%":
            code = is_spreadsheet_error(stripped) if stripped[0] == "#" else None
            if code:
                raise FileFormatError(
                    f"{name}: row {number} starts with the spreadsheet error {code!r}",
                    "fix the formula in the spreadsheet, or delete the row, and export again",
                )
            comments.append(stripped.lstrip("#%").strip())
            comment_lines.append(number)
            continue
        lines.append((number, line.rstrip("\r\n")))
    if not lines:
        raise FileFormatError(f"{name} has no data rows", "give a header row and data rows")
    bodies = [line for _, line in lines]
    delimiter = _choose_delimiter(bodies)
    if delimiter != ";":
        keep = []
        for number, line in lines:
            if line.lstrip().startswith(";"):
                comments.append(line.lstrip().lstrip(";").strip())
                comment_lines.append(number)
            else:
                keep.append((number, line))
        lines = keep
        if not lines:
            raise FileFormatError(f"{name} has no data rows", "give a header row and data rows")
    cells = [
        (number, [c.strip() for c in _split_numbered(line, delimiter, name, number)])
        for number, line in lines
    ]
    # Spreadsheets often leave a trailing delimiter; drop an empty last cell everywhere.
    trailing = delimiter != " " and all(c and c[-1] == "" for _, c in cells)
    if trailing:
        cells = [(n, c[:-1]) for n, c in cells]
    decimal_comma = False
    if delimiter != ",":
        probe = [c for _, row in cells[1:200] for c in row]
        decimal_comma = any(_DECIMAL_COMMA.match(c) for c in probe)
    title_lines: list[int] = []
    units_line: int | None = None
    n_text = _leading_text_rows(cells, decimal_comma)
    h: int | None = None
    if n_text >= 2 and _units_under_names(
        cells[n_text - 2][1], cells[n_text - 1][1], decimal_comma
    ):
        h = n_text - 2  # names over a row of units: the header is the pair
        units_line = cells[n_text - 1][0]
    elif n_text >= 2 and _names_only(cells[n_text - 1][1], decimal_comma):
        h = n_text - 1
    elif _preamble_only(cells, n_text, delimiter):
        # A spectrometer's export: settings lines above the numbers, no header.
        h = n_text
    if h is not None:
        for number, row in cells[:h]:
            comments.append(" ".join(c for c in row if c))
            title_lines.append(number)
        cells = cells[h:]
    first_number, first = cells[0]
    header: list[str] | None = None
    header_line: int | None = None
    if not all(_is_number(c, decimal_comma) for c in first if c) and not _labelled_data(
        first, cells[1][1] if len(cells) > 1 else None, decimal_comma
    ):
        header, header_line = first, first_number
        cells = cells[1:]
        if units_line is not None:
            units = cells[0][1]
            header = [f"{n} ({u})" if u else n for n, u in zip(header, units, strict=True)]
            cells = cells[1:]
    if not cells:
        raise FileFormatError(
            f"{name} has a header (line {header_line}) but no data rows",
            "add the data rows below the header",
        )
    footer_lines: list[int] = []
    footer = _footer_rows(cells, delimiter, decimal_comma)
    if footer:
        # An end marker or closing note below the numbers (module docstring).
        for number, row in cells[-footer:]:
            comments.append(" ".join(c for c in row if c))
            footer_lines.append(number)
        cells = cells[:-footer]
    width = len(cells[0][1]) if header is None else len(header)
    if header is not None and delimiter == " " and cells and len(cells[0][1]) != width:
        raw_header = next(line for number, line in lines if number == header_line)
        header = _fit_whitespace_header(raw_header, len(cells[0][1])) or header
        width = len(header)
    if width < 2:
        raise FileFormatError(
            f"{name} has only one column (delimiter: {_DELIMITER_NAMES[delimiter]})",
            "give at least a position column and an intensity column, separated by tab, "
            "comma, semicolon or spaces",
        )
    for number, row in cells:
        if len(row) != width:
            raise FileFormatError(
                f"{name}: row {number} has {len(row)} cells but "
                f"{'the header has' if header is not None else 'the first row has'} {width}",
                f"make row {number} have {width} cells (check for a stray or missing "
                f"{_DELIMITER_NAMES[delimiter]} delimiter)",
            )
    rows = [row for _, row in cells]
    if decimal_comma:
        rows = [[c.replace(",", ".") for c in row] for row in rows]
    first_data = cells[0][0]
    text_columns = [j for j, c in enumerate(rows[0]) if c and not looks_numeric_cell(c)]
    return Table(
        name=name,
        header=header,
        header_line=header_line,
        rows=rows,
        line_numbers=[n for n, _ in cells],
        delimiter=delimiter,
        decimal_comma=decimal_comma,
        comments=comments,
        inner_comments=[n for n in comment_lines if n > first_data],
        trailing_delimiter=trailing,
        title_lines=title_lines,
        footer_lines=footer_lines,
        units_line=units_line,
        text_columns=text_columns,
        label_columns=[j for j in text_columns if _all_text(rows[:_LABEL_ROWS], j)],
    )


#: Rows looked at to call a text column a label column (Table.label_columns).
_LABEL_ROWS: int = 200


def _all_text(rows: list[list[str]], j: int) -> bool:
    """Whether column ``j`` holds text (or nothing) in every one of ``rows``."""
    return all(not looks_numeric_cell(r[j]) for r in rows if j < len(r) and r[j])


def _labelled_data(row: list[str], below: list[str] | None, decimal_comma: bool) -> bool:
    """Whether a row holding text is data: numbers where the next row has them, text likewise.

    A line list whose rows are ``3006.9314 ThII`` (a position and a label)
    has no header; a header's cells are names, none of them a number where
    the rows below hold numbers.
    """
    if below is None or len(row) != len(below):
        return False
    kinds = [_is_number(c, decimal_comma) for c in row]
    return any(kinds) and kinds == [_is_number(c, decimal_comma) for c in below]


def _units_under_names(names: list[str], units: list[str], decimal_comma: bool) -> bool:
    """Whether ``units`` is a row of units under a row of column ``names`` (same width).

    Instrument and plotting-program exports often write the names on one
    line and their units on the next (``Wavelength, Intensity`` over ``nm,
    counts``); the pair is one header, ``Wavelength (nm), Intensity (counts)``.
    At least one cell must be a unit the readers know.
    """
    if len(names) != len(units) or not _names_only(names, decimal_comma):
        return False
    known = 0
    for cell in units:
        if not cell:
            continue
        try:
            normalise_unit(cell.strip("()[]"))
        except UnitError:
            continue
        known += 1
    return known > 0


def _leading_text_rows(cells: list[tuple[int, list[str]]], decimal_comma: bool) -> int:
    """How many rows precede the first row of numbers only (all rows when none is)."""
    for i, (_, row) in enumerate(cells):
        if all(_is_number(c, decimal_comma) for c in row if c):
            return i
    return len(cells)


def _preamble_only(cells: list[tuple[int, list[str]]], n_text: int, delimiter: str) -> bool:
    """Whether the text rows above the numbers are a preamble with no header.

    True when the data rows have at least two cells and the last text row is
    one cell (no delimiter in it; not for whitespace-delimited text, where any
    words split): it cannot name the columns, so every text row above the
    numbers is a setting or a marker (``Integration Time (sec): 0.1``,
    ``>>>>>Begin Spectral Data<<<<<``), not a header.
    """
    if delimiter == " " or n_text < 1 or n_text >= len(cells):
        return False
    return len(cells[n_text - 1][1]) == 1 and len(cells[n_text][1]) >= 2


def _footer_rows(cells: list[tuple[int, list[str]]], delimiter: str, decimal_comma: bool) -> int:
    """How many one-cell text rows close the table below its last row of numbers.

    Only where the rows above them have at least two cells and no number in
    those rows (``>>>>>End Spectral Data<<<<<``); a row of the wrong width
    among the data is still refused, naming it.
    """
    if delimiter == " ":
        return 0
    n = 0
    for _, row in reversed(cells):
        if len(row) == 1 and not _is_number(row[0], decimal_comma):
            n += 1
        else:
            break
    if n == 0 or n >= len(cells) or len(cells[-n - 1][1]) < 2:
        return 0
    return n


def _names_only(row: list[str], decimal_comma: bool) -> bool:
    """Whether ``row`` can be a header: at least two cells, none of them a number."""
    names = [c for c in row if c]
    return len(names) >= 2 and not any(_is_number(c, decimal_comma) for c in names)


def _fit_whitespace_header(line: str, width: int) -> list[str] | None:
    parts = [p for p in re.split(r"\s{2,}|\t", line.strip()) if p]
    if len(parts) == width:
        return parts
    merged: list[str] = []
    for tok in line.split():
        if merged and (tok[0] in "([{/" or merged[-1].endswith("/")):
            merged[-1] = f"{merged[-1]} {tok}"
        else:
            merged.append(tok)
    return merged if len(merged) == width else None


def numeric_column(
    table: Table, index: int, label: str, *, allow_empty: bool
) -> tuple[np.ndarray, np.ndarray, str | None]:
    """Parse one column to floats.

    Parameters
    ----------
    table : Table
        The parsed table.
    index : int
        0-based column index.
    label : str
        Column name for messages.
    allow_empty : bool
        Whether missing values are allowed: empty cells and NaN, returned as
        NaN and flagged in the mask.

    Returns
    -------
    tuple of (numpy.ndarray, numpy.ndarray, str or None)
        Values, a boolean mask of empty cells, and the unit written in the
        cells (``"656.3 nm"``) when there is one.

    Raises
    ------
    ValueRangeError
        For an empty cell or NaN where no missing value is allowed, or infinity.
    FileFormatError
        For a cell that is not a number.
    UnitError
        When cells carry different units.
    """
    col = [row[index] for row in table.rows]
    empty = np.fromiter((c == "" for c in col), dtype=bool, count=len(col))
    unit: str | None = None
    try:
        values = np.array(["nan" if c == "" else c for c in col], dtype=np.float64)
    except ValueError:
        values, unit = _slow_parse(table, col, label)
    if empty.any() and not allow_empty:
        i = int(np.argmax(empty))
        raise ValueRangeError(
            f"{table.name}: row {table.line_numbers[i]}, column {label!r} is empty",
            "fill the cell or delete the row",
        )
    if allow_empty:
        empty = empty | np.isnan(values)  # "nan" written out: a missing value too
    bad = ~np.isfinite(values) & ~empty
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueRangeError(
            f"{table.name}: row {table.line_numbers[i]}, column {label!r} is "
            f"{col[i]!r} (not a finite number)",
            "remove the row or replace the value with a measured number",
        )
    return values, empty, unit


def _slow_parse(table: Table, col: list[str], label: str) -> tuple[np.ndarray, str | None]:
    out = np.empty(len(col), dtype=np.float64)
    unit: str | None = None
    unit_row = 0
    plain_row: int | None = None
    for i, cell in enumerate(col):
        if cell == "":
            out[i] = np.nan
            continue
        m = _split_unit(cell)
        if m is None:
            word = cell.strip().lower()
            if word in ("nan", "inf", "-inf", "+inf", "infinity"):
                out[i] = np.nan if word == "nan" else np.inf
                continue
            raise FileFormatError(
                f"{table.name}: row {table.line_numbers[i]}, column {label!r} holds "
                f"{cell[:40]!r}, which is not a number",
                "correct the cell (decimal point or decimal comma, no text)",
            )
        out[i], cell_unit = m
        if cell_unit is None:
            plain_row = plain_row or table.line_numbers[i]
        elif unit is None:
            unit, unit_row = cell_unit, table.line_numbers[i]
        elif cell_unit != unit:
            raise UnitError(
                f"{table.name}: column {label!r} mixes units: {unit!r} (row {unit_row}) "
                f"and {cell_unit!r} (row {table.line_numbers[i]})",
                "convert the column to one unit and state it in the header",
            )
    if unit is not None and plain_row is not None:
        raise UnitError(
            f"{table.name}: column {label!r} mixes units: row {plain_row} has no unit "
            f"while row {unit_row} says {unit!r}",
            "give every value the same unit, or state the unit once in the header",
        )
    return out, unit
