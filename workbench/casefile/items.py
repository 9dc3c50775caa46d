"""Items and sub-samples: adding one (with its receipt event), reading and listing them.

An item's record carries its custody state, replayed from its chain
(:mod:`~workbench.casefile.chains`). A new item or sub-sample and its first
custody event (``received``, or ``sub-sampled`` in both the parent's and the
sub-sample's chains) are written in one transaction.
"""

from __future__ import annotations

import json
import sqlite3
from datetime import datetime

from workbench.casefile.chains import CustodyChains, ItemRef
from workbench.casefile.hashing import record_hash, utc_now
from workbench.casefile.naming import check_item_number
from workbench.casefile.records import ITEM_HASH_FIELDS, ItemRecord
from workbench.casefile.storebase import stored_json
from workbench.casefile.validate import check_text as _text
from workbench.errors import CaseFileError, InputError

__all__ = ["Items"]


class Items(CustodyChains):
    """The item operations of :class:`~workbench.casefile.store.CaseStore`."""

    def _item_record(self, row: sqlite3.Row) -> ItemRecord:
        state, _ = self._chain_state(row)
        return ItemRecord(
            id=row["id"],
            case_number=row["case_number"],
            item_number=row["item_number"],
            description=row["description"],
            parent_item_number=row["parent_item_number"],
            seal_numbers=tuple(
                stored_json(row["seal_numbers"], f"item {row['id']} seal_numbers", list)
            ),
            storage_location=row["storage_location"],
            created_at=row["created_at"],
            record_hash=row["record_hash"],
            holder=state.holder if state else None,
            seal_state=state.seal_state if state else "unknown",
            seals=state.seals if state else (),
            disposed=state.disposed if state else False,
            event_count=state.count if state else 0,
            current_location=state.location if state else row["storage_location"],
        )

    def get_item(self, item: ItemRef, item_number: str | None = None) -> ItemRecord:
        """Return an item (``get_item("CASE/ITEM")`` or ``get_item(case, item_number)``)."""
        if item_number is not None:
            item = (item, item_number)
        return self._item_record(self._item_row(item))

    def list_items(self, case_number: str) -> list[ItemRecord]:
        """Return a case's items and sub-samples in the order they were added."""
        case = self._case_row(case_number)
        ids = self._conn.execute(
            "SELECT id FROM items WHERE case_id=? ORDER BY id", (case["id"],)
        ).fetchall()
        return [self.get_item(r[0]) for r in ids]

    def add_item(
        self,
        case_number: str,
        item_number: str,
        description: str,
        *,
        parent_item: str | None = None,
        seal_numbers: tuple[str, ...] | list[str] = (),
        storage_location: str | None = None,
        received_by: str,
        received_from: str | None = None,
        at: datetime | str | None = None,
        note: str | None = None,
    ) -> ItemRecord:
        """Add an item (recording its receipt) or a sub-sample (``parent_item``).

        Parameters
        ----------
        case_number, item_number, description : str
            Where it belongs, its number within the case (naming rule of
            :mod:`~workbench.casefile.naming`, e.g. ``1``, ``1a``, ``2.3``), what it is.
        parent_item : str, optional
            Item number (same case) this is a sub-sample of.
        seal_numbers : sequence of str
            Seals on the package as received; the item starts ``sealed`` if any.
        storage_location : str, optional
            Where it is kept.
        received_by : str
            Who received it (becomes the holder).
        received_from : str, optional
            Who handed it over (required for an item; for a sub-sample, the
            holder of the parent unless ``received_by`` is that holder).
        at : datetime or str, optional
            When (default now); may be in the past for paper records.
        note : str, optional
            Free text for the custody event.

        Returns
        -------
        ItemRecord
            The item with its custody state. The ``received`` (or ``sub-sampled``,
            in both the parent's and the sub-sample's chains) custody event is
            written in the same transaction.

        Raises
        ------
        InputError
            If the item number breaks the naming rule (one message naming the
            offending characters and the rule); nothing is written.
        """
        case = self._case_row(case_number)
        # The naming rule applies on creation only (see cases.create_case).
        number = check_item_number(item_number)
        seals = tuple(_text(s, "seal number", max_len=64) for s in seal_numbers)
        for s in seals:
            if "," in str(s):
                raise InputError(f"seal number {s!r} contains a comma", "give each seal separately")
        actor = _text(received_by, "received-by")
        from_party = _text(received_from, "received-from", required=parent_item is None)
        stamp = self._check_at(at)
        created = utc_now()

        def tx(conn: sqlite3.Connection) -> int:
            when = stamp or utc_now()
            if case["status"] != "open":
                raise CaseFileError(
                    f"case {case['case_number']} is {case['status']}; items cannot be added",
                    "reopen the case first",
                )
            if conn.execute(
                "SELECT 1 FROM items WHERE case_id=? AND item_number=?", (case["id"], number)
            ).fetchone():
                raise CaseFileError(
                    f"item {case['case_number']}/{number} already exists",
                    "choose another item number",
                )
            parent_row = None
            if parent_item is not None:
                parent_row = self._item_row((case["case_number"], str(parent_item)))
            fields = {
                "case_number": case["case_number"],
                "case_hash": case["record_hash"],
                "item_number": number,
                "description": _text(description, "item description"),
                "parent_item_number": parent_row["item_number"] if parent_row else None,
                "seal_numbers": list(seals),
                "storage_location": _text(storage_location, "storage location", required=False),
                "created_at": created,
            }
            digest = record_hash(fields, ITEM_HASH_FIELDS)
            cur = conn.execute(
                "INSERT INTO items (case_id, item_number, description, parent_item_id, "
                "seal_numbers, storage_location, created_at, record_hash) "
                "VALUES (?,?,?,?,?,?,?,?)",
                (
                    case["id"],
                    number,
                    fields["description"],
                    parent_row["id"] if parent_row else None,
                    json.dumps(list(seals)),
                    fields["storage_location"],
                    created,
                    digest,
                ),
            )
            item_id = int(cur.lastrowid)  # type: ignore[arg-type]
            self._ledger(conn, "items", item_id, "insert")
            link = None
            if parent_row is not None:
                parent_ev = self._append(
                    conn,
                    parent_row,
                    {
                        "kind": "sub-sampled",
                        "at": when,
                        "actor": actor,
                        "from_party": from_party,
                        "to_party": actor,
                        "location": fields["storage_location"],
                        "note": note or f"sub-sample {number} taken",
                        "ref_kind": "sub-sample",
                        "ref_key": number,
                        "ref_hash": digest,
                    },
                )
                link = parent_ev["hash"]
            item_row = self._item_row(item_id)
            self._append(
                conn,
                item_row,
                {
                    "kind": "sub-sampled" if parent_row is not None else "received",
                    "at": when,
                    "actor": actor,
                    "from_party": from_party,
                    "to_party": actor,
                    "location": fields["storage_location"],
                    # A sub-sample is taken from an opened item, so it starts open
                    # (or sealed at once); only a received item's state may be unknown.
                    "seal_state": "sealed"
                    if seals
                    else ("open" if parent_row is not None else "unknown"),
                    "seal_number": ",".join(seals) or None,
                    "note": note,
                    "ref_kind": "item",
                    "ref_key": fields["parent_item_number"],
                    "ref_hash": digest,
                },
                prev_hash=link,
            )
            return item_id

        return self.get_item(self._write(tx))

    def _scope(
        self, case_number: str | None, item: ItemRef | None, _alias: str
    ) -> tuple[str, tuple]:
        if item is not None:
            return "WHERE i.id=?", (self._item_row(item)["id"],)
        if case_number is not None:
            return "WHERE c.id=?", (self._case_row(case_number)["id"],)
        return "", ()
