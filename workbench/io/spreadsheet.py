"""Spreadsheet workbooks: Excel (.xlsx, .xlsm, .xlsb, .xls) and OpenDocument (.ods).

Laboratories keep spectra and line tables in workbooks as often as in text
files. A workbook is read with ``fastexcel`` (the Rust calamine reader that
polars uses; imported only when a workbook is given) and each sheet is
turned into the rows of a tab-separated table, which
:func:`workbench.io.delimited.parse_delimited` then reads like any text
table: title lines above the header, a row of units under the names, a
header-less block of numbers, a column of names beside the numbers, with the
same notes and the same errors naming a row. Row numbers in messages count
from the sheet's first non-empty row (the reader's used range; blank rows
inside it count): they are the spreadsheet's own numbers unless rows above
the first filled cell are blank.

Which sheet: the first that holds at least three rows with two or more
numbers (an "Info" or "Settings" sheet before the data is passed over), or
the one asked for (``block=`` of the readers, ``--block`` of ``workbench
peaks``: a name or a 0-based index); the note names it and the others.
Numbers keep every digit the workbook stores (read as floats, written with
``repr``); text cells are kept as text, a date as its ISO form. A workbook
with no such sheet, a password-protected one or a damaged one is refused
with one error naming the fix.
"""

from __future__ import annotations

import io
import math
import zipfile
from typing import Any

from workbench.errors import FileFormatError
from workbench.io.delimited import Table, parse_delimited

__all__ = ["looks_like_spreadsheet", "table_from_spreadsheet"]

#: Compound-file (OLE2) signature of the binary Excel format (.xls).
_OLE2 = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
#: Rows with two or more numbers that make a sheet a table.
MIN_NUMBER_ROWS: int = 3


def looks_like_spreadsheet(data: bytes) -> bool:
    """Whether the bytes are an Excel or OpenDocument workbook (by their container)."""
    if data[:8] == _OLE2:
        return True
    if data[:4] != b"PK\x03\x04":
        return False
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as z:
            names = set(z.namelist())
            if "xl/workbook.xml" in names or "xl/workbook.bin" in names:
                return True
            if "mimetype" in names:
                kind = z.read("mimetype")[:100]
                return kind.startswith(b"application/vnd.oasis.opendocument.spreadsheet")
    except (zipfile.BadZipFile, OSError, ValueError):
        return False
    return False


def _sheet_index(sheet: int | str, names: list[str], name: str) -> int:
    """The index of the sheet asked for (by name first, then as a 0-based index)."""
    if isinstance(sheet, str) and sheet in names:
        return names.index(sheet)
    try:
        index = int(sheet)
    except (TypeError, ValueError):
        index = -1
    if not 0 <= index < len(names) and str(sheet) in names:
        return names.index(str(sheet))  # a sheet named "2024", given as a number
    if not 0 <= index < len(names):
        raise FileFormatError(
            f"{name} has no sheet {sheet!r} (sheets: {', '.join(repr(n) for n in names)})",
            "give a sheet's name or its 0-based index",
        )
    return index


def _unreadable(name: str, why: str) -> FileFormatError:
    return FileFormatError(
        f"{name} looks like a spreadsheet workbook but cannot be read ({why})",
        "open it in the spreadsheet program and save it again as .xlsx (without a "
        "password), or export the sheet as CSV",
    )


def _cell_text(value: Any) -> str:
    if value is None:
        return ""
    text = value.isoformat() if hasattr(value, "isoformat") else str(value)
    # Tabs and line breaks inside a cell would split it.
    return " ".join(text.split())


def _sheet_rows(reader: Any, index: int) -> tuple[list[list[str]], list[list[bool]]]:
    """One sheet as rows of cell texts, and which cells are numbers (from the float view)."""
    as_text = reader.load_sheet(index, header_row=None, dtypes="string").to_polars()
    as_float = reader.load_sheet(index, header_row=None, dtypes="float").to_polars()
    rows: list[list[str]] = []
    numeric: list[list[bool]] = []
    for t_row, f_row in zip(as_text.iter_rows(), as_float.iter_rows(), strict=True):
        is_num = [f is not None and math.isfinite(f) for f in f_row]
        rows.append(
            [
                repr(f) if num else _cell_text(t)
                for t, f, num in zip(t_row, f_row, is_num, strict=True)
            ]
        )
        numeric.append(is_num)
    return rows, numeric


def _lines(rows: list[list[str]], numeric: list[list[bool]]) -> list[str]:
    """Tab-separated lines: text rows without trailing blanks, number rows to the data's width."""
    width = max(
        (
            max(j for j, c in enumerate(r) if c) + 1
            for r, f in zip(rows, numeric, strict=True)
            if any(f)
        ),
        default=1,
    )
    out = []
    for r, f in zip(rows, numeric, strict=True):
        if any(f):
            cells = (r + [""] * width)[:width]
        else:
            cells = list(r)
            while cells and not cells[-1]:
                cells.pop()
        out.append("\t".join(cells))
    return out


def table_from_spreadsheet(
    data: bytes, name: str, sheet: int | str | None = None
) -> tuple[Table, str]:
    """The first sheet holding a table (module docstring), parsed, and a note naming it.

    ``sheet`` (a 0-based index, or a name: an index given as text, as on the
    command line, counts as an index unless a sheet has that name) reads
    that sheet instead, whatever it holds.

    Raises
    ------
    FileFormatError
        For a workbook that cannot be opened or holds no table.
    """
    try:
        import fastexcel
    except ImportError as exc:  # a broken installation
        raise FileFormatError(
            f"{name} is a spreadsheet, but the spreadsheet reader is not installed ({exc})",
            "reinstall the workbench (uv sync), or export the sheet as CSV",
        ) from None
    try:
        reader = fastexcel.read_excel(data)
        names = list(reader.sheet_names)
    except (fastexcel.FastExcelError, ValueError, OSError) as exc:
        raise _unreadable(name, str(exc).splitlines()[0][:200]) from None
    chosen = None if sheet is None else _sheet_index(sheet, names, name)
    for index in range(len(names)) if chosen is None else (chosen,):
        title = names[index]
        try:
            rows, numeric = _sheet_rows(reader, index)
        except (fastexcel.FastExcelError, ValueError, OSError) as exc:  # a damaged sheet
            raise _unreadable(name, f"sheet {title!r}: {str(exc).splitlines()[0][:200]}") from None
        if chosen is None and sum(1 for f in numeric if sum(f) >= 2) < MIN_NUMBER_ROWS:
            continue
        table = parse_delimited("\n".join(_lines(rows, numeric)) + "\n", name)
        others = [n for n in names if n != title]
        note = f"sheet {title!r}" + (
            f" (other sheets, not read: {', '.join(repr(n) for n in others)})" if others else ""
        )
        return table, note
    raise FileFormatError(
        f"{name} is a workbook with no sheet holding a table of numbers "
        f"(sheets: {', '.join(repr(n) for n in names) or 'none'})",
        f"put the positions and intensities in two columns of one sheet, at least "
        f"{MIN_NUMBER_ROWS} rows, or export the sheet as CSV",
    )
