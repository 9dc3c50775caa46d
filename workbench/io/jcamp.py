"""JCAMP-DX 4.24 / 5.01 reader (our own parser).

Follows the IUPAC JCAMP-DX specifications for infrared spectra (McDonald &
Wilks 1988, Appl. Spectrosc. 42, 151) and their revisions (Lampen et al.
1994, 1999). Supported:

* ``##XYDATA=(X++(Y..Y))`` in every ASDF form: AFFN (free format), PAC
  (numbers separated by their signs), SQZ (``@A-I a-i`` replace the first
  digit and sign), DIF (``%J-R j-r``: differences from the previous value)
  and DUP (``S-Z s``: repeat count of the previous item). A line that ends
  in DIF form is followed by a *Y-check* value: the first ordinate of the
  next line repeats the last one; it is compared and dropped. Each line's
  X is checked against ``##FIRSTX``/``##LASTX``/``##NPOINTS``, the point count
  against ``##NPOINTS`` and ``##DELTAX``/``##FIRSTY`` when present.
* ``##XYPOINTS=(XY..XY)`` and ``##PEAK TABLE=(XY..XY)`` (also ``(XYW..XYW)``).
* ``##XFACTOR``/``##YFACTOR`` (values on the lines are multiplied by them).
* Several blocks (``##BLOCKS`` in a ``LINK`` block): every data block is returned.

An ``E`` or ``e`` is read as an exponent only when a sign follows
(``1.5E+03``); otherwise it is the SQZ digit 5/−5, as the specification's
compressed forms require.
"""

from __future__ import annotations

import math
import re
from array import array
from dataclasses import dataclass, field
from itertools import repeat

import numpy as np

from workbench.errors import FileFormatError, UnitError

__all__ = [
    "MIN_POINT_LIMIT",
    "POINTS_PER_CHAR",
    "JcampBlock",
    "jcamp_unit",
    "looks_like_jcamp",
    "max_points",
    "parse_jcamp",
]

#: Points allowed per character of the file (see :func:`max_points`).
POINTS_PER_CHAR: int = 16
#: Points always allowed, however small the file.
MIN_POINT_LIMIT: int = 1_000_000

_LDR = re.compile(r"^\s*##([^=]*)=(.*)$")
_TOKEN = re.compile(
    r"(?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]\d+)?)"
    r"|(?P<sqz>[@A-Ia-i])(?P<sqzd>\d*\.?\d*)"
    r"|(?P<dif>[%J-Rj-r])(?P<difd>\d*\.?\d*)"
    r"|(?P<dup>[S-Zs])(?P<dupd>\d*)"
    r"|(?P<miss>\?)"
    r"|(?P<sep>[\s,;]+)"
)
_SQZ = {"@": 0, **{c: i + 1 for i, c in enumerate("ABCDEFGHI")}}
_SQZ.update({c: -(i + 1) for i, c in enumerate("abcdefghi")})
_DIF = {"%": 0, **{c: i + 1 for i, c in enumerate("JKLMNOPQR")}}
_DIF.update({c: -(i + 1) for i, c in enumerate("jklmnopqr")})
_DUP = {c: i + 1 for i, c in enumerate("STUVWXYZs")}
_POINT_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|\?")

_XUNITS = {
    "NANOMETERS": "nm",
    "NANOMETRES": "nm",
    "NM": "nm",
    "MICROMETERS": "um",
    "MICROMETRES": "um",
    "MICRONS": "um",
    "UM": "um",
    "ANGSTROMS": "angstrom",
    "ANGSTROM": "angstrom",
    "A": "angstrom",
    "1/CM": "cm-1",
    "CM-1": "cm-1",
    "CM^-1": "cm-1",
    "EV": "eV",
    "KEV": "keV",
}


@dataclass(frozen=True)
class JcampBlock:
    """One data block of a JCAMP-DX file, decoded.

    Attributes
    ----------
    index : int
        0-based position among the file's data blocks.
    title : str
        The block's ``##TITLE``.
    kind : {"xydata", "xypoints", "peaktable"}
        Which data record the block holds.
    x, y : numpy.ndarray
        Abscissae and ordinates in the file's units, factors applied.
    xunits, yunits : str
        ``##XUNITS`` and ``##YUNITS`` as written (may be empty).
    labels : dict
        Every labelled record of the block (normalised label → value text).
    line : int
        1-based line number of the block's ``##TITLE``.
    point_lines : numpy.ndarray
        1-based line number on which each point was written.
    width : numpy.ndarray or None
        Peak widths of a ``(XYW..XYW)`` peak table, factor-free.
    comments : tuple of str
        ``$$`` comments inside the block.
    """

    index: int
    title: str
    kind: str
    x: np.ndarray
    y: np.ndarray
    xunits: str
    yunits: str
    labels: dict[str, str]
    line: int
    point_lines: np.ndarray
    width: np.ndarray | None = None
    comments: tuple[str, ...] = field(default=())


def _norm_label(label: str) -> str:
    return re.sub(r"[\s\-/_]", "", label).upper()


def looks_like_jcamp(text: str) -> bool:
    """Whether text is JCAMP-DX: its first labelled record is ``##TITLE=``."""
    for line in text.lstrip("\ufeff").splitlines()[:50]:
        s = line.strip()
        if not s or s.startswith("$$"):
            continue
        m = _LDR.match(s)
        return bool(m and _norm_label(m.group(1)) == "TITLE")
    return False


def jcamp_unit(xunits: str, where: str) -> str:
    """Map a ``##XUNITS`` value to a unit name of :mod:`workbench.physics.units`.

    Raises
    ------
    UnitError
        If the unit is not a wavelength, wavenumber or photon-energy unit.
    """
    key = xunits.strip().upper().replace(" ", "")
    if key in _XUNITS:
        return _XUNITS[key]
    raise UnitError(
        f"{where}: ##XUNITS={xunits.strip() or '(missing)'} is not a wavelength, "
        "wavenumber or energy unit",
        "pass the unit explicitly (--unit nm, angstrom, um, cm-1, eV or keV)",
    )


def _float_label(labels: dict[str, str], key: str, where: str, default: float | None = None):
    text = labels.get(key)
    if text is None or not text.strip():
        if default is None:
            raise FileFormatError(
                f"{where}: required ##{key}= is missing", "add it or re-export the file"
            )
        return default
    try:
        value = float(text.strip().split()[0])
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise FileFormatError(
            f"{where}: ##{key}={text.strip()[:40]!r} is not a finite number", "correct the value"
        )
    return value


def max_points(text_length: int) -> int:
    """Most points a JCAMP-DX text of this length may declare or decode to.

    Compressed (DIF/DUP) data hold a few points per character; allowing
    :data:`POINTS_PER_CHAR` per character (at least :data:`MIN_POINT_LIMIT`)
    bounds the memory a small hostile file can claim.
    """
    return max(MIN_POINT_LIMIT, POINTS_PER_CHAR * text_length)


def _npoints(labels: dict[str, str], where: str, limit: int) -> int:
    value = _float_label(labels, "NPOINTS", where)
    if value != int(value) or value < 0:
        raise FileFormatError(
            f"{where}: ##NPOINTS={labels['NPOINTS'].strip()[:40]!r} is not a whole number",
            "correct ##NPOINTS to the number of points",
        )
    if value > limit:
        raise FileFormatError(
            f"{where}: ##NPOINTS={int(value):,} is more than a file of this size can hold "
            f"(limit {limit:,})",
            "correct ##NPOINTS, or re-export the spectrum without compression",
        )
    return int(value)


def _tokens(line: str, number: int, where: str) -> list[tuple[str, float]]:
    out: list[tuple[str, float]] = []
    pos = 0
    for m in _TOKEN.finditer(line):
        if m.start() != pos:
            break
        pos = m.end()
        kind = m.lastgroup
        if kind == "num":
            out.append(("abs", float(m.group("num"))))
        elif kind in ("sqz", "sqzd"):
            d = _SQZ[m.group("sqz")]
            mag = float(f"{abs(d)}{m.group('sqzd')}")
            out.append(("abs", -mag if d < 0 else mag))
        elif kind in ("dif", "difd"):
            d = _DIF[m.group("dif")]
            mag = float(f"{abs(d)}{m.group('difd')}")
            out.append(("dif", -mag if d < 0 else mag))
        elif kind in ("dup", "dupd"):
            out.append(("dup", float(f"{_DUP[m.group('dup')]}{m.group('dupd')}")))
        elif kind == "miss":
            out.append(("abs", np.nan))
    if pos != len(line):
        raise FileFormatError(
            f"{where}: line {number}, column {pos + 1}: unexpected character {line[pos]!r} "
            "in compressed data",
            "the data line is corrupted; re-export the file",
        )
    return out


def _decode_xydata(
    data_lines: list[tuple[int, str]], labels: dict[str, str], where: str, limit: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    firstx = _float_label(labels, "FIRSTX", where)
    lastx = _float_label(labels, "LASTX", where)
    npoints = _npoints(labels, where, limit)
    xfactor = _float_label(labels, "XFACTOR", where, 1.0)
    yfactor = _float_label(labels, "YFACTOR", where, 1.0)
    if npoints < 2:
        raise FileFormatError(f"{where}: ##NPOINTS={npoints} is too few", "give >= 2 points")
    deltax = (lastx - firstx) / (npoints - 1)
    if "DELTAX" in labels:
        stated = _float_label(labels, "DELTAX", where)
        if not np.isclose(stated, deltax, rtol=1e-3, atol=0.0):
            raise FileFormatError(
                f"{where}: ##DELTAX={stated:g} disagrees with (LASTX-FIRSTX)/(NPOINTS-1) "
                f"= {deltax:g}",
                "correct ##FIRSTX, ##LASTX, ##NPOINTS or ##DELTAX",
            )
    x_tol = max(abs(deltax), abs(xfactor)) * (1 + 1e-9)
    # Compact arrays (8 bytes a value) instead of lists of float objects (32).
    ys = array("d")
    lines_of = array("q")
    last: float | None = None
    ended_in_dif = False
    prev_number = 0
    for number, text in data_lines:
        toks = _tokens(text.strip(), number, where)
        if not toks:
            continue
        if toks[0][0] != "abs":
            raise FileFormatError(
                f"{where}: line {number} does not start with an X value",
                "the data line is corrupted; re-export the file",
            )
        x_line = toks[0][1] * xfactor
        line_ys: list[float] = []
        mode, delta = "abs", 0.0
        cur = last
        for kind, val in toks[1:]:
            if kind == "abs":
                cur, mode = val, "abs"
                line_ys.append(cur)
            elif kind == "dif":
                if cur is None:
                    raise FileFormatError(
                        f"{where}: line {number}: a DIF value has no value before it",
                        "the data are corrupted; re-export the file",
                    )
                cur, mode, delta = cur + val, "dif", val
                line_ys.append(cur)
            else:  # DUP
                if cur is None or not line_ys:
                    raise FileFormatError(
                        f"{where}: line {number}: a DUP count has nothing to repeat",
                        "the data are corrupted; re-export the file",
                    )
                # Refuse before expanding: a DUP count can claim any number of points.
                if len(ys) + len(line_ys) + val - 1 > npoints + 1:
                    raise FileFormatError(
                        f"{where}: line {number}: a DUP count of {val:.0f} makes more points "
                        f"than ##NPOINTS={npoints}",
                        "the compressed data are corrupted; re-export the file",
                    )
                for _ in range(int(val) - 1):
                    if mode == "dif":
                        cur = cur + delta
                    line_ys.append(cur)
        start_index = len(ys)
        if ended_in_dif and toks[1:] and toks[1][0] == "abs":
            check = line_ys.pop(0)
            if last is None or not np.isclose(check, last, rtol=1e-12, atol=1e-9):
                raise FileFormatError(
                    f"{where}: line {number}: Y-check value {check:g} does not equal the "
                    f"last value {last:g} of line {prev_number}",
                    "the compressed (DIF) data are corrupted or a line is missing; "
                    "re-export the file",
                )
            start_index -= 1
        expected = firstx + start_index * deltax
        if abs(x_line - expected) > x_tol:
            raise FileFormatError(
                f"{where}: line {number}: X = {x_line:g} but point {start_index + 1} should "
                f"be at {expected:g} (from FIRSTX, LASTX, NPOINTS)",
                "a data line is missing or ##FIRSTX/##LASTX/##NPOINTS are wrong; "
                "re-export the file",
            )
        ys.extend(line_ys)
        lines_of.extend(repeat(number, len(line_ys)))
        if line_ys or toks[1:]:
            ended_in_dif = mode == "dif"
        last = cur
        prev_number = number
    if len(ys) != npoints:
        raise FileFormatError(
            f"{where}: decoded {len(ys)} points but ##NPOINTS={npoints}",
            "the file is truncated or its header is wrong; re-export the file",
        )
    # Factors may overflow a value to infinity: the readers refuse it, naming the point.
    with np.errstate(over="ignore", invalid="ignore"):
        y = np.frombuffer(ys, dtype=np.float64) * yfactor
        x = firstx + np.arange(npoints, dtype=np.float64) * deltax
    if "FIRSTY" in labels and np.isfinite(y[0]):
        firsty = _float_label(labels, "FIRSTY", where)
        if abs(y[0] - firsty) > max(abs(yfactor), 1e-3 * abs(firsty)):
            raise FileFormatError(
                f"{where}: first ordinate {y[0]:g} disagrees with ##FIRSTY={firsty:g}",
                "check ##YFACTOR and ##FIRSTY; re-export the file",
            )
    return x, y, np.frombuffer(lines_of, dtype=np.int64).copy()


def _decode_points(
    data_lines: list[tuple[int, str]],
    nvars: int,
    labels: dict[str, str],
    where: str,
    what: str,
    limit: int,
) -> tuple[np.ndarray, np.ndarray]:
    values: list[float] = []
    lines_of: list[int] = []
    for number, text in data_lines:
        s = text.strip()
        if not s:
            continue
        found = _POINT_NUMBER.findall(s)
        rest = _POINT_NUMBER.sub("", s)
        if rest.strip(" ,;\t"):
            raise FileFormatError(
                f"{where}: line {number} of {what} holds {s[:60]!r}, which is not numbers",
                "the table is corrupted; re-export the file",
            )
        values.extend(np.nan if v == "?" else float(v) for v in found)
        lines_of.extend([number] * len(found))
    if len(values) % nvars:
        raise FileFormatError(
            f"{where}: {what} has {len(values)} numbers, not a multiple of {nvars}",
            f"give {nvars} numbers per point",
        )
    arr = np.asarray(values, dtype=np.float64).reshape(-1, nvars)
    if "NPOINTS" in labels:
        n = _npoints(labels, where, max(limit, arr.shape[0]))
        if n != arr.shape[0]:
            raise FileFormatError(
                f"{where}: {what} has {arr.shape[0]} points but ##NPOINTS={n}",
                "the file is truncated or its header is wrong; re-export the file",
            )
    return arr, np.asarray(lines_of[::nvars], dtype=np.int64)


def parse_jcamp(text: str, name: str) -> list[JcampBlock]:
    """Parse every data block of a JCAMP-DX file.

    Parameters
    ----------
    text : str
        Decoded file text.
    name : str
        File name for messages.

    Returns
    -------
    list of JcampBlock
        Data blocks in file order (LINK blocks without data are skipped).

    Raises
    ------
    FileFormatError
        For malformed structure (no ``##END=``, unknown data form) or data
        that fail their checks; the message names the line.
    """
    stack: list[dict] = []
    done: list[JcampBlock] = []
    current_table: tuple[str, str, int] | None = None
    table_lines: list[tuple[int, str]] = []

    def finish_table() -> None:
        nonlocal current_table, table_lines
        if current_table is not None and stack:
            stack[-1]["tables"].append((*current_table, table_lines))
        current_table, table_lines = None, []

    for number, raw in enumerate(text.lstrip("\ufeff").splitlines(), start=1):
        line = raw
        comment = ""
        if "$$" in line:
            line, _, comment = line.partition("$$")
            if stack and comment.strip():
                stack[-1]["comments"].append(comment.strip())
        m = _LDR.match(line)
        if m is None:
            if current_table is not None:
                table_lines.append((number, line))
            elif stack and stack[-1]["last_label"] and line.strip():
                key = stack[-1]["last_label"]
                stack[-1]["labels"][key] += " " + line.strip()
            continue
        finish_table()
        label, value = _norm_label(m.group(1)), m.group(2).strip()
        if label == "TITLE":
            stack.append(
                {
                    "title": value,
                    "labels": {},
                    "tables": [],
                    "line": number,
                    "comments": [],
                    "last_label": None,
                }
            )
            continue
        if not stack:
            raise FileFormatError(
                f"{name}: line {number}: ##{m.group(1).strip()}= comes before any ##TITLE=",
                "a JCAMP-DX block starts with ##TITLE=; re-export the file",
            )
        if label == "END":
            block = stack.pop()
            if block["tables"]:
                done.append(_build_block(block, len(done), name, max_points(len(text))))
            continue
        if label in ("XYDATA", "XYPOINTS", "PEAKTABLE"):
            current_table = (label, value, number)
            stack[-1]["last_label"] = None
            continue
        if label in ("NTUPLES", "PEAKASSIGNMENTS", "DATATABLE"):
            if label == "PEAKASSIGNMENTS":
                stack[-1]["last_label"] = None
                current_table = None
                continue
            raise FileFormatError(
                f"{name}: line {number}: ##{m.group(1).strip()}= (n-tuple data) is not supported",
                "export the spectrum as ##XYDATA=(X++(Y..Y)) or ##XYPOINTS=(XY..XY)",
            )
        stack[-1]["labels"][label] = value
        stack[-1]["last_label"] = label
    finish_table()
    if stack:
        block = stack[-1]
        raise FileFormatError(
            f"{name}: block {block['title']!r} (line {block['line']}) has no ##END= "
            "(file truncated?)",
            "re-export or re-copy the complete file",
        )
    if not done:
        raise FileFormatError(
            f"{name}: no ##XYDATA, ##XYPOINTS or ##PEAK TABLE found",
            "give a JCAMP-DX file that contains spectrum or peak data",
        )
    return done


def _build_block(block: dict, index: int, name: str, limit: int) -> JcampBlock:
    where = f"{name} block {index + 1} ({block['title']!r})"
    labels = block["labels"]
    label, varlist, line, lines = block["tables"][0]
    form = varlist.replace(" ", "").upper()
    xfactor = _float_label(labels, "XFACTOR", where, 1.0)
    yfactor = _float_label(labels, "YFACTOR", where, 1.0)
    width = None
    if label == "XYDATA":
        if form not in ("(X++(Y..Y))", "(X++(R..R))"):
            raise FileFormatError(
                f"{where}: line {line}: ##XYDATA={varlist} is not supported",
                "export as ##XYDATA=(X++(Y..Y))",
            )
        x, y, point_lines = _decode_xydata(lines, labels, where, limit)
        kind = "xydata"
    else:
        forms = {"(XY..XY)": 2, "(XYW..XYW)": 3, "(XYM..XYM)": 3}
        if form not in forms:
            raise FileFormatError(
                f"{where}: line {line}: ##{label}={varlist} is not supported",
                "use (XY..XY) or (XYW..XYW)",
            )
        arr, point_lines = _decode_points(lines, forms[form], labels, where, f"##{label}", limit)
        with np.errstate(over="ignore", invalid="ignore"):
            x, y = arr[:, 0] * xfactor, arr[:, 1] * yfactor
            if form == "(XYW..XYW)":
                width = arr[:, 2] * xfactor
        kind = "xypoints" if label == "XYPOINTS" else "peaktable"
    return JcampBlock(
        index=index,
        title=block["title"],
        kind=kind,
        x=x,
        y=y,
        xunits=labels.get("XUNITS", ""),
        yunits=labels.get("YUNITS", ""),
        labels=dict(labels),
        line=block["line"],
        point_lines=point_lines,
        width=width,
        comments=tuple(block["comments"]),
    )
