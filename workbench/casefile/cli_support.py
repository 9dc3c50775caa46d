"""Helpers shared by the case-store command groups (imported inside CLI handlers)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from workbench.errors import InputError

__all__ = ["emit", "open_store", "parse_settings", "read_input_file"]


def open_store(args: Any) -> Any:
    """Open the store named by ``--store`` (or the default)."""
    from workbench.casefile.store import CaseStore

    return CaseStore.open(getattr(args, "store", None))


def emit(args: Any, data: Any, lines: list[str] | str) -> None:
    """Print ``data`` as JSON with ``--json``, else the human-readable ``lines``."""
    if getattr(args, "json", False):
        print(json.dumps(data, indent=2, sort_keys=True, ensure_ascii=False))
        return
    print(lines if isinstance(lines, str) else "\n".join(lines))


def parse_settings(pairs: list[str] | None) -> dict[str, Any]:
    """Parse ``--setting key=value`` pairs; values that read as JSON (numbers, true) become so."""
    out: dict[str, Any] = {}
    for n, pair in enumerate(pairs or [], start=1):
        key, sep, value = pair.partition("=")
        if not sep or not key.strip():
            raise InputError(
                f"--setting number {n} ({pair!r}) is not key=value",
                "write settings like --setting gate_delay_us=1.5",
            )
        try:
            parsed = json.loads(value)
            if isinstance(parsed, float) and parsed != parsed:  # NaN
                parsed = value
        except ValueError:
            parsed = value
        out[key.strip()] = parsed
    return out


def read_input_file(path: str) -> bytes:
    """Read a user's file as bytes, with a clear error when it cannot be read."""
    p = Path(path)
    try:
        return p.read_bytes()
    except FileNotFoundError as exc:
        raise InputError(f"file {p} does not exist", "check the path") from exc
    except IsADirectoryError as exc:
        raise InputError(f"{p} is a directory", "give the file itself") from exc
    except OSError as exc:
        raise InputError(f"file {p} cannot be read ({exc})", "check its permissions") from exc
