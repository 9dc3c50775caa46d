"""A minimal Office Open XML workbook written from rows (test inputs only).

ECMA-376 / ISO/IEC 29500 SpreadsheetML, the smallest parts a reader needs:
content types, package and workbook relationships, one workbook and one
worksheet per sheet; numbers as numeric cells, text as inline strings. Written
here so that the tests need no spreadsheet writer (structure from memory of
the standard; checked by reading it back with the product's reader).
"""

from __future__ import annotations

import io
import zipfile
from collections.abc import Sequence
from xml.sax.saxutils import escape

_DOC = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_SML = "application/vnd.openxmlformats-officedocument.spreadsheetml"
_CT = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
    '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
    '<Default Extension="rels" '
    'ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
    '<Default Extension="xml" ContentType="application/xml"/>'
    '<Override PartName="/xl/workbook.xml" '
    f'ContentType="{_SML}.sheet.main+xml"/>'
    "{sheets}</Types>"
)
_SHEET_CT = (
    '<Override PartName="/xl/worksheets/sheet{i}.xml" '
    'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
)
_RELS = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
    '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
    '<Relationship Id="rId1" '
    f'Type="{_DOC}/officeDocument" Target="xl/workbook.xml"/>'
    "</Relationships>"
)
_WB = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
    '<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
    'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">'
    "<sheets>{sheets}</sheets></workbook>"
)
_WB_RELS = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
    '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
    "{rels}</Relationships>"
)


def _col(j: int) -> str:
    name = ""
    j += 1
    while j:
        j, r = divmod(j - 1, 26)
        name = chr(65 + r) + name
    return name


def _sheet_xml(rows: Sequence[Sequence[object]]) -> str:
    out = []
    for i, row in enumerate(rows, start=1):
        cells = []
        for j, v in enumerate(row):
            ref = f"{_col(j)}{i}"
            if v is None or v == "":
                continue
            if isinstance(v, bool) or not isinstance(v, int | float):
                cells.append(f'<c r="{ref}" t="inlineStr"><is><t>{escape(str(v))}</t></is></c>')
            else:
                cells.append(f'<c r="{ref}"><v>{v!r}</v></c>')
        out.append(f'<row r="{i}">{"".join(cells)}</row>')
    return (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
        '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        f"<sheetData>{''.join(out)}</sheetData></worksheet>"
    )


def xlsx_bytes(sheets: dict[str, Sequence[Sequence[object]]]) -> bytes:
    """An .xlsx workbook holding ``sheets`` (name → rows of numbers and text)."""
    buf = io.BytesIO()
    names = list(sheets)
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr(
            "[Content_Types].xml",
            _CT.format(sheets="".join(_SHEET_CT.format(i=i + 1) for i in range(len(names)))),
        )
        z.writestr("_rels/.rels", _RELS)
        z.writestr(
            "xl/workbook.xml",
            _WB.format(
                sheets="".join(
                    f'<sheet name="{escape(n)}" sheetId="{i + 1}" r:id="rId{i + 1}"/>'
                    for i, n in enumerate(names)
                )
            ),
        )
        z.writestr(
            "xl/_rels/workbook.xml.rels",
            _WB_RELS.format(
                rels="".join(
                    f'<Relationship Id="rId{i + 1}" '
                    f'Type="{_DOC}/worksheet" '
                    f'Target="worksheets/sheet{i + 1}.xml"/>'
                    for i in range(len(names))
                )
            ),
        )
        for i, n in enumerate(names):
            z.writestr(f"xl/worksheets/sheet{i + 1}.xml", _sheet_xml(sheets[n]))
    return buf.getvalue()
