"""Item references and the hash-chained custody log of each item.

Items are named by an *item reference*: an :class:`ItemRecord`, a row id
(``int``), a ``(case_number, item_number)`` tuple, or the text
``"CASE/ITEM"`` (split at the last ``/``; item numbers cannot contain ``/``).
:class:`CustodyChains` resolves a reference to its row, replays an item's
chain (caching the state and re-reading only new events), appends an event
at the chain's head inside the caller's transaction (rules in
:mod:`workbench.casefile.custody`), and offers the custody-event API
(:meth:`~CustodyChains.add_custody_event`, :meth:`~CustodyChains.custody_events`).
"""

from __future__ import annotations

import sqlite3
from datetime import UTC, datetime, timedelta
from typing import Any

from workbench.casefile.cases import CaseRecords
from workbench.casefile.custody import (
    EVENT_FIELDS,
    EVENT_KINDS,
    SEAL_STATES,
    STORE_ONLY_KINDS,
    ChainState,
    apply_event,
    event_hash,
)
from workbench.casefile.hashing import GENESIS_HASH, TIME_FORMAT, normalise_time, utc_now
from workbench.casefile.records import CustodyEvent, ItemRecord
from workbench.casefile.validate import check_text as _text
from workbench.errors import (
    CustodyRuleError,
    InputError,
    NotFoundError,
    StoreIntegrityError,
    ValueRangeError,
)

__all__ = ["CustodyChains", "ItemRef"]

ItemRef = Any  # ItemRecord | int | tuple[str, str] | str ("CASE/ITEM")

_FUTURE_SLACK = timedelta(minutes=5)


def _event_dict(row: sqlite3.Row | dict[str, Any]) -> dict[str, Any]:
    return {k: row[k] for k in (*EVENT_FIELDS, "id", "hash")}


class CustodyChains(CaseRecords):
    """Item references and custody chains of :class:`~workbench.casefile.store.CaseStore`."""

    def _item_row(self, item: ItemRef) -> sqlite3.Row:
        base = (
            "SELECT i.*, c.case_number, c.record_hash AS case_hash, c.status AS case_status, "
            "p.item_number AS parent_item_number FROM items i JOIN cases c ON c.id=i.case_id "
            "LEFT JOIN items p ON p.id=i.parent_item_id "
        )
        if isinstance(item, ItemRecord):
            item = item.id
        if isinstance(item, bool):
            raise InputError(f"item reference {item!r}", "give CASE/ITEM")
        if isinstance(item, int):
            row = self._conn.execute(base + "WHERE i.id=?", (item,)).fetchone()
            label = f"id {item}"
        else:
            if isinstance(item, str):
                if "/" not in item:
                    raise InputError(
                        f"item reference {item!r} does not name its case",
                        "write it as CASE/ITEM, e.g. LAB-2026-0412/3",
                    )
                case_number, item_number = item.rsplit("/", 1)
            elif isinstance(item, tuple) and len(item) == 2:
                case_number, item_number = item
            else:
                raise InputError(f"item reference {item!r}", "give CASE/ITEM")
            self._case_row(case_number)
            row = self._conn.execute(
                base + "WHERE c.case_number=? AND i.item_number=?",
                (str(case_number).strip(), str(item_number).strip()),
            ).fetchone()
            label = f"{case_number}/{item_number}"
        if row is None:
            raise NotFoundError(
                f"no item {label} in the store {self.root}",
                "check the item number with 'workbench item list CASE'",
            )
        return row

    def _events(self, item_id: int, after_seq: int = 0) -> list[dict[str, Any]]:
        rows = self._conn.execute(
            "SELECT e.*, c.case_number, i.item_number FROM custody_events e "
            "JOIN items i ON i.id=e.item_id JOIN cases c ON c.id=i.case_id "
            "WHERE e.item_id=? AND e.seq>? ORDER BY e.seq",
            (item_id, after_seq),
        ).fetchall()
        return [_event_dict(r) for r in rows]

    def _chain_state(self, item_row: sqlite3.Row) -> tuple[ChainState | None, str | None]:
        """Return (state, head hash) of an item's chain, replaying only new events."""
        item_id = item_row["id"]
        label = f"{item_row['case_number']}/{item_row['item_number']}"
        cached = self._chain_cache.get(item_id)
        state: ChainState | None = None
        head: str | None = None
        after = 0
        if cached is not None:
            state, head = cached
            after = state.count
        new = self._events(item_id, after)
        if cached is not None and new and new[0]["prev_hash"] != head:
            state, head, new = None, None, self._events(item_id, 0)
        if cached is not None and not new:
            # Make sure nothing was rolled back under the cache.
            row = self._conn.execute(
                "SELECT seq, hash FROM custody_events WHERE item_id=? ORDER BY seq DESC LIMIT 1",
                (item_id,),
            ).fetchone()
            if row is None or row[0] != state.count or row[1] != head:  # type: ignore[union-attr]
                state, head, new = None, None, self._events(item_id, 0)
        for ev in new:
            try:
                state = apply_event(state, ev, label)
            except CustodyRuleError as exc:
                raise StoreIntegrityError(
                    f"the stored custody chain of {label} breaks a rule at event #{ev['seq']}: "
                    f"{exc.problem}",
                    "run 'workbench custody verify' and restore the store from a backup",
                ) from exc
            head = ev["hash"]
        if state is not None and head is not None:
            self._chain_cache[item_id] = (state, head)
        return state, head

    def _check_at(self, at: datetime | str | None) -> str | None:
        """Normalise an explicit event time; ``None`` stays None (stamped inside the write)."""
        if at is None:
            return None
        stamp = normalise_time(at, "event time")
        limit = (datetime.now(UTC) + _FUTURE_SLACK).strftime(TIME_FORMAT)
        if stamp > limit:
            raise ValueRangeError(
                f"event time {stamp} is in the future",
                "give the time the event happened (UTC 'Z' or with an offset)",
            )
        return stamp

    def _append(
        self,
        conn: sqlite3.Connection,
        item_row: sqlite3.Row,
        fields: dict[str, Any],
        *,
        prev_hash: str | None = None,
    ) -> dict[str, Any]:
        """Check and insert one event at the head of an item's chain (inside a transaction)."""
        state, head = self._chain_state(item_row)
        label = f"{item_row['case_number']}/{item_row['item_number']}"
        ev = {name: None for name in EVENT_FIELDS}
        ev.update(fields)
        ev["case_number"] = item_row["case_number"]
        ev["item_number"] = item_row["item_number"]
        ev["seq"] = (state.count if state else 0) + 1
        ev["recorded_at"] = utc_now()
        if ev.get("at") is None:
            # "now" is taken while holding the write lock, so concurrent writers
            # stamp their events in commit order and the chain's times never run back.
            ev["at"] = ev["recorded_at"]
        if state is not None:
            if ev.get("seal_state") is None:
                ev["seal_state"] = {"sealed": "sealed", "opened": "open"}.get(
                    ev["kind"], state.seal_state
                )
            if ev.get("seal_number") is None and ev["kind"] not in ("sealed", "opened"):
                ev["seal_number"] = ",".join(state.seals) or None
        elif ev.get("seal_state") is None:
            ev["seal_state"] = "unknown"
        ev["prev_hash"] = head if head is not None else (prev_hash or GENESIS_HASH)
        new_state = apply_event(state, ev, label)
        ev["hash"] = event_hash(ev)
        cur = conn.execute(
            "INSERT INTO custody_events (item_id, seq, kind, at, actor, from_party, to_party, "
            "location, seal_state, seal_number, note, corrects_seq, ref_kind, ref_key, ref_hash, "
            "recorded_at, prev_hash, hash) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
            (
                item_row["id"],
                ev["seq"],
                ev["kind"],
                ev["at"],
                ev["actor"],
                ev["from_party"],
                ev["to_party"],
                ev["location"],
                ev["seal_state"],
                ev["seal_number"],
                ev["note"],
                ev["corrects_seq"],
                ev["ref_kind"],
                ev["ref_key"],
                ev["ref_hash"],
                ev["recorded_at"],
                ev["prev_hash"],
                ev["hash"],
            ),
        )
        ev["id"] = cur.lastrowid
        self._ledger(conn, "custody_events", ev["id"], "insert")
        self._chain_cache[item_row["id"]] = (new_state, ev["hash"])
        return ev

    # ------------------------------------------------------------------ custody
    def add_custody_event(
        self,
        item: ItemRef,
        kind: str,
        actor: str,
        *,
        from_party: str | None = None,
        to_party: str | None = None,
        location: str | None = None,
        seal_state: str | None = None,
        seal_number: str | None = None,
        note: str | None = None,
        at: datetime | str | None = None,
        corrects: int | CustodyEvent | None = None,
    ) -> CustodyEvent:
        """Append a custody event to an item's chain (rules in :mod:`~workbench.casefile.custody`).

        Parameters
        ----------
        item : ItemRef
            The item.
        kind : str
            One of received, transferred, sealed, opened, returned, disposed,
            note, correction (sub-sampled, analysed and reported are written by
            :meth:`add_item`, :meth:`add_analysis` and :meth:`add_findings_sheet`).
        actor : str
            Who did it.
        from_party, to_party, location : str, optional
            Hand-over parties and place.
        seal_state : {"sealed", "open", "unknown"}, optional
            Default: the item's current state (``sealed`` for sealing, ``open`` for opening).
        seal_number : str, optional
            Seal applied (sealed) or found and broken (opened); comma-separated for several.
        note : str, optional
            Free text; required for a correction (what it corrects).
        at : datetime or str, optional
            When (default now).
        corrects : int or CustodyEvent, optional
            For a correction: the event (its ``seq``) being corrected.

        Returns
        -------
        CustodyEvent
            The stored event.

        Raises
        ------
        CustodyRuleError
            Naming the rule, item and event; nothing is written.
        """
        if kind not in EVENT_KINDS:
            raise InputError(f"unknown custody event kind {kind!r}", f"use one of {EVENT_KINDS}")
        if kind in STORE_ONLY_KINDS:
            how = {
                "sub-sampled": "'item add --parent'",
                "analysed": "'workbench analyse'",
                "reported": "'workbench findings issue'",
            }[kind]
            raise CustodyRuleError(
                f"a {kind!r} event is recorded together with its record, not on its own",
                f"use {how}; nothing was written",
            )
        if seal_state is not None and seal_state not in SEAL_STATES:
            raise InputError(f"seal state {seal_state!r}", f"use one of {SEAL_STATES}")
        corrects_seq = corrects.seq if isinstance(corrects, CustodyEvent) else corrects
        fields = {
            "kind": kind,
            "actor": _text(actor, "actor"),
            "from_party": _text(from_party, "from-party", required=False),
            "to_party": _text(to_party, "to-party", required=False),
            "location": _text(location, "location", required=False),
            "seal_state": seal_state,
            "seal_number": _text(seal_number, "seal number", required=False),
            "note": _text(note, "note", required=False, max_len=10000),
            "corrects_seq": corrects_seq,
        }
        stamp = self._check_at(at)
        row = self._item_row(item)

        def tx(conn: sqlite3.Connection) -> dict[str, Any]:
            return self._append(conn, row, {**fields, "at": stamp})

        ev = self._write(tx)
        return self._event_record(ev)

    @staticmethod
    def _event_record(ev: dict[str, Any]) -> CustodyEvent:
        return CustodyEvent(**{k: ev[k] for k in ("id", *EVENT_FIELDS, "hash")})

    def custody_events(self, item: ItemRef, *, own_only: bool = False) -> list[CustodyEvent]:
        """Return an item's custody history, oldest first.

        A sub-sample's history starts with its parent's events up to and
        including the parent's ``sub-sampled`` event for it (recursively).
        """
        row = self._item_row(item)
        own = [self._event_record(e) for e in self._events(row["id"])]
        if own_only or row["parent_item_id"] is None or not own:
            return own
        parent_hist = self.custody_events(row["parent_item_id"])
        upto = [e for e in parent_hist]
        for i, e in enumerate(parent_hist):
            if e.hash == own[0].prev_hash:
                upto = parent_hist[: i + 1]
                break
        return upto + own
