"""Analysts' keys in the case store: registration, import, trust, revocation.

Every change is written together with its event in the hashed key log
(:mod:`workbench.casefile.keylog`) and its ledger entry, in one transaction.
A key registered here is *local* and trusted from the start; a key that
arrives in a case bundle is *imported* and untrusted, and a key found when a
store was upgraded is *legacy* and untrusted; either becomes trusted only by
:func:`trust_analyst`, a recorded act of a named local administrator with a
reason. Untrusted keys cannot sign in this store, and sheets they signed do
not verify against it.
"""

from __future__ import annotations

import json
import sqlite3
from typing import Any

from workbench.casefile import ledger
from workbench.casefile.hashing import utc_now
from workbench.casefile.keylog import append_key_event
from workbench.casefile.records import AnalystRecord
from workbench.errors import CaseFileError, InputError, NotFoundError

__all__ = [
    "get_analyst",
    "insert_imported_analyst",
    "key_log",
    "register_analyst",
    "revoke_analyst",
    "trust_analyst",
]


def _text(value: Any, what: str, max_len: int = 2000) -> str:
    if not isinstance(value, str) or not value.strip():
        raise InputError(f"{what} is empty", f"give a {what}")
    value = value.strip()
    if len(value) > max_len:
        raise InputError(f"{what} is {len(value)} characters long", f"keep it under {max_len}")
    return value


def _ledger(conn: sqlite3.Connection, table: str, row_id: int, action: str, now: str) -> None:
    ledger.append(conn, table, int(row_id), action, now)


def _key_event(
    conn: sqlite3.Connection, fp: str, kind: str, actor: str, at: str, **kw: Any
) -> None:
    detail = kw.pop("detail", {})
    rid = append_key_event(conn, fp, kind, actor, at, detail, **kw)
    _ledger(conn, "key_events", rid, "insert", at)


def register_analyst(
    store: Any,
    name: str,
    role: str,
    public_key_pem: bytes | str,
    *,
    registered_by: str = "local registration",
) -> AnalystRecord:
    """Register an analyst's Ed25519 public key locally (trusted from the start).

    The fingerprint is ``"SHA256:"`` + hex SHA-256 of the raw 32-byte key.

    Returns
    -------
    AnalystRecord
        The new record.
    """
    from workbench.crypto import fingerprint_of, load_public_key
    from workbench.crypto import public_key_pem as pem_of
    from workbench.errors import KeyFileError

    pem = (
        public_key_pem.encode("ascii", "replace")
        if isinstance(public_key_pem, str)
        else public_key_pem
    )
    try:
        key = load_public_key(bytes(pem))
    except KeyFileError as exc:
        raise InputError(exc.problem, "register an Ed25519 key ('workbench keys create')") from exc
    fp = fingerprint_of(key)
    pem_text = pem_of(key).decode("ascii")
    who, what, by = (
        _text(name, "analyst name"),
        _text(role, "analyst role"),
        _text(registered_by, "registered-by"),
    )

    def tx(conn: sqlite3.Connection) -> None:
        if conn.execute("SELECT 1 FROM analysts WHERE fingerprint=?", (fp,)).fetchone():
            raise CaseFileError(f"key {fp} is already registered", "nothing to do")
        now = utc_now()
        cur = conn.execute(
            "INSERT INTO analysts (name, role, public_key_pem, fingerprint, status, "
            "registered_at, provenance, registered_by, trusted, trusted_by, trusted_at, "
            "trust_reason) VALUES (?,?,?,?,'active',?,'local',?,1,?,?,'registered locally')",
            (who, what, pem_text, fp, now, by, by, now),
        )
        _ledger(conn, "analysts", cur.lastrowid, "insert", now)
        detail = {"name": who, "role": what, "public_key_pem": pem_text}
        _key_event(conn, fp, "registered", by, now, detail=detail)

    store._write(tx)
    return get_analyst(store, fp)


def insert_imported_analyst(
    conn: sqlite3.Connection, record: dict[str, Any], source: str, now: str
) -> None:
    """Enter a key that arrived in a bundle: imported, *untrusted* (inside a transaction).

    A revocation the bundle reports is kept (it can only lower trust).
    """
    fp = record["fingerprint"]
    by = f"bundle import ({source})"
    cur = conn.execute(
        "INSERT INTO analysts (name, role, public_key_pem, fingerprint, status, registered_at, "
        "provenance, registered_by, trusted) VALUES (?,?,?,?,'active',?,'imported',?,0)",
        (record["name"], record["role"], record["public_key_pem"], fp, now, by),
    )
    _ledger(conn, "analysts", cur.lastrowid, "insert", now)
    detail = {
        "name": record["name"],
        "role": record["role"],
        "public_key_pem": record["public_key_pem"],
        "source": source,
        "registered_at_source": record.get("registered_at"),
    }
    _key_event(
        conn,
        fp,
        "imported",
        by,
        now,
        detail=detail,
        reason="arrived in a case bundle; untrusted until a local administrator trusts it",
    )
    if record.get("status") == "revoked":
        why = f"revoked at the source at {record.get('revoked_at')}: {record.get('revoked_reason')}"
        conn.execute(
            "UPDATE analysts SET status='revoked', revoked_at=?, revoked_reason=?, revoked_by=? "
            "WHERE id=?",
            (now, why, by, cur.lastrowid),
        )
        _ledger(conn, "analysts", cur.lastrowid, "update", now)
        _key_event(conn, fp, "revoked", by, now, reason=why)


def get_analyst(store: Any, fingerprint_or_name: str) -> AnalystRecord:
    """Return an analyst by fingerprint, or by name (the active key, else the latest)."""
    key = str(fingerprint_or_name).strip()
    conn = store.connection
    r = conn.execute("SELECT * FROM analysts WHERE fingerprint=?", (key,)).fetchone()
    if r is None:
        r = conn.execute(
            "SELECT * FROM analysts WHERE name=? ORDER BY status='active' DESC, id DESC", (key,)
        ).fetchone()
    if r is None:
        raise NotFoundError(
            f"no analyst or key {key!r} is registered in {store.root}",
            "register the analyst's public key first ('workbench keys register')",
        )
    values = {k: r[k] for k in r.keys() if k in AnalystRecord.__dataclass_fields__}
    values["trusted"] = bool(values.get("trusted"))
    return AnalystRecord(**values)


def _exact(store: Any, fingerprint: str) -> AnalystRecord:
    a = get_analyst(store, fingerprint)
    if a.fingerprint != str(fingerprint).strip():
        raise InputError(
            f"this needs the key fingerprint, got {fingerprint!r}",
            f"give the fingerprint ({a.fingerprint})",
        )
    return a


def revoke_analyst(store: Any, fingerprint: str, reason: str, actor: str) -> AnalystRecord:
    """Revoke a key (once); recorded in the key log."""
    a = _exact(store, fingerprint)
    if a.status == "revoked":
        raise CaseFileError(f"key {a.fingerprint} was already revoked at {a.revoked_at}", "")
    why, who = _text(reason, "revocation reason"), _text(actor, "actor")

    def tx(conn: sqlite3.Connection) -> None:
        now = utc_now()
        conn.execute(
            "UPDATE analysts SET status='revoked', revoked_at=?, revoked_reason=?, "
            "revoked_by=? WHERE id=?",
            (now, why, who, a.id),
        )
        _ledger(conn, "analysts", a.id, "update", now)
        _key_event(conn, a.fingerprint, "revoked", who, now, reason=why)

    store._write(tx)
    return get_analyst(store, a.fingerprint)


def trust_analyst(store: Any, fingerprint: str, by: str, reason: str) -> AnalystRecord:
    """Record a local administrator's trust in an imported or legacy key.

    Parameters
    ----------
    store : CaseStore
        The open store.
    fingerprint : str
        The key's fingerprint (names are chosen by whoever made the bundle, so
        they are not accepted here).
    by : str
        The local administrator taking responsibility.
    reason : str
        Why the key is trusted (how it was confirmed with its owner).

    Returns
    -------
    AnalystRecord
        The key, now trusted.
    """
    a = _exact(store, fingerprint)
    if a.trusted:
        raise CaseFileError(f"key {a.fingerprint} is already trusted ({a.provenance_text})", "")
    if a.status == "revoked":
        raise CaseFileError(
            f"key {a.fingerprint} was revoked at {a.revoked_at}; a revoked key is never trusted",
            "ask its owner for their current key",
        )
    who, why = _text(by, "administrator (--by)"), _text(reason, "trust reason")

    def tx(conn: sqlite3.Connection) -> None:
        now = utc_now()
        conn.execute(
            "UPDATE analysts SET trusted=1, trusted_by=?, trusted_at=?, trust_reason=? WHERE id=?",
            (who, now, why, a.id),
        )
        _ledger(conn, "analysts", a.id, "update", now)
        _key_event(conn, a.fingerprint, "trusted", who, now, reason=why)

    store._write(tx)
    return get_analyst(store, a.fingerprint)


def key_log(store: Any, fingerprint: str | None = None) -> list[dict[str, Any]]:
    """Return key events (of one key, or all), oldest first, with ``detail`` parsed."""
    sql = "SELECT * FROM key_events"
    args: tuple = ()
    if fingerprint is not None:
        sql, args = sql + " WHERE fingerprint=?", (fingerprint,)
    out = []
    for r in store.connection.execute(sql + " ORDER BY seq", args):
        d = {k: r[k] for k in r.keys() if k != "id"}
        try:
            d["detail"] = json.loads(d["detail"])
        except (TypeError, ValueError):
            pass
        d["detail"] = (
            {k: v for k, v in d["detail"].items() if k != "public_key_pem"}
            if isinstance(d["detail"], dict)
            else d["detail"]
        )
        out.append(d)
    return out
