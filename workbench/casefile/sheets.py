"""Issued findings sheets: four files stored immutably, signature checked first.

A sheet (PDF, canonical JSON, raw PDF signature, signature record) is refused
unless its signature verifies (:mod:`workbench.crypto`) under an active key
the store trusts; a ``reported`` custody event naming the sheet's record hash
is added to the item's chain in the same transaction.
"""

from __future__ import annotations

import sqlite3
from datetime import datetime
from typing import Any

from workbench.casefile.analyses import Analyses
from workbench.casefile.hashing import normalise_time, record_hash, utc_now
from workbench.casefile.records import FINDINGS_HASH_FIELDS, FindingsSheetRecord
from workbench.errors import CaseFileError, InputError, NotFoundError

__all__ = ["FindingsSheets"]


class FindingsSheets(Analyses):
    """The findings-sheet operations of :class:`~workbench.casefile.store.CaseStore`."""

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
