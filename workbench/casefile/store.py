"""The case store: cases, items, custody, measurements, analyses, findings sheets.

One SQLite database (``cases.sqlite``) and a content-addressed ``files/``
folder under a store directory chosen, in priority, by an explicit path, the
``WORKBENCH_STORE`` environment variable, or ``<repo>/casefiles/``.

Every write that reads a custody chain's head runs in one ``BEGIN IMMEDIATE``
transaction (so two processes cannot both extend the same head), retried
with bounded, jittered backoff while another writer holds the lock. Files
are written (temp, fsync, rename) *before* the row that names them is
committed: a crash leaves at worst an unreferenced file, never a row without
its file.

Items are named by an *item reference*: an :class:`ItemRecord`, a row id
(``int``), a ``(case_number, item_number)`` tuple, or the text
``"CASE/ITEM"`` (split at the last ``/``; item numbers cannot contain ``/``).
"""

from __future__ import annotations

import json
import os
import random
import sqlite3
import time
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any, TypeVar

from workbench.casefile import ledger
from workbench.casefile.blobs import BlobStore
from workbench.casefile.custody import (
    EVENT_FIELDS,
    EVENT_KINDS,
    SEAL_STATES,
    STORE_ONLY_KINDS,
    ChainState,
    apply_event,
    event_hash,
    status_entry,
)
from workbench.casefile.hashing import (
    GENESIS_HASH,
    TIME_FORMAT,
    canonical_json,
    normalise_time,
    record_hash,
    sha256_hex,
    utc_now,
)
from workbench.casefile.records import (
    ANALYSIS_HASH_FIELDS,
    CASE_HASH_FIELDS,
    CASE_STATUSES,
    FINDINGS_HASH_FIELDS,
    ITEM_HASH_FIELDS,
    MEASUREMENT_HASH_FIELDS,
    TECHNIQUES,
    AnalysisRecord,
    AnalystRecord,
    CaseRecord,
    CustodyEvent,
    FindingsSheetRecord,
    ItemRecord,
    MeasurementRecord,
    SearchHit,
)
from workbench.casefile.schema import connect, connect_readonly, is_busy
from workbench.casefile.validate import check_text as _text
from workbench.errors import (
    CaseFileError,
    CustodyRuleError,
    InputError,
    NotFoundError,
    StoreIntegrityError,
    ValueRangeError,
)

__all__ = ["DB_NAME", "FILES_DIR", "STORE_ENV", "CaseStore", "ItemRef", "resolve_store_root"]

#: Environment variable naming the store directory.
STORE_ENV: str = "WORKBENCH_STORE"
#: Database file name inside the store directory.
DB_NAME: str = "cases.sqlite"
#: Folder of content-addressed files inside the store directory.
FILES_DIR: str = "files"

ItemRef = Any  # ItemRecord | int | tuple[str, str] | str ("CASE/ITEM")
T = TypeVar("T")

_MAX_ATTEMPTS = 200
_FUTURE_SLACK = timedelta(minutes=5)


def resolve_store_root(path: Path | str | None = None) -> Path:
    """Return the store directory: ``path``, else ``$WORKBENCH_STORE``, else the repo default."""
    if path is not None and str(path) != "":
        return Path(path).expanduser()
    env = os.environ.get(STORE_ENV)
    if env:
        return Path(env).expanduser()
    import workbench

    return Path(workbench.__file__).resolve().parents[1] / "casefiles"


def _stored_json(value: Any, what: str, kind: type) -> Any:
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


def _event_dict(row: sqlite3.Row | dict[str, Any]) -> dict[str, Any]:
    return {k: row[k] for k in (*EVENT_FIELDS, "id", "hash")}


class CaseStore:
    """An open case store (use :meth:`open`; a context manager).

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
    def open(cls, path: Path | str | None = None) -> CaseStore:
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
    def open_readonly(cls, path: Path | str | None = None) -> CaseStore:
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

    def __enter__(self) -> CaseStore:
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

    # -------------------------------------------------------------------- cases
    def create_case(
        self,
        case_number: str,
        title: str,
        requesting_party: str,
        *,
        status: str = "open",
        created_at: datetime | str | None = None,
    ) -> CaseRecord:
        """Create a case.

        Parameters
        ----------
        case_number : str
            Unique case number.
        title : str
            Short title.
        requesting_party : str
            Who asked for the examination.
        status : {"open", "closed", "archived"}
            Initial status.
        created_at : datetime or str, optional
            Creation time (default now).

        Returns
        -------
        CaseRecord
            The new case.
        """
        number = _text(case_number, "case number", max_len=64)
        assert number is not None
        fields = {
            "case_number": number,
            "title": _text(title, "case title"),
            "requesting_party": _text(requesting_party, "requesting party"),
            "created_at": normalise_time(created_at, "created_at"),
        }
        if status not in CASE_STATUSES:
            raise ValueRangeError(f"case status {status!r}", f"use one of {CASE_STATUSES}")
        digest = record_hash(fields, CASE_HASH_FIELDS)

        def tx(conn: sqlite3.Connection) -> None:
            if conn.execute("SELECT 1 FROM cases WHERE case_number=?", (number,)).fetchone():
                raise CaseFileError(f"case {number} already exists", "choose another case number")
            cur = conn.execute(
                "INSERT INTO cases (case_number, title, requesting_party, status, created_at,"
                " record_hash, status_log) VALUES (?, ?, ?, ?, ?, ?, ?)",
                (
                    number,
                    fields["title"],
                    fields["requesting_party"],
                    status,
                    fields["created_at"],
                    digest,
                    json.dumps([status_entry(status, fields["created_at"], digest)]),
                ),
            )
            self._ledger(conn, "cases", cur.lastrowid, "insert")

        self._write(tx)
        return self.get_case(number)

    def _case_row(self, case_number: str) -> sqlite3.Row:
        row = self._conn.execute(
            "SELECT * FROM cases WHERE case_number=?", (str(case_number).strip(),)
        ).fetchone()
        if row is None:
            raise NotFoundError(
                f"no case {case_number!r} in the store {self.root}",
                "check the number with 'workbench case list' or 'case search'",
            )
        return row

    def get_case(self, case_number: str) -> CaseRecord:
        """Return a case by number (raises NotFoundError)."""
        r = self._case_row(case_number)
        return CaseRecord(
            r["id"],
            r["case_number"],
            r["title"],
            r["requesting_party"],
            r["status"],
            r["created_at"],
            r["record_hash"],
        )

    def list_cases(self, *, status: str | None = None) -> list[CaseRecord]:
        """Return all cases (optionally of one status), ordered by case number."""
        rows = self._conn.execute("SELECT case_number FROM cases ORDER BY case_number").fetchall()
        cases = [self.get_case(r[0]) for r in rows]
        return [c for c in cases if status is None or c.status == status]

    def set_case_status(self, case_number: str, status: str) -> CaseRecord:
        """Change a case's status (open, closed, archived)."""
        if status not in CASE_STATUSES:
            raise ValueRangeError(f"case status {status!r}", f"use one of {CASE_STATUSES}")
        row = self._case_row(case_number)

        def tx(conn: sqlite3.Connection) -> None:
            current = conn.execute("SELECT * FROM cases WHERE id=?", (row["id"],)).fetchone()
            log = _stored_json(current["status_log"], f"case {row['case_number']} status_log", list)
            log.append(status_entry(status, utc_now(), log[-1]["hash"] if log else ""))
            conn.execute(
                "UPDATE cases SET status=?, status_log=? WHERE id=?",
                (status, json.dumps(log), row["id"]),
            )
            # The status is outside the case's record hash (it may change), so
            # the ledger entry of each change is what covers it.
            self._ledger(conn, "cases", row["id"], "update")

        self._write(tx)
        return self.get_case(row["case_number"])

    def search_cases(
        self, query: str, *, limit: int = 20, min_score: float = 50.0
    ) -> list[SearchHit]:
        """Approximate search over case numbers, titles, requesting parties and item descriptions.

        Parameters
        ----------
        query : str
            Free text.
        limit : int
            At most this many hits.
        min_score : float
            Drop hits scoring below this (0–100, rapidfuzz ``WRatio``).

        Returns
        -------
        list of SearchHit
            Best first (score, then case number); one hit per case, naming the
            field that matched best.
        """
        from rapidfuzz import fuzz, utils

        q = _text(query, "search text")
        best: dict[str, SearchHit] = {}

        def consider(case_number: str, title: str, field: str, text: str | None) -> None:
            if not text:
                return
            score = float(fuzz.WRatio(q, text, processor=utils.default_process))
            hit = best.get(case_number)
            if hit is None or score > hit.score:
                best[case_number] = SearchHit(case_number, title, round(score, 1), field, text)

        for r in self._conn.execute("SELECT case_number, title, requesting_party FROM cases"):
            consider(r[0], r[1], "case_number", r[0])
            consider(r[0], r[1], "title", r[1])
            consider(r[0], r[1], "requesting_party", r[2])
        for r in self._conn.execute(
            "SELECT c.case_number, c.title, i.description, i.item_number FROM items i "
            "JOIN cases c ON c.id = i.case_id"
        ):
            consider(r[0], r[1], f"item {r[3]} description", r[2])
        hits = [h for h in best.values() if h.score >= min_score]
        hits.sort(key=lambda h: (-h.score, h.case_number))
        return hits[:limit]

    # -------------------------------------------------------------------- items
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

    def _item_record(self, row: sqlite3.Row) -> ItemRecord:
        state, _ = self._chain_state(row)
        return ItemRecord(
            id=row["id"],
            case_number=row["case_number"],
            item_number=row["item_number"],
            description=row["description"],
            parent_item_number=row["parent_item_number"],
            seal_numbers=tuple(
                _stored_json(row["seal_numbers"], f"item {row['id']} seal_numbers", list)
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
            Where it belongs, its number within the case, what it is.
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
        """
        case = self._case_row(case_number)
        number = _text(item_number, "item number", max_len=64)
        assert number is not None
        if "/" in number:
            raise InputError(
                f"item number {number!r} contains '/'", "use letters, digits, '.', '-' or '_'"
            )
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

    # ------------------------------------------------------------- measurements
    def add_measurement(
        self,
        item: ItemRef,
        data: bytes,
        filename: str,
        technique: str,
        instrument: str,
        settings: dict[str, Any],
        operator: str,
        measured_at: datetime | str,
    ) -> MeasurementRecord:
        """Store an original measurement file and its metadata.

        The bytes are stored content-addressed (unchanged); a ``note`` custody
        event with the measurement's record hash is added in the same transaction.

        Parameters
        ----------
        item : ItemRef
            The item measured.
        data : bytes
            The original file, exactly as produced.
        filename : str
            Its original name (directories are dropped).
        technique : {"LIBS", "spark OES", "ICP-OES", "XRF", "absorption", "other"}
            Technique.
        instrument, operator : str
            Instrument and who measured.
        settings : dict
            Instrument settings (JSON-serialisable).
        measured_at : datetime or str
            When it was measured.

        Returns
        -------
        MeasurementRecord
            The stored record.
        """
        if not isinstance(data, bytes | bytearray | memoryview):
            raise InputError("measurement data must be bytes", "read the file in binary mode")
        data = bytes(data)
        if not data:
            raise InputError(f"measurement file {filename!r} is empty", "give the original file")
        tech = {t.lower(): t for t in TECHNIQUES}.get(str(technique).strip().lower())
        if tech is None:
            raise InputError(f"unknown technique {technique!r}", f"use one of {TECHNIQUES}")
        if not isinstance(settings, dict):
            raise InputError("settings must be a mapping of names to values", "give a dict")
        name = _text(os.path.basename(str(filename).replace("\\", "/")), "file name", max_len=255)
        row = self._item_row(item)
        fields: dict[str, Any] = {
            "case_number": row["case_number"],
            "item_number": row["item_number"],
            "filename": name,
            "size_bytes": len(data),
            "technique": tech,
            "instrument": _text(instrument, "instrument"),
            "settings": json.loads(canonical_json(settings)),
            "operator": _text(operator, "operator"),
            "measured_at": self._check_at(measured_at),
        }
        fields["sha256"] = self.files.put(data)

        def tx(conn: sqlite3.Connection) -> int:
            fields["recorded_at"] = utc_now()
            digest = record_hash(fields, MEASUREMENT_HASH_FIELDS)
            cur = conn.execute(
                "INSERT INTO measurements (item_id, sha256, filename, size_bytes, technique, "
                "instrument, settings, operator, measured_at, recorded_at, record_hash) "
                "VALUES (?,?,?,?,?,?,?,?,?,?,?)",
                (
                    row["id"],
                    fields["sha256"],
                    name,
                    len(data),
                    tech,
                    fields["instrument"],
                    canonical_json(fields["settings"]).decode("utf-8"),
                    fields["operator"],
                    fields["measured_at"],
                    fields["recorded_at"],
                    digest,
                ),
            )
            self._append(
                conn,
                row,
                {
                    "kind": "note",
                    "at": None,
                    "actor": fields["operator"],
                    "note": f"measurement recorded: {name} ({tech}, {fields['instrument']}), "
                    f"SHA-256 {fields['sha256']}, measured at {fields['measured_at']}",
                    "ref_kind": "measurement",
                    "ref_key": fields["sha256"],
                    "ref_hash": digest,
                },
            )
            self._ledger(conn, "measurements", cur.lastrowid, "insert")
            return int(cur.lastrowid)  # type: ignore[arg-type]

        return self.get_measurement(self._write(tx))

    def _measurement_from_row(self, r: sqlite3.Row) -> MeasurementRecord:
        return MeasurementRecord(
            id=r["id"],
            case_number=r["case_number"],
            item_number=r["item_number"],
            sha256=r["sha256"],
            filename=r["filename"],
            size_bytes=r["size_bytes"],
            technique=r["technique"],
            instrument=r["instrument"],
            settings=_stored_json(r["settings"], f"measurement {r['id']} settings", dict),
            operator=r["operator"],
            measured_at=r["measured_at"],
            recorded_at=r["recorded_at"],
            record_hash=r["record_hash"],
        )

    _M_SQL = (
        "SELECT m.*, c.case_number, i.item_number FROM measurements m "
        "JOIN items i ON i.id=m.item_id JOIN cases c ON c.id=i.case_id "
    )

    def get_measurement(self, measurement_id: int) -> MeasurementRecord:
        """Return a measurement by id (raises NotFoundError)."""
        r = self._conn.execute(self._M_SQL + "WHERE m.id=?", (int(measurement_id),)).fetchone()
        if r is None:
            raise NotFoundError(
                f"no measurement {measurement_id} in the store {self.root}",
                "list an item's measurements with 'workbench measure show CASE/ITEM'",
            )
        return self._measurement_from_row(r)

    def list_measurements(
        self, case_number: str | None = None, *, item: ItemRef | None = None
    ) -> list[MeasurementRecord]:
        """Return measurements of one item, of one case, or all, in the order stored."""
        where, args = self._scope(case_number, item, "m")
        rows = self._conn.execute(self._M_SQL + where + " ORDER BY m.id", args).fetchall()
        return [self._measurement_from_row(r) for r in rows]

    def _scope(
        self, case_number: str | None, item: ItemRef | None, _alias: str
    ) -> tuple[str, tuple]:
        if item is not None:
            return "WHERE i.id=?", (self._item_row(item)["id"],)
        if case_number is not None:
            return "WHERE c.id=?", (self._case_row(case_number)["id"],)
        return "", ()

    def file_bytes(self, sha256: str) -> bytes:
        """Return a stored file's bytes, verifying the hash (raises StoreIntegrityError)."""
        return self.files.get(str(sha256).lower())

    # ----------------------------------------------------------------- analyses
    def add_analysis(
        self,
        measurement_id: int,
        *,
        parameters: dict[str, Any],
        reference_sets: list[dict[str, Any]],
        result_json: bytes,
        software_version: str,
        analyst: str,
    ) -> AnalysisRecord:
        """Store an analysis of a measurement, exactly as given.

        An ``analysed`` custody event carrying the analysis's record hash is
        added to the item's chain in the same transaction.

        Parameters
        ----------
        measurement_id : int
            The measurement analysed.
        parameters : dict
            Engine parameters (JSON-serialisable).
        reference_sets : list of dict
            Reference sets used (ids, versions, hashes).
        result_json : bytes
            The engine's JSON report, stored byte-for-byte (must be valid UTF-8 JSON).
        software_version : str
            Workbench version that produced it.
        analyst : str
            Who ran it.

        Returns
        -------
        AnalysisRecord
            The stored record.
        """
        m = self.get_measurement(measurement_id)
        if not isinstance(result_json, bytes | bytearray):
            raise InputError("result_json must be bytes", "pass the report's exact bytes")
        result = bytes(result_json)
        try:
            json.loads(result.decode("utf-8"))
        except (UnicodeDecodeError, ValueError) as exc:
            raise InputError(
                f"the analysis result is not UTF-8 JSON ({exc})",
                "store the engine's JSON report as produced",
            ) from exc
        if not isinstance(parameters, dict) or not isinstance(reference_sets, list):
            raise InputError(
                "parameters must be a dict and reference_sets a list of dicts",
                "pass the engine parameters and the reference-set descriptions",
            )
        fields: dict[str, Any] = {
            "case_number": m.case_number,
            "item_number": m.item_number,
            "measurement_hash": m.record_hash,
            "parameters": json.loads(canonical_json(parameters)),
            "reference_sets": json.loads(canonical_json(reference_sets)),
            "result_sha256": sha256_hex(result),
            "software_version": _text(software_version, "software version"),
            "analyst": _text(analyst, "analyst"),
        }
        row = self._item_row((m.case_number, m.item_number))

        def tx(conn: sqlite3.Connection) -> int:
            fields["created_at"] = utc_now()
            digest = record_hash(fields, ANALYSIS_HASH_FIELDS)
            cur = conn.execute(
                "INSERT INTO analyses (measurement_id, parameters, reference_sets, result_json, "
                "result_sha256, software_version, analyst, created_at, record_hash) "
                "VALUES (?,?,?,?,?,?,?,?,?)",
                (
                    m.id,
                    canonical_json(fields["parameters"]).decode("utf-8"),
                    canonical_json(fields["reference_sets"]).decode("utf-8"),
                    result,
                    fields["result_sha256"],
                    fields["software_version"],
                    fields["analyst"],
                    fields["created_at"],
                    digest,
                ),
            )
            self._append(
                conn,
                row,
                {
                    "kind": "analysed",
                    "at": fields["created_at"],
                    "actor": fields["analyst"],
                    "note": f"analysis of measurement {m.filename} (SHA-256 {m.sha256}); "
                    f"result SHA-256 {fields['result_sha256']}",
                    "ref_kind": "analysis",
                    "ref_key": fields["result_sha256"],
                    "ref_hash": digest,
                },
            )
            self._ledger(conn, "analyses", cur.lastrowid, "insert")
            return int(cur.lastrowid)  # type: ignore[arg-type]

        return self.get_analysis(self._write(tx))

    _A_SQL = (
        "SELECT a.*, m.record_hash AS measurement_hash, c.case_number, i.item_number "
        "FROM analyses a JOIN measurements m ON m.id=a.measurement_id "
        "JOIN items i ON i.id=m.item_id JOIN cases c ON c.id=i.case_id "
    )

    @staticmethod
    def _analysis_from_row(r: sqlite3.Row) -> AnalysisRecord:
        return AnalysisRecord(
            id=r["id"],
            measurement_id=r["measurement_id"],
            case_number=r["case_number"],
            item_number=r["item_number"],
            measurement_hash=r["measurement_hash"],
            parameters=_stored_json(r["parameters"], f"analysis {r['id']} parameters", dict),
            reference_sets=_stored_json(
                r["reference_sets"], f"analysis {r['id']} reference_sets", list
            ),
            result_json=bytes(r["result_json"]),
            result_sha256=r["result_sha256"],
            software_version=r["software_version"],
            analyst=r["analyst"],
            created_at=r["created_at"],
            record_hash=r["record_hash"],
        )

    def get_analysis(self, analysis_id: int) -> AnalysisRecord:
        """Return an analysis by id (result bytes verified against their SHA-256)."""
        r = self._conn.execute(self._A_SQL + "WHERE a.id=?", (int(analysis_id),)).fetchone()
        if r is None:
            raise NotFoundError(
                f"no analysis {analysis_id} in the store {self.root}",
                "list analyses with 'workbench case show CASE'",
            )
        rec = self._analysis_from_row(r)
        if sha256_hex(rec.result_json) != rec.result_sha256:
            raise StoreIntegrityError(
                f"analysis {analysis_id}: stored result does not match its SHA-256 "
                f"{rec.result_sha256}",
                "run 'workbench custody verify' and restore the store from a backup",
            )
        return rec

    def list_analyses(
        self, case_number: str | None = None, *, item: ItemRef | None = None
    ) -> list[AnalysisRecord]:
        """Return analyses of one item, one case, or all, in the order stored."""
        where, args = self._scope(case_number, item, "a")
        rows = self._conn.execute(self._A_SQL + where + " ORDER BY a.id", args).fetchall()
        return [self._analysis_from_row(r) for r in rows]

    # ----------------------------------------------------------------- analysts
    def register_analyst(
        self,
        name: str,
        role: str,
        public_key_pem: bytes | str,
        *,
        registered_by: str = "local registration",
    ) -> AnalystRecord:
        """Register an analyst's Ed25519 public key locally (trusted; see :mod:`.analysts`)."""
        from workbench.casefile.analysts import register_analyst

        return register_analyst(self, name, role, public_key_pem, registered_by=registered_by)

    def get_analyst(self, fingerprint_or_name: str) -> AnalystRecord:
        """Return an analyst by fingerprint, or by name (the active key, else the latest)."""
        from workbench.casefile.analysts import get_analyst

        return get_analyst(self, fingerprint_or_name)

    def list_analysts(self) -> list[AnalystRecord]:
        """Return all registered analysts with their provenance and trust."""
        rows = self._conn.execute("SELECT fingerprint FROM analysts ORDER BY id").fetchall()
        return [self.get_analyst(r[0]) for r in rows]

    def revoke_analyst(self, fingerprint: str, reason: str, actor: str) -> AnalystRecord:
        """Revoke an analyst's key (once; recorded in the key log; the record is kept)."""
        from workbench.casefile.analysts import revoke_analyst

        return revoke_analyst(self, fingerprint, reason, actor)

    def trust_analyst(self, fingerprint: str, by: str, reason: str) -> AnalystRecord:
        """Record a local administrator's trust in an imported or legacy key (once)."""
        from workbench.casefile.analysts import trust_analyst

        return trust_analyst(self, fingerprint, by, reason)

    def key_events(self, fingerprint: str | None = None) -> list[dict[str, Any]]:
        """Return the key log (of one key, or all), oldest first."""
        from workbench.casefile.analysts import key_log

        return key_log(self, fingerprint)

    # ----------------------------------------------------------- findings sheets
    def add_findings_sheet(
        self,
        analysis_id: int,
        *,
        analyst_fingerprint: str,
        pdf_bytes: bytes,
        json_bytes: bytes,
        signature_raw: bytes,
        signature_record: bytes,
        issued_at: datetime | str,
    ) -> FindingsSheetRecord:
        """Store an issued findings sheet with its signature, immutably.

        The four files are stored content-addressed; a ``reported`` custody
        event carrying the sheet's record hash is added in the same transaction.
        The signature is verified first (:mod:`workbench.crypto`) and a bad
        one is refused, as is a key the store does not trust.

        Returns
        -------
        FindingsSheetRecord
            The stored record.
        """
        a = self.get_analysis(analysis_id)
        analyst = self.get_analyst(analyst_fingerprint)
        if analyst.fingerprint != analyst_fingerprint:
            raise InputError(
                f"give the key fingerprint, not {analyst_fingerprint!r}",
                f"use {analyst.fingerprint}",
            )
        if analyst.status != "active":
            raise CaseFileError(
                f"key {analyst.fingerprint} of {analyst.name} was revoked at {analyst.revoked_at}",
                "sign with the analyst's current key",
            )
        blobs = [bytes(b) for b in (pdf_bytes, json_bytes, signature_raw, signature_record)]
        if not all(blobs):
            raise InputError("a findings-sheet file is empty", "give the PDF, JSON and signature")
        if not analyst.trusted:
            raise CaseFileError(
                f"key {analyst.fingerprint} of {analyst.name} is {analyst.provenance_text}; "
                "it cannot sign in this store",
                "a local administrator must first record trust with 'workbench keys trust'",
            )
        from workbench.crypto import verify_raw_pdf_signature, verify_sheet

        pem = analyst.public_key_pem.encode("ascii")
        verify_sheet(blobs[0], blobs[1], blobs[3], pem, expected_fingerprint=analyst.fingerprint)
        verify_raw_pdf_signature(blobs[0], blobs[2], pem)
        digests = [self.files.put(b) for b in blobs]
        row = self._item_row((a.case_number, a.item_number))
        fields: dict[str, Any] = {
            "case_number": a.case_number,
            "item_number": a.item_number,
            "analysis_hash": a.record_hash,
            "analyst_fingerprint": analyst.fingerprint,
            "analyst": analyst.name,
            "pdf_sha256": digests[0],
            "json_sha256": digests[1],
            "signature_sha256": digests[2],
            "record_sha256": digests[3],
            "issued_at": normalise_time(issued_at, "issued_at"),
        }

        def tx(conn: sqlite3.Connection) -> int:
            fields["recorded_at"] = utc_now()
            digest = record_hash(fields, FINDINGS_HASH_FIELDS)
            cur = conn.execute(
                "INSERT INTO findings_sheets (analysis_id, analyst_fingerprint, analyst, "
                "pdf_sha256, json_sha256, signature_sha256, record_sha256, issued_at, "
                "recorded_at, record_hash) VALUES (?,?,?,?,?,?,?,?,?,?)",
                (
                    a.id,
                    analyst.fingerprint,
                    analyst.name,
                    *digests,
                    fields["issued_at"],
                    fields["recorded_at"],
                    digest,
                ),
            )
            self._append(
                conn,
                row,
                {
                    "kind": "reported",
                    "at": fields["recorded_at"],
                    "actor": analyst.name,
                    "note": f"findings sheet issued {fields['issued_at']} (PDF SHA-256 "
                    f"{digests[0]}), signed by {analyst.fingerprint}",
                    "ref_kind": "findings",
                    "ref_key": digests[0],
                    "ref_hash": digest,
                },
            )
            self._ledger(conn, "findings_sheets", cur.lastrowid, "insert")
            return int(cur.lastrowid)  # type: ignore[arg-type]

        return self.get_findings_sheet(self._write(tx))

    _F_SQL = (
        "SELECT f.*, a.record_hash AS analysis_hash, c.case_number, i.item_number "
        "FROM findings_sheets f JOIN analyses a ON a.id=f.analysis_id "
        "JOIN measurements m ON m.id=a.measurement_id JOIN items i ON i.id=m.item_id "
        "JOIN cases c ON c.id=i.case_id "
    )

    @staticmethod
    def _sheet_from_row(r: sqlite3.Row) -> FindingsSheetRecord:
        return FindingsSheetRecord(
            **{f: r[f] for f in FindingsSheetRecord.__dataclass_fields__}  # type: ignore[arg-type]
        )

    def get_findings_sheet(self, sheet_id: int) -> FindingsSheetRecord:
        """Return a findings sheet record by id."""
        r = self._conn.execute(self._F_SQL + "WHERE f.id=?", (int(sheet_id),)).fetchone()
        if r is None:
            raise NotFoundError(
                f"no findings sheet {sheet_id} in the store {self.root}",
                "list them with 'workbench findings list'",
            )
        return self._sheet_from_row(r)

    def list_findings_sheets(
        self, case_number: str | None = None, *, analysis_id: int | None = None
    ) -> list[FindingsSheetRecord]:
        """Return findings sheets of a case, of an analysis, or all."""
        if analysis_id is not None:
            where, args = "WHERE f.analysis_id=?", (int(analysis_id),)
        else:
            where, args = self._scope(case_number, None, "f")
        rows = self._conn.execute(self._F_SQL + where + " ORDER BY f.id", args).fetchall()
        return [self._sheet_from_row(r) for r in rows]

    # ------------------------------------------------------------------- verify
    def verify(
        self, case_number: str | None = None, *, anchor: tuple[int, str] | None = None
    ) -> Any:
        """Check every chain, record, file, signature and the ledger (reads only).

        See :mod:`~workbench.casefile.verify`; ``anchor`` is a ledger head
        ``(seq, hash)`` recorded earlier outside the store.

        Returns
        -------
        VerifyReport
            ``ok`` is False when anything is broken; ``first_break`` says where.
        """
        from workbench.casefile.verify import verify_store

        return verify_store(self, case_number, anchor=anchor)

    def ledger_head(self) -> tuple[int, str]:
        """Return ``(seq, hash)`` of the latest ledger entry, to keep outside the store."""
        return ledger.head(self._conn)
