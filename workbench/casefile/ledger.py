"""The store ledger: one hash chain over every row of every covered table.

Per-item custody chains and record hashes say whether what is *there* was
altered; they cannot say that something is *missing* when a whole record
(a case, an item with its events, an analyst, a key event) is deleted behind
the tool's back. The ledger closes that gap. Every row the store writes, and
every permitted change to a row (a case's status, a key's revocation or
trust), appends one entry in the same transaction::

    seq, table, row_id, action, identity, row_hash, recorded_at, prev_hash, hash

``row_hash`` is the SHA-256 of the canonical JSON of *all* the row's columns
(local ids included: the ledger belongs to this store, it is never exported),
``identity`` says in words which record it is (``item HLX-2026-0007/1.1``),
and ``hash`` chains each entry to the one before it.

:func:`check_ledger` then finds, with the record's identity:

* a ledger entry deleted in the middle (``ledger-gap``), altered
  (``ledger-altered``) or relinked (``ledger-broken-link``);
* a covered row deleted (``missing-row``: the ledger names it, the table has
  not got it), altered (``altered-row``: its hash is not the latest the
  ledger holds for it, so flipping a status back is caught), or inserted or
  stripped of its last ledger entry (``unledgered-row``);
* a row whose parent is gone (``orphan-row``, from ``PRAGMA foreign_key_check``);
* a covered table dropped (``missing-table``) or a table nobody covers
  (``uncovered-table``).

So deleting any single row of any table, the ledger's own included, is
reported. Limit: someone who rewrites the whole ledger consistently (every
entry after the change re-hashed) is detected only against a ledger head
kept outside the store (``custody verify --anchor SEQ:HASH`` with a head
printed earlier by ``custody anchor``).

Adding a table
--------------
A table joins the coverage by :func:`register_table` (its name and a function
that names a row in words) in the module that defines it, and every write to
it calls :func:`append` in the same transaction (``CaseStore._ledger`` does
this). Existing rows of a table created by a later migration are empty; a
migration that back-fills rows calls :func:`append` for each.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

__all__ = [
    "LEDGER_ACTIONS",
    "LEDGER_TABLE",
    "LedgerProblem",
    "append",
    "baseline",
    "check_ledger",
    "covered_tables",
    "head",
    "register_table",
    "row_digest",
]

#: Name of the ledger table itself.
LEDGER_TABLE: str = "ledger"
#: What an entry records: a new row, a permitted change, or a row found at upgrade.
LEDGER_ACTIONS: tuple[str, ...] = ("insert", "update", "baseline")
_GENESIS = "0" * 64

Describe = Callable[[sqlite3.Connection, dict[str, Any]], str]
_REGISTRY: dict[str, Describe] = {}


def register_table(table: str, describe: Describe) -> None:
    """Put a table under the ledger's coverage.

    Parameters
    ----------
    table : str
        The table name.
    describe : callable
        ``(conn, row) -> str``: the row's identity in words (natural keys,
        not only ids). It must not fail when the row's parents are missing.
    """
    _REGISTRY[table] = describe


def covered_tables() -> tuple[str, ...]:
    """The tables under coverage, in registration order."""
    return tuple(_REGISTRY)


def _plain(value: Any) -> Any:
    # Types are kept apart so that a BLOB smuggled into a text column, or an
    # integer turned into a float, changes the hash.
    if isinstance(value, bytes | bytearray | memoryview):
        return {"blob": bytes(value).hex()}
    if isinstance(value, float):
        return {"real": repr(value)}
    return value


def row_digest(table: str, row: dict[str, Any]) -> str:
    """SHA-256 of the canonical JSON of a row (every column, types kept apart)."""
    body = {"table": table, "row": {k: _plain(v) for k, v in row.items()}}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _entry_hash(entry: dict[str, Any]) -> str:
    names = ("seq", "tbl", "row_id", "action", "identity", "row_hash", "recorded_at", "prev_hash")
    text = json.dumps({n: _plain(entry[n]) for n in names}, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _rows(conn: sqlite3.Connection, sql: str, args: tuple = ()) -> list[dict[str, Any]]:
    cur = conn.execute(sql, args)
    names = [d[0] for d in cur.description]
    return [dict(zip(names, r, strict=True)) for r in cur.fetchall()]


def _row(conn: sqlite3.Connection, table: str, row_id: int) -> dict[str, Any] | None:
    rows = _rows(conn, f'SELECT rowid AS "__rowid", * FROM "{table}" WHERE rowid=?', (row_id,))
    if not rows:
        return None
    row = rows[0]
    row.pop("__rowid")
    return row


def _identity(conn: sqlite3.Connection, table: str, row: dict[str, Any]) -> str:
    describe = _REGISTRY.get(table)
    try:
        return describe(conn, row) if describe else f"{table} row"
    except (sqlite3.Error, KeyError, TypeError, ValueError):
        return f"{table} row"


def head(conn: sqlite3.Connection) -> tuple[int, str]:
    """Return ``(seq, hash)`` of the latest ledger entry (``(0, zeros)`` when empty)."""
    r = conn.execute(f"SELECT seq, hash FROM {LEDGER_TABLE} ORDER BY seq DESC LIMIT 1").fetchone()
    return (int(r[0]), str(r[1])) if r else (0, _GENESIS)


def append(
    conn: sqlite3.Connection, table: str, row_id: int, action: str, recorded_at: str
) -> dict[str, Any]:
    """Append the ledger entry for one row just written (inside the writer's transaction).

    Parameters
    ----------
    conn : sqlite3.Connection
        In a write transaction.
    table : str
        A covered table.
    row_id : int
        The row's rowid.
    action : {"insert", "update", "baseline"}
        What happened to it.
    recorded_at : str
        Stored timestamp.

    Returns
    -------
    dict
        The entry written.
    """
    if table not in _REGISTRY:
        raise KeyError(f"table {table!r} is not covered by the ledger (register_table)")
    row = _row(conn, table, row_id)
    if row is None:
        raise KeyError(f"{table} row {row_id} does not exist")
    seq, prev = head(conn)
    entry = {
        "seq": seq + 1,
        "tbl": table,
        "row_id": int(row_id),
        "action": action,
        "identity": _identity(conn, table, row),
        "row_hash": row_digest(table, row),
        "recorded_at": recorded_at,
        "prev_hash": prev,
    }
    entry["hash"] = _entry_hash(entry)
    conn.execute(
        f"INSERT INTO {LEDGER_TABLE} (seq, tbl, row_id, action, identity, row_hash, "
        "recorded_at, prev_hash, hash) VALUES (?,?,?,?,?,?,?,?,?)",
        tuple(entry[k] for k in (*entry.keys(),)),
    )
    return entry


def _tables(conn: sqlite3.Connection) -> set[str]:
    return {
        r[0]
        for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")
        if not str(r[0]).startswith("sqlite_")
    }


def baseline(conn: sqlite3.Connection, recorded_at: str) -> int:
    """Enter every existing row of every covered table (used once, when the ledger is made)."""
    present = _tables(conn)
    n = 0
    for table in _REGISTRY:
        if table not in present:
            continue
        for (rid,) in conn.execute(f'SELECT rowid FROM "{table}" ORDER BY rowid').fetchall():
            append(conn, table, rid, "baseline", recorded_at)
            n += 1
    return n


@dataclass(frozen=True)
class LedgerProblem:
    """One ledger finding (turned into a :class:`~workbench.casefile.verify.Break`)."""

    kind: str
    identity: str
    detail: str
    seq: int | None = None
    expected: str | None = None
    found: str | None = None


def check_ledger(
    conn: sqlite3.Connection, anchor: tuple[int, str] | None = None
) -> list[LedgerProblem]:
    """Check the ledger chain and every covered row against it (reads only).

    Parameters
    ----------
    conn : sqlite3.Connection
        Open store database (read-only is enough).
    anchor : (int, str), optional
        A ledger head recorded earlier outside the store: entry ``seq`` must
        still exist with this hash.

    Returns
    -------
    list of LedgerProblem
        Empty when everything is accounted for.
    """
    out: list[LedgerProblem] = []
    present = _tables(conn)
    if LEDGER_TABLE not in present:
        return [LedgerProblem("missing-table", "table ledger", "the store ledger is missing")]
    entries = _rows(conn, f"SELECT * FROM {LEDGER_TABLE} ORDER BY seq")
    latest: dict[tuple[str, int], dict[str, Any]] = {}
    prev = _GENESIS
    expected_seq = 1
    for e in entries:
        if e["seq"] != expected_seq:
            out.append(
                LedgerProblem(
                    "ledger-gap",
                    f"ledger entry #{expected_seq}",
                    f"ledger entries #{expected_seq}..#{e['seq'] - 1} are missing (deleted)",
                    expected_seq,
                    f"#{expected_seq}",
                    f"#{e['seq']}",
                )
            )
        elif e["prev_hash"] != prev:
            out.append(
                LedgerProblem(
                    "ledger-broken-link",
                    f"ledger entry #{e['seq']} ({e['identity']})",
                    "prev_hash is not the hash of the entry before it",
                    e["seq"],
                    prev,
                    e["prev_hash"],
                )
            )
        recomputed = _entry_hash(e)
        if recomputed != e["hash"]:
            out.append(
                LedgerProblem(
                    "ledger-altered",
                    f"ledger entry #{e['seq']} ({e['identity']})",
                    "the entry does not match its hash",
                    e["seq"],
                    e["hash"],
                    recomputed,
                )
            )
        prev = e["hash"]
        expected_seq = e["seq"] + 1
        latest[(e["tbl"], e["row_id"])] = e
    if anchor is not None:
        a_seq, a_hash = anchor
        match = next((e for e in entries if e["seq"] == a_seq), None)
        if match is None or match["hash"] != a_hash:
            out.append(
                LedgerProblem(
                    "anchor-mismatch",
                    f"ledger entry #{a_seq}",
                    "the ledger no longer holds the head recorded earlier (rolled back or "
                    "rewritten)",
                    a_seq,
                    a_hash,
                    match["hash"] if match else "no such entry",
                )
            )
    for table in sorted(present - set(_REGISTRY) - {LEDGER_TABLE}):
        out.append(
            LedgerProblem(
                "uncovered-table", f"table {table}", "a table the store does not know or cover"
            )
        )
    for table in _REGISTRY:
        if table not in present:
            if any(t == table for t, _ in latest):
                out.append(
                    LedgerProblem("missing-table", f"table {table}", "a covered table was dropped")
                )
            continue
        rows = _rows(conn, f'SELECT rowid AS "__rowid", * FROM "{table}" ORDER BY rowid')
        seen: set[int] = set()
        for row in rows:
            rid = int(row.pop("__rowid"))
            seen.add(rid)
            entry = latest.get((table, rid))
            digest = row_digest(table, row)
            if entry is None:
                out.append(
                    LedgerProblem(
                        "unledgered-row",
                        _identity(conn, table, row),
                        f"{table} row {rid} has no ledger entry (inserted behind the store's "
                        "back, or its ledger entry was deleted)",
                        None,
                        "a ledger entry",
                        digest,
                    )
                )
            elif entry["row_hash"] != digest:
                out.append(
                    LedgerProblem(
                        "altered-row",
                        entry["identity"],
                        f"{table} row {rid} differs from what the ledger recorded last "
                        f"(entry #{entry['seq']}, {entry['action']})",
                        entry["seq"],
                        entry["row_hash"],
                        digest,
                    )
                )
        for (t, rid), entry in latest.items():
            if t == table and rid not in seen:
                out.append(
                    LedgerProblem(
                        "missing-row",
                        entry["identity"],
                        f"{table} row {rid} is in the ledger (entry #{entry['seq']}) but not "
                        "in the store: it was deleted",
                        entry["seq"],
                        entry["row_hash"],
                        "no row",
                    )
                )
    try:
        orphans = conn.execute("PRAGMA foreign_key_check").fetchall()
    except sqlite3.Error:
        orphans = []
    for table, rid, parent, _fk in orphans:
        row = _row(conn, table, rid) if rid is not None else None
        ident = _identity(conn, table, row) if row is not None else f"{table} row {rid}"
        out.append(
            LedgerProblem(
                "orphan-row",
                ident,
                f"{table} row {rid} names a {parent} row that does not exist",
            )
        )
    return out
