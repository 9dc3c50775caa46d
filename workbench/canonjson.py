"""Canonical JSON: one number-format rule, sorted keys, the same bytes every time.

The rule (unchanged since result schema 1):

* every float is rounded once to 10 significant digits (``f"{v:.10g}"``),
  read back, and written as Python writes that float (shortest repr:
  ``656.279``, ``1e-05``, ``1.5e+16``); NaN and ±infinity become ``null``;
* a finite float whose 10-digit rounding would overflow (above
  1.7976931348e308) is written unrounded instead of becoming infinity
  (the only values where this module differs from the old one, which
  crashed on them);
* numpy scalars and arrays become plain numbers and lists; tuples become
  lists; keys are strings, sorted; compact separators (``,`` and ``:``) or
  an indent; UTF-8 with non-ASCII characters written as they are.

Why not orjson: it writes small exponents as ``0.00001`` and ``1e-7`` where
Python writes ``1e-05`` and ``1e-07``, so it could not keep the bytes of
results already stored and signed. The speed comes instead from normalising
with exact-type dispatch (no ``isinstance`` chain per value) and handing the
result to the standard library's C encoder in one call.
"""

from __future__ import annotations

import json
import math
from typing import Any

__all__ = ["dumps", "normalise", "round_float"]

_INF = math.inf


def round_float(v: float) -> float | None:
    """Apply the number rule to one float: 10 significant digits, None if not finite."""
    if v != v or v == _INF or v == -_INF:
        return None
    r = float(f"{v:.10g}")
    if r == _INF or r == -_INF:  # rounding up past the largest double
        return v
    return r


def _generic(obj: Any) -> Any:
    # Subclasses and numpy types: the same decisions, in the same order, as
    # the original recursive converter (bool before int; arrays via tolist()).
    import numpy as np

    if isinstance(obj, dict):
        return {str(k): normalise(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [normalise(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [normalise(v) for v in obj.tolist()]
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, int | np.integer):
        return int(obj)
    if isinstance(obj, float | np.floating):
        return round_float(float(obj))
    return obj


def normalise(obj: Any) -> Any:
    """Convert to plain JSON types with every float under the number rule.

    Parameters
    ----------
    obj : Any
        Nested dicts, lists, tuples, numpy arrays and scalars, str, int,
        bool, None.

    Returns
    -------
    Any
        The same structure built from dict, list, str, int, float, bool
        and None only.
    """
    t = type(obj)
    if t is float:
        return round_float(obj)
    if t is dict:
        out = {}
        for k, v in obj.items():
            tv = type(v)
            out[k if type(k) is str else str(k)] = (
                round_float(v)
                if tv is float
                else v
                if (tv is str or tv is int or tv is bool or v is None)
                else normalise(v)
            )
        return out
    if t is list or t is tuple:
        return [
            round_float(v)
            if type(v) is float
            else v
            if (type(v) is str or type(v) is int or type(v) is bool or v is None)
            else normalise(v)
            for v in obj
        ]
    if t is str or t is int or t is bool or obj is None:
        return obj
    return _generic(obj)


def dumps(obj: Any, indent: int | None = None) -> bytes:
    """Canonical JSON bytes of ``obj`` (sorted keys, the number rule, UTF-8).

    Parameters
    ----------
    obj : Any
        What :func:`normalise` accepts.
    indent : int, optional
        Pretty-print with this indent; compact (``,``/``:``) when omitted.

    Returns
    -------
    bytes
        The same bytes for the same content, on every run and machine.

    Raises
    ------
    TypeError
        For a value of a type JSON cannot hold.
    """
    seps = (",", ":") if indent is None else (",", ": ")
    text = json.dumps(
        normalise(obj),
        sort_keys=True,
        separators=seps,
        ensure_ascii=False,
        allow_nan=False,
        indent=indent,
    )
    return text.encode("utf-8")
