"""Small helpers shared by the comparison modules (private).

Canonical JSON, atomic writes, element symbols, the reading of element
results in the identification engine's JSON shape, and peak-list reading.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import re
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from workbench.errors import ComparisonError, FileFormatError, InputError

#: Chemical element symbols Z = 1..118 (IUPAC periodic table; common practice, no source).
ELEMENT_SYMBOLS: tuple[str, ...] = (
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn "
    "Ga Ge As Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce "
    "Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn "
    "Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl "
    "Mc Lv Ts Og"
).split()
_SYMBOL_SET = frozenset(ELEMENT_SYMBOLS)
_SYMBOL_BY_LOWER = {s.lower(): s for s in ELEMENT_SYMBOLS}

#: Verdict level from which an element counts as present (engine levels 0..3).
PRESENT_LEVEL: int = 2

_ID_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")


def check_id(value: str, what: str) -> str:
    """Validate an identifier used as a directory or record name.

    Parameters
    ----------
    value : str
        The identifier.
    what : str
        What it names (for the message).

    Returns
    -------
    str
        The identifier, unchanged.
    """
    if not isinstance(value, str) or not _ID_RE.match(value):
        raise InputError(
            f"{what} {value!r} is not a valid identifier",
            "use 1-64 letters, digits, '.', '_' or '-', starting with a letter or digit",
        )
    return value


def element_symbol(text: str, where: str = "element list") -> str:
    """Return the canonical spelling of an element symbol (``"sr"`` → ``"Sr"``)."""
    key = str(text).strip()
    found = key if key in _SYMBOL_SET else _SYMBOL_BY_LOWER.get(key.lower())
    if found is None:
        raise InputError(
            f"{where}: {text!r} is not a chemical element symbol",
            "use symbols such as Pb, Ti, Zn (comma separated)",
        )
    return found


def parse_element_list(text: str) -> set[str]:
    """Parse ``"Ti,Pb, zn"`` (commas, semicolons or spaces) into a set of symbols."""
    parts = [p for p in re.split(r"[,;\s]+", text.strip()) if p]
    return {element_symbol(p, "--elements") for p in parts}


def present_elements(
    result: Mapping[str, Any] | Iterable[str], where: str = "element result"
) -> set[str]:
    """Elements present according to an engine result or a plain set of symbols.

    Parameters
    ----------
    result : mapping or iterable of str
        Either the identification engine's JSON shape
        ``{"elements": [{"element": "Sr", "verdict_level": 3, ...}, ...]}``, in
        which an entry with ``verdict_level >= 2`` counts as present, or an
        iterable of element symbols, all taken as present.
    where : str
        Name of the source, used in error messages.

    Returns
    -------
    set of str
        Canonical element symbols.
    """
    if isinstance(result, Mapping):
        entries = result.get("elements")
        if not isinstance(entries, list):
            raise FileFormatError(
                f"{where}: no 'elements' list in the element result",
                "give the JSON report written by the identification engine, "
                'shaped {"elements": [{"element": "Sr", "verdict_level": 3}]}',
            )
        found: set[str] = set()
        for i, entry in enumerate(entries):
            if not isinstance(entry, Mapping) or "element" not in entry:
                raise FileFormatError(
                    f"{where}: elements[{i}] has no 'element' field",
                    "each entry needs 'element' and 'verdict_level'",
                )
            level = entry.get("verdict_level")
            if not isinstance(level, int | float) or isinstance(level, bool):
                raise FileFormatError(
                    f"{where}: elements[{i}] ({entry['element']}) has no numeric 'verdict_level'",
                    "each entry needs an integer 'verdict_level' (0-3)",
                )
            if level >= PRESENT_LEVEL:
                found.add(element_symbol(entry["element"], f"{where} elements[{i}]"))
        return found
    if isinstance(result, str):
        return parse_element_list(result)
    return {element_symbol(s, where) for s in result}


def load_json_file(path: str | os.PathLike[str], what: str) -> Any:
    """Read a JSON file, turning every failure into a FileFormatError."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError as exc:
        raise InputError(f"{what} {p} does not exist", "check the path") from exc
    except (OSError, UnicodeDecodeError) as exc:
        raise FileFormatError(
            f"{what} {p} cannot be read ({exc})", "give a UTF-8 JSON file"
        ) from exc
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise FileFormatError(
            f"{what} {p} is not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})",
            "give the JSON file as written by the workbench",
        ) from exc


def clean_float(value: float | None, digits: int = 6) -> float | None:
    """Round to ``digits`` significant figures for stable JSON; NaN/inf become None."""
    if value is None:
        return None
    v = float(value)
    if not math.isfinite(v):
        return None
    if v == 0.0:
        return 0.0
    return float(f"{v:.{digits}g}")


def jsonable(obj: Any) -> Any:
    """Recursively make ``obj`` JSON-friendly with stable float formatting."""
    if isinstance(obj, Mapping):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [jsonable(v) for v in obj]
    if isinstance(obj, set | frozenset):
        return sorted(jsonable(v) for v in obj)
    if isinstance(obj, bool) or obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, int):
        return int(obj)
    if isinstance(obj, float):
        return clean_float(obj)
    if hasattr(obj, "item"):  # numpy scalars
        return jsonable(obj.item())
    if hasattr(obj, "to_dict"):
        return jsonable(obj.to_dict())
    return str(obj)


def canonical_json(obj: Any) -> str:
    """Deterministic JSON text: sorted keys, 2-space indent, fixed floats, final newline."""
    return json.dumps(jsonable(obj), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def atomic_write_bytes(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically, creating folders (shared helper)."""
    from workbench.fileio import write_bytes_atomic

    write_bytes_atomic(path, data, make_parents=True)


def sha256_hex(data: bytes) -> str:
    """Hex SHA-256 of ``data``."""
    return hashlib.sha256(data).hexdigest()


def read_peaks(
    data: bytes,
    *,
    name: str,
    unit: str | None = None,
    medium: str | None = None,
    mode: str = "emission",
):
    """Read a peak list from bytes with :func:`workbench.io.read_peak_list`.

    Parameters
    ----------
    data : bytes
        The file's bytes, exactly as given.
    name : str
        File name for messages and provenance.
    unit, medium, mode
        Passed to the reader (an unstated medium is assumed air by the reader,
        with a note; the collection then records it explicitly).

    Returns
    -------
    workbench.datamodel.PeakList
        The peaks.
    """
    from workbench.io import read_peak_list

    return read_peak_list(data, name=name, unit=unit, medium=medium, mode=mode)


def not_found(what: str, value: str, known: Iterable[str], remedy: str) -> ComparisonError:
    """Build a ComparisonError for an unknown id, listing the known ones."""
    names = sorted(known)
    shown = ", ".join(names[:20]) if names else "none"
    return ComparisonError(f"no {what} {value!r} (known: {shown})", remedy)
