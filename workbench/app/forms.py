"""Text typed into the app's forms, turned into library values (the library validates).

Case and item numbers are checked by :mod:`workbench.casefile.naming`; the
pages call :func:`check_case_number` and :func:`check_item_number` from here
so that the rule lives in one place.
"""

from __future__ import annotations

import os
from datetime import datetime, tzinfo
from pathlib import Path
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from workbench.casefile.naming import check_case_number, check_item_number
from workbench.errors import InputError

__all__ = [
    "check_case_number",
    "check_collection_id",
    "check_item_number",
    "collections_root",
    "lab_now",
    "lab_time",
    "lab_timezone",
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


def check_collection_id(text: str) -> str:
    """A collection or known-sample id typed by the user: the case-number pattern.

    Ids become folder and file names, so they follow the same documented
    pattern as case numbers (:mod:`workbench.casefile.naming`).
    """
    try:
        return check_case_number(text)
    except InputError as exc:
        raise InputError(exc.problem.replace("case number", "id"), exc.remedy) from exc


def lab_timezone() -> tzinfo:
    """The laboratory's time zone: ``$WORKBENCH_LAB_TZ`` (an IANA name), else the server's.

    Raises
    ------
    InputError
        When ``$WORKBENCH_LAB_TZ`` names no known zone.
    """
    name = os.environ.get("WORKBENCH_LAB_TZ", "").strip()
    if name:
        try:
            return ZoneInfo(name)
        except (ZoneInfoNotFoundError, ValueError) as exc:
            raise InputError(
                f"WORKBENCH_LAB_TZ={name!r} is not a known time zone",
                "set an IANA name such as Europe/London, or unset it",
            ) from exc
    local = datetime.now().astimezone().tzinfo
    assert local is not None
    return local


def lab_now() -> datetime:
    """Now in the laboratory's time zone, to the minute (the pickers' default)."""
    return datetime.now(lab_timezone()).replace(second=0, microsecond=0)


def lab_time(picked: datetime | None, what: str) -> datetime:
    """A date/time picker's value (naive, lab time) as an aware datetime for the store."""
    if picked is None:
        raise InputError(f"{what} is empty", f"pick the {what}")
    if picked.tzinfo is None:
        picked = picked.replace(tzinfo=lab_timezone())
    return picked


def parse_elements(text: str) -> tuple[str, ...] | None:
    """Comma-separated element symbols typed by the user (``"Fe, Cr"``); empty → None."""
    got = sorted({e.strip() for e in (text or "").split(",") if e.strip()})
    return tuple(got) or None
