"""Canonical serialisation, SHA-256 helpers and UTC timestamps for the case store.

Every hash in the store is the lowercase hex SHA-256 of the *canonical JSON*
of a record: keys sorted, no whitespace (``separators=(",", ":")``), UTF-8,
non-ASCII kept as is, NaN and infinities refused. Timestamps are UTC ISO 8601
with microseconds and a ``Z`` suffix (``2026-03-04T10:15:00.000000Z``), a
fixed-width form whose text order is its time order.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from datetime import UTC, datetime
from typing import Any

from workbench.errors import ValueRangeError

__all__ = [
    "GENESIS_HASH",
    "TIME_FORMAT",
    "canonical_json",
    "normalise_time",
    "record_hash",
    "sha256_hex",
    "utc_now",
]

#: ``prev_hash`` of the first event of an item that is not a sub-sample.
GENESIS_HASH: str = "0" * 64

#: strftime pattern of every stored timestamp.
TIME_FORMAT: str = "%Y-%m-%dT%H:%M:%S.%fZ"


def sha256_hex(data: bytes) -> str:
    """Return the lowercase hex SHA-256 of ``data``.

    Parameters
    ----------
    data : bytes
        Bytes to hash.

    Returns
    -------
    str
        64 hex digits.
    """
    return hashlib.sha256(bytes(data)).hexdigest()


def canonical_json(obj: Any) -> bytes:
    """Serialise ``obj`` as sorted-key compact UTF-8 JSON.

    Parameters
    ----------
    obj : Any
        JSON-serialisable value (dicts, lists, str, int, float, bool, None).

    Returns
    -------
    bytes
        The canonical form.

    Raises
    ------
    ValueRangeError
        If the value holds NaN/infinity or something JSON cannot represent.
    """
    try:
        text = json.dumps(
            obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
        )
    except (TypeError, ValueError) as exc:
        raise ValueRangeError(
            f"value cannot be stored as JSON ({exc})",
            "use only text, numbers (no NaN or infinity), true/false, null, lists and objects",
        ) from exc
    return text.encode("utf-8")


def record_hash(fields: Mapping[str, Any], names: tuple[str, ...]) -> str:
    """Return the SHA-256 of the canonical JSON of the named fields.

    Parameters
    ----------
    fields : Mapping
        The record (may hold more keys than ``names``).
    names : tuple of str
        The fields that the hash covers.

    Returns
    -------
    str
        64 hex digits.
    """
    return sha256_hex(canonical_json({n: fields.get(n) for n in names}))


def utc_now() -> str:
    """Return the current time as a stored timestamp (UTC, microseconds, ``Z``)."""
    return datetime.now(UTC).strftime(TIME_FORMAT)


def normalise_time(at: datetime | str | None, what: str = "time") -> str:
    """Convert a time to the stored form; ``None`` means now.

    Parameters
    ----------
    at : datetime, str or None
        A timezone-aware datetime, or ISO 8601 text with an offset or ``Z``.
    what : str
        Name of the value, for error messages.

    Returns
    -------
    str
        UTC timestamp ``YYYY-MM-DDTHH:MM:SS.ffffffZ``.

    Raises
    ------
    ValueRangeError
        If the text is not ISO 8601 or carries no time zone.
    """
    if at is None:
        return utc_now()
    if isinstance(at, str):
        try:
            parsed = datetime.fromisoformat(at.strip())
        except ValueError as exc:
            raise ValueRangeError(
                f"{what} {at!r} is not an ISO 8601 time",
                "write it like 2026-03-04T10:15:00Z (UTC) or 2026-03-04T11:15:00+01:00",
            ) from exc
    elif isinstance(at, datetime):
        parsed = at
    else:
        raise ValueRangeError(
            f"{what} must be a datetime or ISO 8601 text, got {type(at).__name__}",
            "pass a timezone-aware datetime or text like 2026-03-04T10:15:00Z",
        )
    if parsed.tzinfo is None or parsed.utcoffset() is None:
        raise ValueRangeError(
            f"{what} {at!s} has no time zone",
            "add 'Z' for UTC or an offset such as +01:00",
        )
    return parsed.astimezone(UTC).strftime(TIME_FORMAT)
