"""Text typed into the app's forms, turned into library values (the library validates).

Case and item numbers are checked by :mod:`workbench.casefile.naming`; the
pages call :func:`check_case_number` and :func:`check_item_number` from here
so that the rule lives in one place.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from workbench.casefile.naming import check_case_number, check_item_number
from workbench.errors import InputError

__all__ = [
    "check_case_number",
    "check_item_number",
    "collections_root",
    "parse_elements",
    "parse_ratios",
    "parse_year",
]


def collections_root(where: str, store_root: Path | str) -> Path:
    """Collections folder: ``"store"`` (the case store's) or ``"shared"`` (shipped)."""
    from workbench.compare import shared_collections_root, store_collections_root

    if where == "shared":
        return shared_collections_root()
    if where == "store":
        return store_collections_root(store_root)
    raise InputError(f"unknown collections location {where!r}", "choose 'store' or 'shared'")


def parse_ratios(text: str, medium: str) -> list[Any]:
    """One ratio per line (``Sr:407.771/Ca:393.366``), parsed by the library; blanks skipped."""
    from workbench.compare import parse_ratio

    return [parse_ratio(line.strip(), medium) for line in text.splitlines() if line.strip()]


def parse_year(text: str) -> int | None:
    """A claimed year typed by the user (``1850``, ``-300`` for 300 BC); empty → None."""
    t = (text or "").strip()
    if not t:
        return None
    try:
        return int(t)
    except ValueError as exc:
        raise InputError(
            f"claimed year {t!r} is not a whole number",
            "type a year such as 1850 (negative for BC), or leave it empty",
        ) from exc


def parse_elements(text: str) -> tuple[str, ...] | None:
    """Comma-separated element symbols typed by the user (``"Fe, Cr"``); empty → None."""
    got = sorted({e.strip() for e in (text or "").split(",") if e.strip()})
    return tuple(got) or None
