"""Measurements: an original file stored byte-for-byte with its metadata.

The file is stored content-addressed before its row is committed (a crash
leaves at worst an unreferenced file, never a row without its file); a
``note`` custody event naming the measurement's record hash is added to the
item's chain in the same transaction.
"""

from __future__ import annotations

import json
import os
import sqlite3
from datetime import datetime
from typing import Any

from workbench.casefile.chains import ItemRef
from workbench.casefile.hashing import canonical_json, record_hash, utc_now
from workbench.casefile.items import Items
from workbench.casefile.records import MEASUREMENT_HASH_FIELDS, TECHNIQUES, MeasurementRecord
from workbench.casefile.storebase import stored_json
from workbench.casefile.validate import check_text as _text
from workbench.errors import InputError, NotFoundError

__all__ = ["Measurements"]


class Measurements(Items):
    """The measurement operations of :class:`~workbench.casefile.store.CaseStore`."""

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
            settings=stored_json(r["settings"], f"measurement {r['id']} settings", dict),
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
