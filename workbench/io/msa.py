"""EMSA/MAS spectral data files (ISO 22029): the open exchange format of EDS and XRF spectra.

SEM-EDS systems (gunshot-residue casework) and many XRF instruments export
this text format: a header of ``#KEYWORD : value`` lines, the data between
``#SPECTRUM`` and ``#ENDOFDATA``. Keywords read (the rest are kept out of the
way): ``#FORMAT`` (must name EMSA/MAS), ``#NPOINTS``, ``#NCOLUMNS``,
``#XUNITS``, ``#YUNITS``, ``#DATATYPE`` (``Y``: values only, positions
``OFFSET + i · XPERCHAN``; ``XY``: position, value pairs), ``#XPERCHAN``,
``#OFFSET`` (from memory of the standard's keyword list; the unit names
read are those of :mod:`workbench.io.resolve`). Data values may be separated
by commas, spaces or both, several to a line.

The result is :class:`~workbench.io.columnset.Columns` of position and
counts, so that the unit, value and axis checks of every table apply. A
count that disagrees with ``#NPOINTS``, a ``Y`` file without ``#XPERCHAN``, a
value that is not a number: one clear error each, naming the line.
"""

from __future__ import annotations

import re

import numpy as np

from workbench.errors import FileFormatError
from workbench.io.columnset import Columns, array_columns

__all__ = ["columns_from_msa", "looks_like_msa"]

_KEYWORD = re.compile(r"^#\s*([A-Za-z0-9_\-]+)\s*(?:-[A-Za-z]+)?\s*:\s*(.*?)\s*$")


def looks_like_msa(head: str) -> bool:
    """Whether a text's first line is ``#FORMAT : EMSA/MAS …``."""
    first = head.lstrip("\ufeff").lstrip().split("\n", 1)[0].upper()
    return first.startswith("#FORMAT") and "EMSA" in first


def _fail(name: str, problem: str) -> FileFormatError:
    return FileFormatError(
        f"{name}: {problem}",
        "export the spectrum again as EMSA/MAS (ISO 22029), or as a two-column CSV table",
    )


def columns_from_msa(text: str, name: str) -> Columns:
    """Columns (position, counts) of an EMSA/MAS file (module docstring).

    Raises
    ------
    FileFormatError
        For a header or data block that the standard does not allow.
    """
    keys: dict[str, str] = {}
    values: list[float] = []
    value_lines: list[int] = []
    in_data = False
    for number, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            m = _KEYWORD.match(s)
            word = m.group(1).upper() if m else s[1:].strip().upper()
            if word == "SPECTRUM":
                in_data = True
            elif word == "ENDOFDATA":
                break
            elif m and not in_data:
                keys[word] = m.group(2)
            continue
        if not in_data:
            raise _fail(name, f"line {number} holds data before #SPECTRUM")
        for cell in re.split(r"[,\s]+", s):
            if not cell:
                continue
            try:
                values.append(float(cell))
            except ValueError:
                raise _fail(name, f"line {number}: {cell[:20]!r} is not a number") from None
            value_lines.append(number)
    if not in_data:
        raise _fail(name, "no #SPECTRUM line (the data block) was found")
    datatype = keys.get("DATATYPE", "Y").strip().upper()
    if datatype not in ("Y", "XY"):
        raise _fail(name, f"#DATATYPE {datatype!r} is neither Y nor XY")
    arr = np.asarray(values, dtype=np.float64)
    lines = np.asarray(value_lines, dtype=np.int64)
    if datatype == "XY":
        if arr.size % 2:
            raise _fail(name, f"an XY data block holds an odd number of values ({arr.size})")
        x, y, lines = arr[0::2], arr[1::2], lines[1::2]
    else:
        y = arr
        try:
            step = float(keys["XPERCHAN"])
            offset = float(keys.get("OFFSET", "0"))
        except KeyError:
            raise _fail(name, "a Y data block needs #XPERCHAN (the channel width)") from None
        except ValueError:
            raise _fail(name, "#XPERCHAN or #OFFSET is not a number") from None
        with np.errstate(over="ignore", invalid="ignore"):
            # Absurd keywords give inf/NaN positions, refused by the spectrum checks.
            x = offset + step * np.arange(y.size, dtype=np.float64)
    n_stated = keys.get("NPOINTS")
    if n_stated is not None:
        try:
            n_expected = int(float(n_stated))
        except (ValueError, OverflowError):
            raise _fail(name, f"#NPOINTS {n_stated!r} is not a number") from None
        if n_expected != y.size:
            raise _fail(name, f"#NPOINTS says {n_expected} points, the data block holds {y.size}")
    xunits = keys.get("XUNITS", "").strip()
    yunits = keys.get("YUNITS", "").strip()
    headers = [
        f"energy ({xunits})" if xunits else "energy",
        f"counts ({yunits})" if yunits and yunits.lower() != "counts" else "counts",
    ]
    note = f"EMSA/MAS (ISO 22029) {datatype} spectrum of {y.size:,} points" + (
        f", positions from #OFFSET + i·#XPERCHAN ({keys.get('XPERCHAN')})"
        if datatype == "Y"
        else ""
    )
    return array_columns(
        name,
        headers,
        [x, y],
        lambda i: f"line {lines[i]}" if i < lines.size else f"point {i + 1}",
        fmt="emsa-mas",
        note=note,
        sampled="EMSA/MAS spectrum",
    )
