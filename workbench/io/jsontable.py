"""JSON tables: equal-length number arrays or records, read as columns.

Scripts and web services often hand a spectrum or a peak list on as JSON.
Three layouts are read, each becoming :class:`~workbench.io.columnset.Columns`
so that the same column, unit, medium and value checks apply as for a
delimited table:

* an object of arrays, ``{"wavelength (nm)": [...], "counts": [...]}``: the
  longest arrays of numbers that share their length (at least two arrays of
  at least two values; ``null`` is a missing value); an object whose only
  member is such an object (``{"spectrum": {...}}``) is opened once;
* a list of records, ``[{"wavelength_nm": 393.37, "intensity": 10}, ...]``:
  the keys of the first record whose values are numbers;
* a list of rows, ``[[393.37, 10], ...]``: columns without a header;
* an arc-lamp spectrum with its wavelength solution, as the pypeit pipeline
  archives them (``spec``, ``fitc``, ``function``, ``xnorm``, ``fmin``,
  ``fmax``; :func:`_arc_solution`).

Anything else (a pipeline's own archive, a configuration file) is one clear
error naming the layouts read.
"""

from __future__ import annotations

import json
from collections import Counter
from typing import Any

import numpy as np

from workbench.errors import FileFormatError
from workbench.io.columnset import Columns, array_columns

__all__ = ["columns_from_json", "looks_like_json"]


def looks_like_json(data: bytes) -> bool:
    """Whether the bytes open (after white space and a BOM) with ``{`` or ``[``."""
    head = data[:64].removeprefix(b"\xef\xbb\xbf").lstrip()
    return head[:1] in (b"{", b"[")


def _no_table(name: str, why: str) -> FileFormatError:
    return FileFormatError(
        f"{name} is JSON but holds no table ({why})",
        'give an object of equal-length number arrays ({"wavelength (nm)": [...], '
        '"counts": [...]}), a list of records or a list of rows, or export a CSV table',
    )


def _numbers(values: Any) -> np.ndarray | None:
    """A list of numbers (``null`` → NaN) as float64, or None when it is not one."""
    if not isinstance(values, list) or len(values) < 2:
        return None
    if not all(
        v is None or (isinstance(v, int | float) and not isinstance(v, bool)) for v in values
    ):
        return None
    return np.array([np.nan if v is None else _float(v) for v in values], dtype=np.float64)


def _float(v: float) -> float:
    """``float(v)``; an integer beyond the float range becomes ±inf (refused later, named)."""
    try:
        return float(v)
    except OverflowError:
        return float("inf") if v > 0 else float("-inf")


def columns_from_json(data: bytes, name: str) -> Columns | None:
    """Columns of a JSON table (module docstring); None when the text is not JSON.

    Text that opens with ``[`` or ``{`` but does not parse as JSON is left to
    the delimited-text reader (a header cell may be ``[nm]``).

    Raises
    ------
    FileFormatError
        For JSON in none of the layouts read.
    """
    try:
        doc = json.loads(data.decode("utf-8-sig"))
    except (UnicodeDecodeError, json.JSONDecodeError, RecursionError):
        return None
    note = ""
    if isinstance(doc, dict) and _RESULT_KEYS <= doc.keys():
        # The workbench's own result record: point to the input it was made from.
        given = doc.get("input") if isinstance(doc.get("input"), dict) else {}
        source = str(given.get("name") or "its input file")
        digest = str(given.get("sha256") or "")[:16]
        raise FileFormatError(
            f"{name} is a workbench match result (schema {doc.get('schema_version')}), not a "
            f"spectrum or peak list; it was made from {source}"
            + (f" (SHA-256 {digest}…)" if digest else ""),
            f"match {source} itself; a stored analysis reopens in the app's 'Re-open a saved "
            "analysis'",
        )
    if isinstance(doc, dict) and len(doc) == 1 and isinstance(next(iter(doc.values())), dict):
        key = next(iter(doc))
        doc = doc[key]
        note = f"the table of member {key!r}; "
    if isinstance(doc, dict) and _ARC_KEYS <= doc.keys():
        return _arc_solution(doc, name, note)
    if isinstance(doc, dict):
        arrays = {str(k): a for k, v in doc.items() if (a := _numbers(v)) is not None}
        if not arrays:
            raise _no_table(name, "no member is an array of numbers")
        shared = [n for n, c in Counter(a.size for a in arrays.values()).items() if c >= 2]
        if not shared:
            raise _no_table(name, "no two number arrays have the same length")
        length = max(shared)  # a spectrum's arrays are the longest ones
        headers = [k for k, a in arrays.items() if a.size == length]
        values = [arrays[k] for k in headers]
        skipped = [k for k in doc if str(k) not in headers]
        note += f"arrays {', '.join(headers)} of {length:,} values"
        if skipped:
            note += f"; members not read: {', '.join(map(str, skipped[:10]))}"
        return _columns(name, headers, values, note, "value")
    if isinstance(doc, list) and doc and all(isinstance(r, dict) for r in doc):
        keys = [str(k) for k, v in doc[0].items() if isinstance(v, int | float | None)]
        cols = [_numbers([r.get(k) for r in doc] if len(doc) >= 2 else []) for k in keys]
        pairs = [(k, c) for k, c in zip(keys, cols, strict=True) if c is not None]
        if len(pairs) < 2:
            raise _no_table(name, "the records have fewer than two number fields")
        note = f"{len(doc):,} records, fields {', '.join(k for k, _ in pairs)}"
        return _columns(name, [k for k, _ in pairs], [c for _, c in pairs], note, "record")
    if isinstance(doc, list) and doc and all(isinstance(r, list) for r in doc):
        widths = {len(r) for r in doc}
        if len(widths) != 1 or widths.pop() < 2:
            raise _no_table(name, "the rows have different lengths or fewer than two values")
        cols = [_numbers([r[j] for r in doc]) for j in range(len(doc[0]))]
        if any(c is None for c in cols):
            raise _no_table(name, "a row holds something other than numbers")
        note = f"{len(doc):,} rows of {len(cols)} numbers, no header"
        return _columns(name, None, cols, note, "row")  # type: ignore[arg-type]
    raise _no_table(name, "neither an object of arrays nor a list of records or rows")


#: Members that mark the workbench's own result record (docs/result-schema.md).
_RESULT_KEYS = {"schema_version", "software_version", "elements", "input", "lines"}

#: Members of an archived arc-lamp wavelength solution (pypeit's ``*_PYPIT.json``).
_ARC_KEYS = {"spec", "fitc", "function", "xnorm", "fmin", "fmax"}
_ARC_FUNCS = {
    "legendre": np.polynomial.legendre.legval,
    "chebyshev": np.polynomial.chebyshev.chebval,
    "polynomial": np.polynomial.polynomial.polyval,
}


def _arc_solution(doc: dict[str, Any], name: str, note: str) -> Columns:
    """An arc spectrum with its wavelength solution, as pypeit archives them.

    ``spec`` holds counts per pixel; the wavelength of pixel p is
    ``function(u, fitc)`` with x = p / (xnorm − 1) and u = 2 (x − fmin) /
    (fmax − fmin) − 1, in vacuum Å (pypeit's conventions, checked on the
    pypeit 2.0.1 arcs of ``tests/data/realspectra/pypeit`` against each
    file's identified lines ``xfit``/``yfit``).
    """
    func = str(doc.get("function", "")).lower()
    counts = _numbers(doc.get("spec"))
    coef = _numbers(doc.get("fitc"))
    if func not in _ARC_FUNCS or counts is None or coef is None:
        raise _no_table(
            name,
            "an arc solution needs a 'spec' array, 'fitc' coefficients and "
            f"a function among {', '.join(_ARC_FUNCS)}",
        )
    try:
        xnorm, fmin, fmax = (float(doc[k]) for k in ("xnorm", "fmin", "fmax"))
    except (TypeError, ValueError):
        raise _no_table(name, "the arc solution's xnorm, fmin or fmax is not a number") from None
    if not (xnorm > 1.0 and fmax != fmin):
        raise _no_table(name, "the arc solution's xnorm or fmin/fmax range is degenerate")
    x = np.arange(counts.size, dtype=np.float64) / (xnorm - 1.0)
    u = 2.0 * (x - fmin) / (fmax - fmin) - 1.0
    with np.errstate(over="ignore", invalid="ignore"):
        wave_A = _ARC_FUNCS[func](u, coef)
    note += (
        f"an arc spectrum of {counts.size:,} pixels with its {func} wavelength solution "
        "(pypeit's archive: vacuum Å)"
    )
    return _columns(
        name,
        ["wavelength (angstrom, vacuum)", "counts"],
        [wave_A, counts],
        note,
        "pixel",
        sampled="arc spectrum with its wavelength solution",
    )


def _columns(
    name: str,
    headers: list[str] | None,
    values: list[np.ndarray],
    note: str,
    row_word: str,
    sampled: str | None = None,
) -> Columns:
    return array_columns(
        name,
        headers,
        values,
        lambda i: f"{row_word} {i + 1}",
        fmt="json",
        note=f"JSON: {note}",
        sampled=sampled,
    )
