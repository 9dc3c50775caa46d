"""What verification reports: :class:`Break`, :class:`VerifyReport`, and never-raising readers.

A :class:`Break` places one integrity break exactly (case, item, event,
record) and says what differs; a :class:`VerifyReport` collects them.
Values come from a store or bundle that may have been tampered with, so the
helpers here never crash on them: :func:`read_json` raises :class:`Unreadable`
(turned into an ``unreadable-record`` break by the caller) and
:func:`record_hash` returns a marker for a value that cannot be hashed.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from workbench.casefile.hashing import record_hash as _record_hash
from workbench.errors import WorkbenchError

__all__ = ["Break", "Unreadable", "VerifyReport", "read_json", "record_hash"]


def record_hash(fields: Any, names: tuple[str, ...]) -> str:
    """Record hash that never raises: an unhashable value (a BLOB) gives a marker."""
    try:
        return _record_hash(fields, names)
    except (WorkbenchError, TypeError, ValueError) as exc:
        return f"unhashable ({exc.__class__.__name__}: a value is not text, number or JSON)"


def read_json(value: Any, what: str) -> Any:
    """Parse a stored JSON text column, or raise :class:`Unreadable` (never a crash)."""
    if not isinstance(value, str):
        raise Unreadable(f"{what} is a {type(value).__name__}, not JSON text")
    try:
        return json.loads(value)
    except (ValueError, RecursionError) as exc:
        raise Unreadable(f"{what} is not valid JSON ({exc})") from exc


class Unreadable(Exception):
    """A stored value cannot be read (invalid JSON, wrong type): a break, not a crash."""


@dataclass(frozen=True)
class Break:
    """One integrity break, placed exactly.

    Attributes
    ----------
    kind : str
        ``missing-event``, ``broken-link``, ``reordered``, ``altered-event``,
        ``rule-violation``, ``altered-record``, ``unchained-record``,
        ``missing-record``, ``altered-result``, ``file-missing``,
        ``file-replaced``, ``signature-invalid``, ``broken-decision``,
        ``broken-review`` (and the store-wide kinds of
        :mod:`~workbench.casefile.storecheck`).
    case_number, item_number : str or None
        Where.
    seq : int or None
        Event sequence number (for chain breaks).
    event_id : int or None
        Local row id of the event (None in a bundle or when the event is missing).
    record : str or None
        The record concerned (``"measurement 3"``, ``"file files/ab/cd..."``).
    detail : str
        What differs, in words.
    expected, found : str or None
        The expected and the found value (usually hashes).
    """

    kind: str
    case_number: str | None
    item_number: str | None
    seq: int | None
    event_id: int | None
    record: str | None
    detail: str
    expected: str | None = None
    found: str | None = None

    def __post_init__(self) -> None:
        # Values come from a store that may be tampered with: a BLOB where a
        # case number belongs must still print.
        for name, value in self.__dict__.items():
            if (value is not None and not isinstance(value, str | int)) or isinstance(value, bool):
                object.__setattr__(self, name, repr(value))
        for name in ("case_number", "item_number"):
            value = getattr(self, name)
            if value is not None and not isinstance(value, str):
                object.__setattr__(self, name, str(value))

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return dict(self.__dict__)

    def describe(self) -> str:
        """One line for people."""
        where = self.case_number or "store"
        if self.item_number:
            where += f"/{self.item_number}"
        if self.seq is not None:
            where += f" event #{self.seq}"
            if self.event_id is not None:
                where += f" (id {self.event_id})"
        if self.record:
            where += f" [{self.record}]"
        text = f"{self.kind} at {where}: {self.detail}"
        if self.expected is not None or self.found is not None:
            text += f" (expected {self.expected}, found {self.found})"
        return text


@dataclass(frozen=True)
class VerifyReport:
    """Outcome of :func:`verify_store`.

    Attributes
    ----------
    ok : bool
        True when nothing is broken.
    scope : str
        The case checked, or ``"all cases"``.
    counts : dict
        What was checked (cases, items, events, measurements, analyses, sheets,
        files, signatures).
    breaks : tuple of Break
        Every break found, in check order; the first is :attr:`first_break`.
    warnings : tuple of str
        Things that are not breaks (a key revoked after it signed).
    signature_check : str
        ``"ok"``, ``"none to check"``, ``"failed"`` or ``"unavailable (...)"``.
    """

    ok: bool
    scope: str
    counts: dict[str, int]
    breaks: tuple[Break, ...]
    warnings: tuple[str, ...] = ()
    signature_check: str = "none to check"

    @property
    def first_break(self) -> Break | None:
        """The first break, or None."""
        return self.breaks[0] if self.breaks else None

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return {
            "ok": self.ok,
            "scope": self.scope,
            "counts": dict(self.counts),
            "first_break": self.first_break.to_dict() if self.first_break else None,
            "breaks": [b.to_dict() for b in self.breaks],
            "warnings": list(self.warnings),
            "signature_check": self.signature_check,
        }
