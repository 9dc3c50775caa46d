"""The store's SQLite connection: a damaged file is a clear error, a busy one is retried.

:class:`StoreConnection` runs every statement through a cursor that turns an
SQLite error meaning "this file is damaged or was altered" into
:class:`~workbench.errors.StoreIntegrityError` (never a traceback);
:func:`is_busy` says whether an error means "locked by another writer, try
again" (the store's writers retry those with backoff).
"""

from __future__ import annotations

import sqlite3
from typing import Any

from workbench.errors import StoreIntegrityError

__all__ = ["StoreConnection", "is_busy"]


_DAMAGE_WORDS = ("malformed", "not a database", "no such table", "no such column", "corrupt")


def _damage(exc: sqlite3.DatabaseError) -> StoreIntegrityError | None:
    """The StoreIntegrityError for an SQLite error that means a damaged or altered file."""
    text = str(exc).lower()
    if type(exc) is sqlite3.DatabaseError or any(w in text for w in _DAMAGE_WORDS):
        return StoreIntegrityError(
            f"the case-store database is damaged or was altered ({exc})",
            "run 'workbench custody verify'; restore the store from a backup",
        )
    return None


class _Cursor(sqlite3.Cursor):
    """A cursor that reports a damaged database as StoreIntegrityError, not a traceback."""

    def execute(self, sql: str, parameters: Any = ()) -> _Cursor:  # type: ignore[override]
        try:
            return super().execute(sql, parameters)
        except sqlite3.DatabaseError as exc:
            raise (_damage(exc) or exc) from exc

    def fetchone(self) -> Any:
        try:
            return super().fetchone()
        except sqlite3.DatabaseError as exc:
            raise (_damage(exc) or exc) from exc

    def fetchall(self) -> list[Any]:
        try:
            return super().fetchall()
        except sqlite3.DatabaseError as exc:
            raise (_damage(exc) or exc) from exc

    def __next__(self) -> Any:
        try:
            return super().__next__()
        except sqlite3.DatabaseError as exc:
            raise (_damage(exc) or exc) from exc


class StoreConnection(sqlite3.Connection):
    """The store's connection: every statement runs through :class:`_Cursor`."""

    def cursor(self, factory: Any = _Cursor) -> Any:  # type: ignore[override]
        """Return a cursor that reports damage as StoreIntegrityError."""
        return super().cursor(factory)

    def execute(self, sql: str, parameters: Any = ()) -> Any:  # type: ignore[override]
        """Run one statement through such a cursor."""
        return self.cursor().execute(sql, parameters)


def is_busy(exc: BaseException) -> bool:
    """Return whether an SQLite error means 'locked by another writer, try again'."""
    if not isinstance(exc, sqlite3.OperationalError):
        return False
    text = str(exc).lower()
    return "locked" in text or "busy" in text
