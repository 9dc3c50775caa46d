"""Stored analyst decisions on an analysis and technical reviews of issued sheets.

Decisions
---------
An analysis result is never changed. The analyst's judgement on it (accept or
reject an element call or a line assignment, add an element by hand, choose
what goes on the sheet) is kept as an append-only list of decisions beside
it, one row each in ``analysis_decisions``. Each decision carries the
``record_hash`` of the one before it (``prev_hash``; the first carries
:data:`~workbench.casefile.hashing.GENESIS_HASH`), so that removing,
reordering or editing a decision breaks the chain (:func:`check_decisions`).
Undoing a decision is a later decision that names it in ``reverses``; both stay.

What the actions mean is decided in :mod:`workbench.findings.decisions`; this
module only stores and checks records.

Reviews
-------
A technical review of an issued sheet is one row in ``sheet_reviews``: who,
approved or returned, the comments, and for an approval the digests of the
reviewer's signature files (stored content-addressed). A ``reviewed`` custody
event is appended in the same transaction.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from workbench.casefile.hashing import (
    GENESIS_HASH,
    normalise_time,
    record_hash,
    utc_now,
)
from workbench.errors import InputError, NotFoundError, StoreIntegrityError

__all__ = [
    "DECISION_ACTIONS",
    "DECISION_HASH_FIELDS",
    "REVIEW_HASH_FIELDS",
    "DecisionRecord",
    "ReviewRecord",
    "add_review",
    "append_decision",
    "check_decision_chain",
    "check_decisions",
    "get_review",
    "list_reviews",
    "stored_decisions",
]

#: Every decision an analyst can record (their meaning: workbench.findings.decisions).
DECISION_ACTIONS: tuple[str, ...] = (
    "accept_element",
    "reject_element",
    "accept_line",
    "reject_line",
    "add_element",
    "show_on_sheet",
    "leave_off_sheet",
    "reverse",
)

#: Fields covered by a decision's record hash (the chain link included).
DECISION_HASH_FIELDS: tuple[str, ...] = (
    "analysis_hash",
    "seq",
    "action",
    "target",
    "lines",
    "reverses",
    "reason",
    "analyst",
    "decided_at",
    "prev_hash",
)

#: Fields covered by a review's record hash.
REVIEW_HASH_FIELDS: tuple[str, ...] = (
    "sheet_hash",
    "reviewer_fingerprint",
    "reviewer",
    "outcome",
    "comments",
    "signature_sha256",
    "record_sha256",
    "reviewed_at",
)


@dataclass(frozen=True)
class DecisionRecord:
    """One stored decision.

    Attributes
    ----------
    id, analysis_id, seq : int
        Row id, the analysis, and the decision's place in that analysis's list (1, 2, ...).
    action : str
        One of :data:`DECISION_ACTIONS`.
    target : str
        The species ("Fe I", "Pb L"), the element ("Fe") or, for a line
        decision, ``"<species>|<line id>"``.
    lines : tuple of dict
        For ``add_element``: the lines the analyst assigns (``position``,
        optionally ``reference`` and ``label``), in the axis unit.
    reverses : int or None
        For ``reverse``: the ``seq`` of the decision taken back.
    reason : str
        Why, in the analyst's words.
    analyst : str
        Who decided.
    decided_at : str
        UTC time.
    prev_hash, record_hash : str
        The chain link and this record's hash.
    """

    id: int
    analysis_id: int
    seq: int
    action: str
    target: str
    lines: tuple[dict[str, Any], ...]
    reverses: int | None
    reason: str
    analyst: str
    decided_at: str
    prev_hash: str
    record_hash: str

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly dictionary."""
        return {
            "id": self.id,
            "analysis_id": self.analysis_id,
            "seq": self.seq,
            "action": self.action,
            "target": self.target,
            "lines": [dict(x) for x in self.lines],
            "reverses": self.reverses,
            "reason": self.reason,
            "analyst": self.analyst,
            "decided_at": self.decided_at,
            "prev_hash": self.prev_hash,
            "record_hash": self.record_hash,
        }


@dataclass(frozen=True)
class ReviewRecord:
    """One stored technical review of an issued findings sheet.

    Attributes
    ----------
    id, sheet_id : int
        Row id and the reviewed sheet.
    reviewer_fingerprint, reviewer : str
        The reviewer's registered key and name.
    outcome : str
        ``"approved"`` (signed) or ``"returned"`` (with comments, unsigned).
    comments : str
        The reviewer's comments.
    signature_sha256, record_sha256 : str or None
        Digests of the reviewer's raw signature and signature record (approvals only).
    reviewed_at : str
        UTC time.
    record_hash : str
        Hash of the row.
    """

    id: int
    sheet_id: int
    reviewer_fingerprint: str
    reviewer: str
    outcome: str
    comments: str
    signature_sha256: str | None
    record_sha256: str | None
    reviewed_at: str
    record_hash: str

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly dictionary."""
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


def _decision_from_row(r: sqlite3.Row) -> DecisionRecord:
    return DecisionRecord(
        id=int(r["id"]),
        analysis_id=int(r["analysis_id"]),
        seq=int(r["seq"]),
        action=str(r["action"]),
        target=str(r["target"]),
        lines=tuple(json.loads(r["lines"])),
        reverses=None if r["reverses"] is None else int(r["reverses"]),
        reason=str(r["reason"]),
        analyst=str(r["analyst"]),
        decided_at=str(r["decided_at"]),
        prev_hash=str(r["prev_hash"]),
        record_hash=str(r["record_hash"]),
    )


def _hash_fields(rec: DecisionRecord | dict[str, Any], analysis_hash: str) -> dict[str, Any]:
    d = rec.to_dict() if isinstance(rec, DecisionRecord) else dict(rec)
    d["analysis_hash"] = analysis_hash
    d["lines"] = [dict(x) for x in d["lines"]]
    return d


def stored_decisions(store: Any, analysis_id: int) -> list[DecisionRecord]:
    """Return the decisions recorded on an analysis, in order.

    Parameters
    ----------
    store : CaseStore
        The open store.
    analysis_id : int
        The analysis.

    Returns
    -------
    list of DecisionRecord
        Ordered by ``seq``.
    """
    rows = store.connection.execute(
        "SELECT * FROM analysis_decisions WHERE analysis_id=? ORDER BY seq", (int(analysis_id),)
    ).fetchall()
    return [_decision_from_row(r) for r in rows]


def check_decisions(store: Any, analysis_id: int) -> list[str]:
    """Re-hash an analysis's decisions and walk their chain.

    Parameters
    ----------
    store : CaseStore
        The open store.
    analysis_id : int
        The analysis.

    Returns
    -------
    list of str
        One sentence per problem (a record that no longer matches its hash,
        a broken link or a gap in the numbering); empty when all is intact.
    """
    a = store.get_analysis(int(analysis_id))
    return check_decision_chain(stored_decisions(store, analysis_id), a.record_hash)


def check_decision_chain(
    decisions: Sequence[DecisionRecord | dict[str, Any]], analysis_hash: str
) -> list[str]:
    """Re-hash one analysis's decisions and walk their chain (a store's or a bundle's).

    Parameters
    ----------
    decisions : sequence of DecisionRecord or dict
        The decisions in ``seq`` order (dicts carry the fields of
        :meth:`DecisionRecord.to_dict`; row ids are not needed).
    analysis_hash : str
        The ``record_hash`` of the analysis they are about.

    Returns
    -------
    list of str
        One sentence per problem, as :func:`check_decisions`.
    """
    problems = []
    prev = GENESIS_HASH
    for i, d in enumerate(decisions, start=1):
        rec = d.to_dict() if isinstance(d, DecisionRecord) else d
        seq = rec["seq"]
        if seq != i:
            problems.append(f"decision {seq} follows decision {i - 1} (a decision is missing)")
        if rec["prev_hash"] != prev:
            problems.append(f"decision {seq} does not link to the decision before it")
        if (
            record_hash(_hash_fields(rec, analysis_hash), DECISION_HASH_FIELDS)
            != rec["record_hash"]
        ):
            problems.append(f"decision {seq} was altered after it was recorded")
        prev = rec["record_hash"]
    return problems


def append_decision(
    store: Any,
    analysis_id: int,
    *,
    action: str,
    target: str,
    reason: str,
    analyst: str,
    lines: Sequence[dict[str, Any]] = (),
    reverses: int | None = None,
    decided_at: datetime | str | None = None,
) -> DecisionRecord:
    """Append one decision to an analysis's list (one transaction).

    Parameters
    ----------
    store : CaseStore
        The open store.
    analysis_id : int
        The analysis decided on (must exist).
    action : str
        One of :data:`DECISION_ACTIONS`.
    target : str
        What it is about (see :class:`DecisionRecord`).
    reason : str
        Why (required).
    analyst : str
        Who (required).
    lines : sequence of dict, optional
        Lines of a hand-added element (plain JSON data).
    reverses : int, optional
        The decision taken back (``reverse`` only).
    decided_at : datetime or str, optional
        When; now by default.

    Returns
    -------
    DecisionRecord
        The stored record.

    Raises
    ------
    InputError
        For an unknown action, an empty reason or analyst.
    NotFoundError
        If the analysis does not exist.
    StoreIntegrityError
        If the existing decisions no longer match their hashes.
    """
    if action not in DECISION_ACTIONS:
        raise InputError(
            f"unknown decision {action!r}", f"use one of {', '.join(DECISION_ACTIONS)}"
        )
    for what, value in (("reason", reason), ("analyst", analyst), ("target", target)):
        if not str(value or "").strip():
            raise InputError(f"a decision needs a {what}", f"give the {what} (--{what})")
    a = store.get_analysis(int(analysis_id))
    broken = check_decisions(store, a.id)
    if broken:
        raise StoreIntegrityError(
            f"analysis {a.id}: {broken[0]}", "restore the store from backup before deciding more"
        )
    when = normalise_time(decided_at, "decision time") if decided_at is not None else None
    line_data = json.loads(json.dumps([dict(x) for x in lines], allow_nan=False))

    def tx(conn: sqlite3.Connection) -> int:
        last = conn.execute(
            "SELECT seq, record_hash FROM analysis_decisions WHERE analysis_id=? "
            "ORDER BY seq DESC LIMIT 1",
            (a.id,),
        ).fetchone()
        fields = {
            "seq": 1 if last is None else int(last["seq"]) + 1,
            "action": action,
            "target": str(target).strip(),
            "lines": line_data,
            "reverses": None if reverses is None else int(reverses),
            "reason": str(reason).strip(),
            "analyst": str(analyst).strip(),
            "decided_at": when or utc_now(),
            "prev_hash": GENESIS_HASH if last is None else str(last["record_hash"]),
        }
        digest = record_hash(_hash_fields(fields, a.record_hash), DECISION_HASH_FIELDS)
        cur = conn.execute(
            "INSERT INTO analysis_decisions (analysis_id, seq, action, target, lines, reverses, "
            "reason, analyst, decided_at, prev_hash, record_hash) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
            (
                a.id,
                fields["seq"],
                fields["action"],
                fields["target"],
                json.dumps(line_data, sort_keys=True, ensure_ascii=False),
                fields["reverses"],
                fields["reason"],
                fields["analyst"],
                fields["decided_at"],
                fields["prev_hash"],
                digest,
            ),
        )
        store._ledger(conn, "analysis_decisions", int(cur.lastrowid), "insert")
        return int(cur.lastrowid)  # type: ignore[arg-type]

    row_id = store._write(tx)
    row = store.connection.execute(
        "SELECT * FROM analysis_decisions WHERE id=?", (row_id,)
    ).fetchone()
    return _decision_from_row(row)


def _review_from_row(r: sqlite3.Row) -> ReviewRecord:
    return ReviewRecord(**{k: r[k] for k in ReviewRecord.__dataclass_fields__})


def get_review(store: Any, review_id: int) -> ReviewRecord:
    """Return one review by id (NotFoundError if there is none)."""
    r = store.connection.execute(
        "SELECT * FROM sheet_reviews WHERE id=?", (int(review_id),)
    ).fetchone()
    if r is None:
        raise NotFoundError(f"no review {review_id}", "list them with 'workbench review list'")
    return _review_from_row(r)


def list_reviews(store: Any, sheet_id: int) -> list[ReviewRecord]:
    """Return the reviews of a sheet, oldest first."""
    rows = store.connection.execute(
        "SELECT * FROM sheet_reviews WHERE sheet_id=? ORDER BY id", (int(sheet_id),)
    ).fetchall()
    return [_review_from_row(r) for r in rows]


def add_review(
    store: Any,
    sheet_id: int,
    *,
    reviewer_fingerprint: str,
    outcome: str,
    comments: str,
    signature_raw: bytes | None = None,
    signature_record: bytes | None = None,
    reviewed_at: datetime | str | None = None,
) -> ReviewRecord:
    """Store a review and append a ``reviewed`` custody event (one transaction).

    The caller (:mod:`workbench.findings.review`) has checked the reviewer and
    the signature; this function stores what it is given.

    Parameters
    ----------
    store : CaseStore
        The open store.
    sheet_id : int
        The reviewed sheet.
    reviewer_fingerprint : str
        The reviewer's registered key.
    outcome : str
        ``"approved"`` or ``"returned"``.
    comments : str
        The reviewer's comments (required for a return).
    signature_raw, signature_record : bytes, optional
        The reviewer's signature files (approvals).
    reviewed_at : datetime or str, optional
        When; now by default.

    Returns
    -------
    ReviewRecord
        The stored review.
    """
    if outcome not in ("approved", "returned"):
        raise InputError(f"unknown review outcome {outcome!r}", "use approved or returned")
    sheet = store.get_findings_sheet(int(sheet_id))
    reviewer = store.get_analyst(reviewer_fingerprint)
    digests: list[str | None] = [None, None]
    if signature_raw is not None and signature_record is not None:
        digests = [store.files.put(bytes(signature_raw)), store.files.put(bytes(signature_record))]
    fields: dict[str, Any] = {
        "sheet_hash": sheet.record_hash,
        "reviewer_fingerprint": reviewer.fingerprint,
        "reviewer": reviewer.name,
        "outcome": outcome,
        "comments": str(comments or "").strip(),
        "signature_sha256": digests[0],
        "record_sha256": digests[1],
        "reviewed_at": normalise_time(reviewed_at, "review time")
        if reviewed_at is not None
        else utc_now(),
    }
    digest = record_hash(fields, REVIEW_HASH_FIELDS)
    item_row = store._item_row((sheet.case_number, sheet.item_number))

    def tx(conn: sqlite3.Connection) -> int:
        cur = conn.execute(
            "INSERT INTO sheet_reviews (sheet_id, reviewer_fingerprint, reviewer, outcome, "
            "comments, signature_sha256, record_sha256, reviewed_at, record_hash) "
            "VALUES (?,?,?,?,?,?,?,?,?)",
            (
                sheet.id,
                fields["reviewer_fingerprint"],
                fields["reviewer"],
                outcome,
                fields["comments"],
                digests[0],
                digests[1],
                fields["reviewed_at"],
                digest,
            ),
        )
        store._ledger(conn, "sheet_reviews", int(cur.lastrowid), "insert")
        words = "approved and signed" if outcome == "approved" else "returned with comments"
        store._append(
            conn,
            item_row,
            {
                "kind": "reviewed",
                "actor": reviewer.name,
                "note": f"technical review of findings sheet {sheet.id} (PDF SHA-256 "
                f"{sheet.pdf_sha256}): {words} by {reviewer.fingerprint}",
                "ref_kind": "review",
                "ref_key": sheet.pdf_sha256,
                "ref_hash": digest,
            },
        )
        return int(cur.lastrowid)  # type: ignore[arg-type]

    return get_review(store, store._write(tx))
