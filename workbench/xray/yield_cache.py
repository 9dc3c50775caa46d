"""Line yields of the default instrument, precomputed for the reference index.

The reference index weights every X-ray line by its detected yield under
the default instrument (:mod:`workbench.xray.lines`), which costs about two
seconds of xraylib calls (``CS_FluorLine_Kissel_Cascade`` over the tube
spectrum for ~100 elements) in every new process. The yields depend only on
xraylib's data, the default instrument and the yield grid, so they are
computed once and shipped in ``line_yields_default.json``, keyed by the
SHA-256 of exactly those inputs (:func:`cache_key`). A file whose key does
not match (another xraylib, a changed default instrument or grid) is
ignored and the yields are computed as before: the cache can make the
index faster, never different. Floats are stored with ``repr`` precision,
so a cached yield is bit-for-bit the computed one.

Rebuild after such a change::

    uv run python -m workbench.xray.yield_cache
"""

from __future__ import annotations

import hashlib
import json
from functools import lru_cache
from pathlib import Path

__all__ = ["CACHE_PATH", "cache_key", "default_yields", "write_cache"]

#: The shipped file (next to this module).
CACHE_PATH: Path = Path(__file__).with_name("line_yields_default.json")
_FORMAT = 1


def cache_key() -> str:
    """SHA-256 of what the default yields depend on (xraylib version, instrument, grid)."""
    import xraylib

    from workbench.xray.forward import _MIN_LINE_EV, _YIELD_STEP_EV
    from workbench.xray.instrument import DEFAULT_INSTRUMENT

    what = {
        "format": _FORMAT,
        "xraylib": str(getattr(xraylib, "__version__", "")),
        "instrument": DEFAULT_INSTRUMENT.to_dict(),
        "yield_step_eV": _YIELD_STEP_EV,
        "min_line_eV": _MIN_LINE_EV,
    }
    return hashlib.sha256(json.dumps(what, sort_keys=True).encode("utf-8")).hexdigest()


@lru_cache(maxsize=1)
def _load() -> dict[str, dict[str, float]] | None:
    try:
        data = json.loads(CACHE_PATH.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if data.get("key") != cache_key():
        return None
    return data["yields"]


def default_yields(element: str) -> dict[str, float]:
    """:func:`workbench.xray.forward.line_yields` of ``element`` under the default instrument.

    From the shipped file when its key matches, else computed.
    """
    cached = _load()
    if cached is not None and element in cached:
        return dict(cached[element])
    from workbench.xray.forward import line_yields
    from workbench.xray.instrument import DEFAULT_INSTRUMENT

    return line_yields(element, DEFAULT_INSTRUMENT)


def write_cache(elements: list[str], path: Path = CACHE_PATH) -> Path:
    """Compute the yields of ``elements`` and write the cache file (atomically)."""
    from workbench.fileio import write_bytes_atomic
    from workbench.xray.forward import line_yields
    from workbench.xray.instrument import DEFAULT_INSTRUMENT

    yields = {el: line_yields(el, DEFAULT_INSTRUMENT) for el in sorted(set(elements))}
    text = json.dumps({"key": cache_key(), "yields": yields}, separators=(",", ":")) + "\n"
    write_bytes_atomic(path, text.encode("utf-8"))
    _load.cache_clear()
    return path


if __name__ == "__main__":
    from workbench.refdata import load_set

    table = load_set("xray").table
    print(write_cache(table["element"].drop_nulls().unique().to_list()))
