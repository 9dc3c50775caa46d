"""Analyses: an engine result stored exactly as produced, chained to its measurement.

The result bytes are kept with their SHA-256 and checked on every read; an
``analysed`` custody event naming the analysis's record hash is added to the
item's chain in the same transaction.
"""

from __future__ import annotations

import json
import sqlite3
from typing import Any

from workbench.casefile.chains import ItemRef
from workbench.casefile.hashing import canonical_json, record_hash, sha256_hex, utc_now
from workbench.casefile.measurements import Measurements
from workbench.casefile.records import ANALYSIS_HASH_FIELDS, AnalysisRecord
from workbench.casefile.storebase import stored_json
from workbench.casefile.validate import check_text as _text
from workbench.errors import InputError, NotFoundError, StoreIntegrityError

__all__ = ["Analyses"]


class Analyses(Measurements):
    """The analysis operations of :class:`~workbench.casefile.store.CaseStore`."""

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
            parameters=stored_json(r["parameters"], f"analysis {r['id']} parameters", dict),
            reference_sets=stored_json(
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
