"""Cases: creation (with the case-number rule), lookup, listing, status, search.

:class:`CaseRecords` adds the case table's operations to the store. A case's
status is outside its record hash (it may change); every change is appended to
the case's hash-chained status log and entered in the ledger.
"""

from __future__ import annotations

import json
import sqlite3
from datetime import datetime

from workbench.casefile.custody import status_entry
from workbench.casefile.hashing import normalise_time, record_hash, utc_now
from workbench.casefile.naming import check_case_number
from workbench.casefile.records import CASE_HASH_FIELDS, CASE_STATUSES, CaseRecord, SearchHit
from workbench.casefile.storebase import StoreBase, stored_json
from workbench.casefile.validate import check_text as _text
from workbench.errors import CaseFileError, NotFoundError, ValueRangeError

__all__ = ["CaseRecords"]


class CaseRecords(StoreBase):
    """The case operations of :class:`~workbench.casefile.store.CaseStore`."""

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
            Unique case number, following the naming rule of
            :mod:`~workbench.casefile.naming` (e.g. ``NRFL-2026-0417``).
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

        Raises
        ------
        InputError
            If the case number breaks the naming rule (one message naming the
            offending characters and the rule); nothing is written.
        CaseFileError
            If the case already exists.
        """
        # The naming rule applies when a number is created, never when one is
        # read: cases stored before the rule keep their numbers.
        number = check_case_number(case_number)
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
            log = stored_json(current["status_log"], f"case {row['case_number']} status_log", list)
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
