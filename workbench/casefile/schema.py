"""SQLite schema of the case store and its ordered migrations.

The schema version lives in ``schema_version`` (one row per applied
migration). :func:`connect` opens the database in WAL mode with foreign keys
on and a busy timeout, then applies every missing migration in ONE
``BEGIN IMMEDIATE`` transaction, so an older store is upgraded completely or
not at all. A store written by newer software (a version above
:data:`SCHEMA_VERSION`) is refused.

Migration 1 creates the tables; migration 2 adds the immutability triggers
(``BEFORE UPDATE/DELETE ... RAISE(ABORT, ...)``) and search indexes;
migration 3 adds the store ledger (:mod:`workbench.casefile.ledger`), the
hashed key log ``key_events`` and the analysts' provenance and trust, then
enters every existing row in the ledger and every existing key in the key log
as ``legacy`` (untrusted until a local administrator trusts it: a store
written before version 3 did not record whether a key was imported).

Every table is registered with the ledger when this module is imported
(:func:`~workbench.casefile.ledger_tables.register_store_tables`; the function
that names a table's rows lives in :mod:`~workbench.casefile.ledger_tables`);
a later migration that adds a table adds its entry there. The connection class
(damage reported as :class:`~workbench.errors.StoreIntegrityError`) is in
:mod:`~workbench.casefile.sqlconn`.

Migration 4 adds the analyst's decisions and the technical reviews
(:mod:`workbench.casefile.decisions`), both under the ledger.
"""

from __future__ import annotations

import sqlite3
import time
from collections.abc import Callable
from pathlib import Path

from workbench.casefile import ledger
from workbench.casefile.ledger_tables import register_store_tables
from workbench.casefile.sqlconn import StoreConnection, is_busy
from workbench.errors import CaseFileError, StoreIntegrityError

__all__ = [
    "LEDGER_VERSION",
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "connect",
    "connect_readonly",
    "is_busy",
    "schema_version",
]

_TABLES = [
    """CREATE TABLE schema_version (
        version INTEGER PRIMARY KEY,
        applied_at TEXT NOT NULL
    )""",
    """CREATE TABLE cases (
        id INTEGER PRIMARY KEY,
        case_number TEXT NOT NULL UNIQUE,
        title TEXT NOT NULL,
        requesting_party TEXT NOT NULL,
        status TEXT NOT NULL CHECK (status IN ('open', 'closed', 'archived')),
        created_at TEXT NOT NULL,
        record_hash TEXT NOT NULL
    )""",
    """CREATE TABLE items (
        id INTEGER PRIMARY KEY,
        case_id INTEGER NOT NULL REFERENCES cases(id),
        item_number TEXT NOT NULL,
        description TEXT NOT NULL,
        parent_item_id INTEGER REFERENCES items(id),
        seal_numbers TEXT NOT NULL,
        storage_location TEXT,
        created_at TEXT NOT NULL,
        record_hash TEXT NOT NULL,
        UNIQUE (case_id, item_number)
    )""",
    """CREATE TABLE custody_events (
        id INTEGER PRIMARY KEY,
        item_id INTEGER NOT NULL REFERENCES items(id),
        seq INTEGER NOT NULL,
        kind TEXT NOT NULL,
        at TEXT NOT NULL,
        actor TEXT NOT NULL,
        from_party TEXT,
        to_party TEXT,
        location TEXT,
        seal_state TEXT NOT NULL,
        seal_number TEXT,
        note TEXT,
        corrects_seq INTEGER,
        ref_kind TEXT,
        ref_key TEXT,
        ref_hash TEXT,
        recorded_at TEXT NOT NULL,
        prev_hash TEXT NOT NULL,
        hash TEXT NOT NULL,
        UNIQUE (item_id, seq)
    )""",
    """CREATE TABLE measurements (
        id INTEGER PRIMARY KEY,
        item_id INTEGER NOT NULL REFERENCES items(id),
        sha256 TEXT NOT NULL,
        filename TEXT NOT NULL,
        size_bytes INTEGER NOT NULL,
        technique TEXT NOT NULL,
        instrument TEXT NOT NULL,
        settings TEXT NOT NULL,
        operator TEXT NOT NULL,
        measured_at TEXT NOT NULL,
        recorded_at TEXT NOT NULL,
        record_hash TEXT NOT NULL UNIQUE
    )""",
    """CREATE TABLE analyses (
        id INTEGER PRIMARY KEY,
        measurement_id INTEGER NOT NULL REFERENCES measurements(id),
        parameters TEXT NOT NULL,
        reference_sets TEXT NOT NULL,
        result_json BLOB NOT NULL,
        result_sha256 TEXT NOT NULL,
        software_version TEXT NOT NULL,
        analyst TEXT NOT NULL,
        created_at TEXT NOT NULL,
        record_hash TEXT NOT NULL UNIQUE
    )""",
    """CREATE TABLE analysts (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL,
        role TEXT NOT NULL,
        public_key_pem TEXT NOT NULL,
        fingerprint TEXT NOT NULL UNIQUE,
        status TEXT NOT NULL CHECK (status IN ('active', 'revoked')),
        registered_at TEXT NOT NULL,
        revoked_at TEXT,
        revoked_reason TEXT,
        revoked_by TEXT
    )""",
    """CREATE TABLE findings_sheets (
        id INTEGER PRIMARY KEY,
        analysis_id INTEGER NOT NULL REFERENCES analyses(id),
        analyst_fingerprint TEXT NOT NULL REFERENCES analysts(fingerprint),
        analyst TEXT NOT NULL,
        pdf_sha256 TEXT NOT NULL,
        json_sha256 TEXT NOT NULL,
        signature_sha256 TEXT NOT NULL,
        record_sha256 TEXT NOT NULL,
        issued_at TEXT NOT NULL,
        recorded_at TEXT NOT NULL,
        record_hash TEXT NOT NULL UNIQUE
    )""",
]


def _no_change(table: str, action: str, message: str) -> str:
    return (
        f"CREATE TRIGGER {table}_no_{action.lower()} BEFORE {action} ON {table} "
        f"BEGIN SELECT RAISE(ABORT, '{message}'); END"
    )


_TRIGGERS = [
    *(
        _no_change(t, a, f"{t} are append-only: {a.lower()} refused")
        for t in ("custody_events", "measurements", "analyses", "findings_sheets", "items")
        for a in ("UPDATE", "DELETE")
    ),
    _no_change("cases", "DELETE", "cases are never deleted"),
    _no_change("analysts", "DELETE", "analysts are never deleted"),
    # A case's status may change; nothing else about it may.
    """CREATE TRIGGER cases_fixed_fields BEFORE UPDATE ON cases
       WHEN NEW.case_number IS NOT OLD.case_number OR NEW.title IS NOT OLD.title
         OR NEW.requesting_party IS NOT OLD.requesting_party
         OR NEW.created_at IS NOT OLD.created_at OR NEW.record_hash IS NOT OLD.record_hash
         OR NEW.id IS NOT OLD.id
       BEGIN SELECT RAISE(ABORT, 'only the status of a case may change'); END""",
    # An analyst may only go from active to revoked, once.
    """CREATE TRIGGER analysts_revoke_only BEFORE UPDATE ON analysts
       WHEN OLD.status <> 'active' OR NEW.status <> 'revoked'
         OR NEW.name IS NOT OLD.name OR NEW.role IS NOT OLD.role
         OR NEW.public_key_pem IS NOT OLD.public_key_pem
         OR NEW.fingerprint IS NOT OLD.fingerprint OR NEW.id IS NOT OLD.id
         OR NEW.registered_at IS NOT OLD.registered_at
       BEGIN SELECT RAISE(ABORT, 'an analyst can only be revoked, once'); END""",
    "CREATE INDEX events_by_item ON custody_events (item_id, seq)",
    "CREATE INDEX items_by_case ON items (case_id)",
    "CREATE INDEX measurements_by_item ON measurements (item_id)",
    "CREATE INDEX analyses_by_measurement ON analyses (measurement_id)",
    "CREATE INDEX sheets_by_analysis ON findings_sheets (analysis_id)",
]

_LEDGER_AND_KEYS = [
    """CREATE TABLE ledger (
        seq INTEGER PRIMARY KEY,
        tbl TEXT NOT NULL,
        row_id INTEGER NOT NULL,
        action TEXT NOT NULL CHECK (action IN ('insert', 'update', 'baseline')),
        identity TEXT NOT NULL,
        row_hash TEXT NOT NULL,
        recorded_at TEXT NOT NULL,
        prev_hash TEXT NOT NULL,
        hash TEXT NOT NULL
    )""",
    """CREATE TABLE key_events (
        id INTEGER PRIMARY KEY,
        seq INTEGER NOT NULL UNIQUE,
        fingerprint TEXT NOT NULL,
        kind TEXT NOT NULL CHECK (kind IN ('registered', 'imported', 'legacy', 'trusted',
                                           'revoked')),
        actor TEXT NOT NULL,
        reason TEXT,
        at TEXT NOT NULL,
        detail TEXT NOT NULL,
        prev_hash TEXT NOT NULL,
        hash TEXT NOT NULL
    )""",
    "ALTER TABLE analysts ADD COLUMN provenance TEXT NOT NULL DEFAULT 'legacy' "
    "CHECK (provenance IN ('local', 'imported', 'legacy'))",
    "ALTER TABLE analysts ADD COLUMN registered_by TEXT",
    "ALTER TABLE analysts ADD COLUMN trusted INTEGER NOT NULL DEFAULT 0 CHECK (trusted IN (0, 1))",
    "ALTER TABLE analysts ADD COLUMN trusted_by TEXT",
    "ALTER TABLE analysts ADD COLUMN trusted_at TEXT",
    "ALTER TABLE analysts ADD COLUMN trust_reason TEXT",
    # Every status a case has had, hash-chained from its record hash (custody.status_entry).
    "ALTER TABLE cases ADD COLUMN status_log TEXT",
    "DROP TRIGGER analysts_revoke_only",
    # Only revocation (once) and trust (once) may change an analyst.
    """CREATE TRIGGER analysts_fixed_fields BEFORE UPDATE ON analysts
       WHEN NEW.name IS NOT OLD.name OR NEW.role IS NOT OLD.role
         OR NEW.public_key_pem IS NOT OLD.public_key_pem
         OR NEW.fingerprint IS NOT OLD.fingerprint OR NEW.id IS NOT OLD.id
         OR NEW.registered_at IS NOT OLD.registered_at
         OR NEW.provenance IS NOT OLD.provenance OR NEW.registered_by IS NOT OLD.registered_by
         OR (OLD.status = 'revoked' AND (NEW.status IS NOT OLD.status
             OR NEW.revoked_at IS NOT OLD.revoked_at OR NEW.revoked_by IS NOT OLD.revoked_by
             OR NEW.revoked_reason IS NOT OLD.revoked_reason))
         OR (OLD.trusted = 1 AND (NEW.trusted IS NOT 1 OR NEW.trusted_by IS NOT OLD.trusted_by
             OR NEW.trusted_at IS NOT OLD.trusted_at
             OR NEW.trust_reason IS NOT OLD.trust_reason))
       BEGIN SELECT RAISE(ABORT, 'an analyst can only be revoked once and trusted once'); END""",
    *(
        _no_change(t, a, f"{t} are append-only: {a.lower()} refused")
        for t in ("ledger", "key_events")
        for a in ("UPDATE", "DELETE")
    ),
    _no_change("schema_version", "DELETE", "schema versions are never deleted"),
    _no_change("schema_version", "UPDATE", "schema versions are never changed"),
    "CREATE INDEX ledger_by_row ON ledger (tbl, row_id)",
    "CREATE INDEX key_events_by_key ON key_events (fingerprint, seq)",
]


def _baseline_v3(conn: sqlite3.Connection, now: str) -> None:
    """Start status logs and the key log (keys as ``legacy``); enter every row in the ledger."""
    import json

    from workbench.casefile.custody import status_entry
    from workbench.casefile.keylog import append_key_event

    for cid, status, digest in conn.execute(
        "SELECT id, status, record_hash FROM cases ORDER BY id"
    ).fetchall():
        log = [status_entry(status, now, digest)]
        conn.execute("UPDATE cases SET status_log=? WHERE id=?", (json.dumps(log), cid))

    rows = conn.execute(
        "SELECT fingerprint, name, role, public_key_pem, registered_at, status, revoked_at, "
        "revoked_reason, revoked_by FROM analysts ORDER BY id"
    ).fetchall()
    for fp, name, role, pem, registered_at, status, revoked_at, reason, by in rows:
        detail = {"name": name, "role": role, "public_key_pem": pem}
        append_key_event(
            conn,
            fp,
            "legacy",
            "schema upgrade",
            registered_at,
            detail,
            reason="registered before the store recorded key provenance",
        )
        if status == "revoked":
            append_key_event(
                conn, fp, "revoked", by or "unknown", revoked_at or now, {}, reason=reason
            )
    ledger.baseline(conn, now)


# Migration 4: the analyst's decisions on an analysis (append-only, hash-chained
# per analysis) and technical reviews of issued sheets (append-only).
_DECISIONS_AND_REVIEWS = [
    """CREATE TABLE analysis_decisions (
        id INTEGER PRIMARY KEY,
        analysis_id INTEGER NOT NULL REFERENCES analyses(id),
        seq INTEGER NOT NULL,
        action TEXT NOT NULL,
        target TEXT NOT NULL,
        lines TEXT NOT NULL,
        reverses INTEGER,
        reason TEXT NOT NULL,
        analyst TEXT NOT NULL,
        decided_at TEXT NOT NULL,
        prev_hash TEXT NOT NULL,
        record_hash TEXT NOT NULL UNIQUE,
        UNIQUE (analysis_id, seq)
    )""",
    """CREATE TABLE sheet_reviews (
        id INTEGER PRIMARY KEY,
        sheet_id INTEGER NOT NULL REFERENCES findings_sheets(id),
        reviewer_fingerprint TEXT NOT NULL REFERENCES analysts(fingerprint),
        reviewer TEXT NOT NULL,
        outcome TEXT NOT NULL CHECK (outcome IN ('approved', 'returned')),
        comments TEXT NOT NULL,
        signature_sha256 TEXT,
        record_sha256 TEXT,
        reviewed_at TEXT NOT NULL,
        record_hash TEXT NOT NULL UNIQUE
    )""",
    *(
        _no_change(t, a, f"{t} are append-only: {a.lower()} refused")
        for t in ("analysis_decisions", "sheet_reviews")
        for a in ("UPDATE", "DELETE")
    ),
    "CREATE INDEX decisions_by_analysis ON analysis_decisions (analysis_id, seq)",
    "CREATE INDEX reviews_by_sheet ON sheet_reviews (sheet_id)",
]

#: Ordered migrations: ``(version, statements)``; applied in order, never edited.
MIGRATIONS: tuple[tuple[int, tuple[str, ...]], ...] = (
    (1, tuple(_TABLES)),
    (2, tuple(_TRIGGERS)),
    (3, tuple(_LEDGER_AND_KEYS)),
    (4, tuple(_DECISIONS_AND_REVIEWS)),
)

#: Python steps run after a migration's statements, in the same transaction.
_POST_STEPS: dict[int, Callable[[sqlite3.Connection, str], None]] = {3: _baseline_v3}

#: First version whose writes are entered in the ledger.
LEDGER_VERSION: int = 3

#: Schema version this code writes.
SCHEMA_VERSION: int = MIGRATIONS[-1][0]


def schema_version(conn: sqlite3.Connection) -> int:
    """Return the store's schema version (0 for an empty database)."""
    row = conn.execute(
        "SELECT name FROM sqlite_master WHERE type='table' AND name='schema_version'"
    ).fetchone()
    if row is None:
        return 0
    value = conn.execute("SELECT MAX(version) FROM schema_version").fetchone()[0]
    return int(value or 0)


def _migrate(conn: sqlite3.Connection, db_path: Path, target: int) -> None:
    from workbench.casefile.hashing import utc_now

    for attempt in range(60):
        try:
            conn.execute("BEGIN IMMEDIATE")
            break
        except sqlite3.OperationalError as exc:
            if not is_busy(exc) or attempt == 59:
                raise
            time.sleep(0.05 * (1 + attempt % 5))
    try:
        current = schema_version(conn)
        if current > SCHEMA_VERSION:
            raise CaseFileError(
                f"case store {db_path} has schema version {current}, newer than this "
                f"software knows ({SCHEMA_VERSION})",
                "upgrade the workbench to a version that knows this store; it was not changed",
            )
        for version, statements in MIGRATIONS:
            if current < version <= target:
                for sql in statements:
                    conn.execute(sql)
                now = utc_now()
                conn.execute(
                    "INSERT INTO schema_version (version, applied_at) VALUES (?, ?)",
                    (version, now),
                )
                if version in _POST_STEPS:
                    _POST_STEPS[version](conn, now)
                elif version > LEDGER_VERSION:
                    ledger.append(conn, "schema_version", version, "insert", now)
        conn.execute("COMMIT")
    except sqlite3.Error as exc:
        conn.execute("ROLLBACK")
        raise CaseFileError(
            f"upgrading case store {db_path} to schema version {target} failed ({exc})",
            "the store was left as it was; report this with the workbench version",
        ) from exc
    except BaseException:
        conn.execute("ROLLBACK")
        raise


def connect(db_path: Path, *, target_version: int | None = None) -> sqlite3.Connection:
    """Open (creating or migrating) the store database.

    Parameters
    ----------
    db_path : Path
        The ``cases.sqlite`` file.
    target_version : int, optional
        Migrate only up to this version (used by tests to build an old store).

    Returns
    -------
    sqlite3.Connection
        In autocommit mode (``isolation_level=None``); writers issue
        ``BEGIN IMMEDIATE`` themselves.

    Raises
    ------
    CaseFileError
        If the store is newer than this code.
    StoreIntegrityError
        If the file is not an SQLite database.
    """
    target = SCHEMA_VERSION if target_version is None else target_version
    try:
        conn = sqlite3.connect(
            str(db_path), isolation_level=None, timeout=30.0, factory=StoreConnection
        )
        conn.execute("PRAGMA busy_timeout = 30000")
        conn.execute("PRAGMA journal_mode = WAL")
        conn.execute("PRAGMA foreign_keys = ON")
        conn.execute("PRAGMA synchronous = FULL")
        current = schema_version(conn)
    except (sqlite3.DatabaseError, StoreIntegrityError) as exc:
        raise StoreIntegrityError(
            f"{db_path} is not a readable case-store database ({exc})",
            "point --store at the directory holding cases.sqlite, or restore it from backup",
        ) from exc
    if current > SCHEMA_VERSION:
        conn.close()
        raise CaseFileError(
            f"case store {db_path} has schema version {current}, newer than this software "
            f"knows ({SCHEMA_VERSION})",
            "upgrade the workbench to a version that knows this store; it was not changed",
        )
    if current < target:
        try:
            _migrate(conn, db_path, target)
        except BaseException:
            conn.close()
            raise
    return conn


def connect_readonly(db_path: Path) -> sqlite3.Connection:
    """Open an existing store database for reading only; nothing is created or migrated.

    When no write-ahead log is present (the store was closed cleanly) the file
    is opened ``immutable`` so that not even the ``-wal``/``-shm`` side files
    are created; otherwise the existing log is read in ``mode=ro``.

    Raises
    ------
    StoreIntegrityError
        If the file is not a readable SQLite database or holds no store.
    """
    wal = db_path.with_name(db_path.name + "-wal")
    mode = "mode=ro" if wal.exists() else "mode=ro&immutable=1"
    from urllib.parse import quote

    uri = f"file:{quote(str(db_path.resolve()))}?{mode}"
    try:
        conn = sqlite3.connect(
            uri, uri=True, isolation_level=None, timeout=30.0, factory=StoreConnection
        )
        conn.execute("PRAGMA query_only = ON")
        current = schema_version(conn)
    except (sqlite3.DatabaseError, StoreIntegrityError) as exc:
        raise StoreIntegrityError(
            f"{db_path} is not a readable case-store database ({exc})",
            "the database is damaged or was replaced; restore the store from a backup",
        ) from exc
    if current == 0:
        conn.close()
        raise StoreIntegrityError(
            f"{db_path} holds no case store (no schema version recorded)",
            "the database is empty or was replaced; restore the store from a backup",
        )
    return conn


# Every table is registered with the ledger when the schema is imported.
register_store_tables()
