"""The hashed key log: registration, import, trust and revocation of analysts' keys.

Each change to an analyst's key is one event in a single store-wide chain
(``key_events``: ``seq``, ``fingerprint``, ``kind``, ``actor``, ``reason``,
``at``, ``detail``, ``prev_hash``, ``hash``), written in the same transaction
as the ``analysts`` row it changes. Kinds:

``registered``  a local registration (the key is trusted from the start)
``imported``    arrived in a case bundle: *untrusted* until a local act trusts it
``legacy``      found when a store was upgraded to schema 3 (untrusted: older
                stores did not record whether a key was imported)
``trusted``     a local administrator (``actor``) accepted the key, with a reason
``revoked``     the key was revoked (once), with a reason

:func:`replay_key_log` re-derives every analyst's status, provenance and trust
from the log; ``custody verify`` compares that with the ``analysts`` table, so
flipping a revoked key back to active, or an untrusted one to trusted, without
an event is reported (and an event deleted breaks the chain).
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
from dataclasses import dataclass, field
from typing import Any

__all__ = [
    "KEY_EVENT_KINDS",
    "KeyState",
    "append_key_event",
    "key_event_hash",
    "replay_key_log",
]

KEY_EVENT_KINDS: tuple[str, ...] = ("registered", "imported", "legacy", "trusted", "revoked")
_FIRST = frozenset({"registered", "imported", "legacy"})
_HASHED = ("seq", "fingerprint", "kind", "actor", "reason", "at", "detail", "prev_hash")


def _plain(value: Any) -> Any:
    if isinstance(value, bytes | bytearray | memoryview):
        return {"blob": bytes(value).hex()}
    if isinstance(value, float):
        return {"real": repr(value)}
    return value


def key_event_hash(event: dict[str, Any]) -> str:
    """SHA-256 of the canonical JSON of a key event's hashed fields."""
    text = json.dumps(
        # a BLOB or REAL smuggled in must change the hash, not crash it
        {k: _plain(event.get(k)) for k in _HASHED},
        sort_keys=True,
        separators=(",", ":"),
        ensure_ascii=False,
    )
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def append_key_event(
    conn: sqlite3.Connection,
    fingerprint: str,
    kind: str,
    actor: str,
    at: str,
    detail: dict[str, Any],
    *,
    reason: str | None = None,
) -> int:
    """Append one key event (inside the caller's write transaction); return its rowid."""
    if kind not in KEY_EVENT_KINDS:
        raise ValueError(f"key event kind {kind!r}")
    r = conn.execute("SELECT seq, hash FROM key_events ORDER BY seq DESC LIMIT 1").fetchone()
    seq, prev = (int(r[0]), str(r[1])) if r else (0, "0" * 64)
    ev = {
        "seq": seq + 1,
        "fingerprint": fingerprint,
        "kind": kind,
        "actor": actor,
        "reason": reason,
        "at": at,
        "detail": json.dumps(detail, sort_keys=True, separators=(",", ":"), ensure_ascii=False),
        "prev_hash": prev,
    }
    ev["hash"] = key_event_hash(ev)
    cur = conn.execute(
        "INSERT INTO key_events (seq, fingerprint, kind, actor, reason, at, detail, prev_hash, "
        "hash) VALUES (?,?,?,?,?,?,?,?,?)",
        tuple(ev[k] for k in (*_HASHED[:-1], "prev_hash", "hash")),
    )
    return int(cur.lastrowid)  # type: ignore[arg-type]


@dataclass
class KeyState:
    """What the key log says about one key."""

    fingerprint: str
    name: str
    role: str
    public_key_pem: str
    registered_at: str
    registered_by: str | None
    provenance: str
    status: str = "active"
    revoked_at: str | None = None
    revoked_by: str | None = None
    revoked_reason: str | None = None
    trusted: bool = False
    trusted_by: str | None = None
    trusted_at: str | None = None
    trust_reason: str | None = None
    events: list[int] = field(default_factory=list)

    def columns(self) -> dict[str, Any]:
        """The ``analysts`` columns this state implies."""
        return {
            "name": self.name,
            "role": self.role,
            "public_key_pem": self.public_key_pem,
            "registered_at": self.registered_at,
            "registered_by": self.registered_by,
            "provenance": self.provenance,
            "status": self.status,
            "revoked_at": self.revoked_at,
            "revoked_by": self.revoked_by,
            "revoked_reason": self.revoked_reason,
            "trusted": 1 if self.trusted else 0,
            "trusted_by": self.trusted_by,
            "trusted_at": self.trusted_at,
            "trust_reason": self.trust_reason,
        }


def replay_key_log(
    events: list[dict[str, Any]],
) -> tuple[dict[str, KeyState], list[tuple[int | None, str]]]:
    """Re-derive every key's state from the log.

    Parameters
    ----------
    events : list of dict
        ``key_events`` rows ordered by ``seq``.

    Returns
    -------
    (dict, list)
        Fingerprint → :class:`KeyState`, and the problems found as
        ``(seq, description)`` (chain breaks, altered events, impossible order).
    """
    states: dict[str, KeyState] = {}
    problems: list[tuple[int | None, str]] = []
    prev = "0" * 64
    for n, ev in enumerate(events, start=1):
        seq = ev.get("seq")
        if seq != n:
            problems.append((n, f"key event #{n} is missing (#{seq} follows #{n - 1})"))
            return states, problems
        if ev.get("prev_hash") != prev:
            problems.append((seq, f"key event #{seq} does not link to key event #{n - 1}"))
            return states, problems
        if key_event_hash(ev) != ev.get("hash"):
            problems.append((seq, f"key event #{seq} does not match its hash (altered)"))
            return states, problems
        prev = ev["hash"]
        fp, kind = ev["fingerprint"], ev["kind"]
        try:
            detail = json.loads(ev["detail"]) if isinstance(ev["detail"], str) else None
        except ValueError:
            detail = None
        if not isinstance(detail, dict):
            problems.append((seq, f"key event #{seq} has unreadable detail"))
            continue
        st = states.get(fp)
        if kind in _FIRST:
            if st is not None:
                problems.append((seq, f"key event #{seq}: key {fp} entered twice"))
                continue
            st = states[fp] = KeyState(
                fingerprint=fp,
                name=str(detail.get("name")),
                role=str(detail.get("role")),
                public_key_pem=str(detail.get("public_key_pem")),
                registered_at=ev["at"],
                # a legacy key's registrant was never recorded
                registered_by=None if kind == "legacy" else ev["actor"],
                provenance={"registered": "local"}.get(kind, kind),
            )
            if kind == "registered":
                st.trusted, st.trusted_by, st.trusted_at = True, ev["actor"], ev["at"]
                st.trust_reason = "registered locally"
        elif st is None:
            problems.append((seq, f"key event #{seq}: {kind} of key {fp} that was never entered"))
            continue
        elif kind == "trusted":
            if st.trusted or st.status == "revoked":
                problems.append((seq, f"key event #{seq}: key {fp} cannot be trusted again"))
                continue
            st.trusted, st.trusted_by, st.trusted_at = True, ev["actor"], ev["at"]
            st.trust_reason = ev.get("reason")
        elif kind == "revoked":
            if st.status == "revoked":
                problems.append((seq, f"key event #{seq}: key {fp} revoked twice"))
                continue
            st.status, st.revoked_at, st.revoked_by = "revoked", ev["at"], ev["actor"]
            st.revoked_reason = ev.get("reason")
        st.events.append(int(seq))
    return states, problems
