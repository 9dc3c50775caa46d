"""Where a case store lives, how it is opened, and how every write is made.

:class:`StoreBase` holds the connection and the content-addressed files of a
store directory chosen, in priority, by an explicit path, the
``WORKBENCH_STORE`` environment variable, or ``<repo>/casefiles/``. Every
write runs in one ``BEGIN IMMEDIATE`` transaction (:meth:`StoreBase._write`),
retried with bounded, jittered backoff while another writer holds the lock,
and enters the rows it writes in the store ledger in the same transaction.
The record kinds (cases, items and custody, measurements, analyses, sheets)
are added on top of it, one module each; :class:`~workbench.casefile.store.CaseStore`
puts them together.
"""

from __future__ import annotations

import json
import os
import random
import sqlite3
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any, Self, TypeVar

from workbench.casefile import ledger
from workbench.casefile.blobs import BlobStore
from workbench.casefile.custody import ChainState
from workbench.casefile.hashing import utc_now
from workbench.casefile.schema import connect, connect_readonly, is_busy
from workbench.errors import CaseFileError, NotFoundError, StoreIntegrityError

__all__ = ["DB_NAME", "FILES_DIR", "STORE_ENV", "StoreBase", "resolve_store_root", "stored_json"]


#: Environment variable naming the store directory.
STORE_ENV: str = "WORKBENCH_STORE"
#: Database file name inside the store directory.
DB_NAME: str = "cases.sqlite"
#: Folder of content-addressed files inside the store directory.
FILES_DIR: str = "files"

T = TypeVar("T")

_MAX_ATTEMPTS = 200


def resolve_store_root(path: Path | str | None = None) -> Path:
    """Return the store directory: ``path``, else ``$WORKBENCH_STORE``, else the repo default."""
    if path is not None and str(path) != "":
        return Path(path).expanduser()
    env = os.environ.get(STORE_ENV)
    if env:
        return Path(env).expanduser()
    import workbench

    return Path(workbench.__file__).resolve().parents[1] / "casefiles"


def stored_json(value: Any, what: str, kind: type) -> Any:
    """Parse a JSON column the store wrote; anything else is damage or tampering."""
    try:
        if not isinstance(value, str):
            raise ValueError(f"a {type(value).__name__} where JSON text belongs")
        parsed = json.loads(value)
        if not isinstance(parsed, kind):
            raise ValueError(f"a {type(parsed).__name__} where a {kind.__name__} belongs")
    except (ValueError, RecursionError) as exc:
        raise StoreIntegrityError(
            f"stored {what} cannot be read ({exc})",
            "the store was damaged or altered; run 'workbench custody verify' and restore "
            "it from a backup",
        ) from exc
    return parsed


class StoreBase:
    """An open store directory: connection, files, transactions (use :meth:`open`).

    Parameters
    ----------
    root : Path
        Store directory (holds ``cases.sqlite`` and ``files/``).
    conn : sqlite3.Connection
        Open connection from :func:`workbench.casefile.schema.connect`.
    """

    def __init__(self, root: Path, conn: sqlite3.Connection) -> None:
        self.root = root
        self._conn = conn
        self._conn.row_factory = sqlite3.Row
        self.files = BlobStore(root / FILES_DIR)
        self._chain_cache: dict[int, tuple[ChainState, str]] = {}

    # ------------------------------------------------------------------ opening
    @classmethod
    def open(cls, path: Path | str | None = None) -> Self:
        """Open (creating or migrating) the store at ``path`` (see module docstring).

        Parameters
        ----------
        path : Path or str, optional
            Store directory; default from ``$WORKBENCH_STORE`` or ``<repo>/casefiles``.

        Returns
        -------
        CaseStore
            The open store.
        """
        root = resolve_store_root(path)
        if root.exists() and not root.is_dir():
            raise CaseFileError(
                f"case store path {root} is a file, not a directory",
                "give the directory that holds cases.sqlite (--store DIR)",
            )
        try:
            root.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise CaseFileError(
                f"cannot create case store directory {root} ({exc})",
                "choose a writable directory with --store",
            ) from exc
        store = cls(root, connect(root / DB_NAME))
        store.files.recover_staged(store._names_file)
        return store

    def _names_file(self, sha: str) -> bool:
        """Whether any row names a stored file with this SHA-256 (for crash recovery)."""
        q = (
            "SELECT 1 FROM measurements WHERE sha256=:h UNION ALL "
            "SELECT 1 FROM analyses WHERE result_sha256=:h UNION ALL "
            "SELECT 1 FROM findings_sheets WHERE :h IN "
            "(pdf_sha256, json_sha256, signature_sha256, record_sha256) LIMIT 1"
        )
        return self._conn.execute(q, {"h": sha}).fetchone() is not None

    @classmethod
    def open_readonly(cls, path: Path | str | None = None) -> Self:
        """Open an existing store for reading only (``custody verify``).

        Nothing is created, migrated or written: a missing store is
        :class:`NotFoundError`; a directory whose database is missing, empty or
        unreadable (while it may still hold files) is :class:`StoreIntegrityError`.
        """
        root = resolve_store_root(path)
        db = root / DB_NAME
        if not root.is_dir():
            raise NotFoundError(
                f"there is no case store at {root}",
                "give the directory that holds cases.sqlite (--store DIR); nothing was created",
            )
        if not db.is_file() or db.stat().st_size == 0:
            state = "missing" if not db.is_file() else "empty"
            raise StoreIntegrityError(
                f"the case store {root} has no usable database: {DB_NAME} is {state}",
                "if this is a store, restore cases.sqlite from a backup; nothing was created",
            )
        store = cls.__new__(cls)
        store.root = root
        store._conn = connect_readonly(db)
        store._conn.row_factory = sqlite3.Row
        store.files = BlobStore(root / FILES_DIR, create=False)
        store._chain_cache = {}
        return store

    def close(self) -> None:
        """Close the database connection."""
        self._conn.close()

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @property
    def connection(self) -> sqlite3.Connection:
        """The underlying connection (read-only use; writes go through the API)."""
        return self._conn

    # ------------------------------------------------------------- transactions
    def _write(self, fn: Callable[[sqlite3.Connection], T]) -> T:
        """Run ``fn`` in one BEGIN IMMEDIATE transaction, retrying while busy."""
        delay = 0.005
        conn = self._conn
        for attempt in range(_MAX_ATTEMPTS):
            last = attempt == _MAX_ATTEMPTS - 1
            try:
                conn.execute("BEGIN IMMEDIATE")
            except sqlite3.OperationalError as exc:
                if is_busy(exc) and not last:
                    time.sleep(delay * (1 + random.random()))
                    delay = min(delay * 2, 0.25)
                    continue
                raise CaseFileError(
                    f"the case store {self.root} stayed locked by another writer ({exc})",
                    "try again; if it persists, check for a stuck workbench process",
                ) from exc
            try:
                result = fn(conn)
                conn.execute("COMMIT")
                return result
            except sqlite3.OperationalError as exc:
                self._rollback()
                if is_busy(exc) and not last:
                    time.sleep(delay * (1 + random.random()))
                    delay = min(delay * 2, 0.25)
                    continue
                raise CaseFileError(
                    f"the case store refused a write ({exc})", "try again; nothing was written"
                ) from exc
            except sqlite3.IntegrityError as exc:
                self._rollback()
                raise CaseFileError(
                    f"the case store refused a write ({exc})",
                    "nothing was written; check the identifiers given",
                ) from exc
            except BaseException:
                self._rollback()
                raise
        raise AssertionError("unreachable")  # pragma: no cover

    def _ledger(self, conn: sqlite3.Connection, table: str, row_id: int, action: str) -> None:
        """Enter a row just written in the store ledger (same transaction)."""
        ledger.append(conn, table, int(row_id), action, utc_now())

    def _rollback(self) -> None:
        self._chain_cache.clear()
        try:
            self._conn.execute("ROLLBACK")
        except sqlite3.OperationalError:
            pass

    def file_bytes(self, sha256: str) -> bytes:
        """Return a stored file's bytes, verifying the hash (raises StoreIntegrityError)."""
        return self.files.get(str(sha256).lower())

    def ledger_head(self) -> tuple[int, str]:
        """Return ``(seq, hash)`` of the latest ledger entry, to keep outside the store."""
        return ledger.head(self._conn)
