"""One case's stored rows as plain dicts (:class:`CaseData`), from a store or a bundle.

:func:`load_case_data` reads a case from the store in one read transaction,
without checking anything; the checks (:mod:`~workbench.casefile.casecheck`)
and bundle export/import work on the same :class:`CaseData`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from workbench.casefile.breaks import read_json

__all__ = ["CaseData", "load_case_data"]


@dataclass
class CaseData:
    """Everything stored about one case, as plain dicts (from the store or a bundle)."""

    case: dict[str, Any]
    items: list[dict[str, Any]]
    events: dict[str, list[dict[str, Any]]]
    measurements: list[dict[str, Any]] = field(default_factory=list)
    analyses: list[dict[str, Any]] = field(default_factory=list)
    findings: list[dict[str, Any]] = field(default_factory=list)
    analysts: dict[str, dict[str, Any]] = field(default_factory=dict)


def load_case_data(store: Any, case_number: str) -> CaseData:
    """Read one case's rows from a store as a :class:`CaseData` (no checks).

    Rows are read in one read transaction so the picture is consistent.
    """
    conn = store.connection
    conn.execute("BEGIN")
    try:
        c = conn.execute("SELECT * FROM cases WHERE case_number=?", (case_number,)).fetchone()
        case = {
            k: c[k]
            for k in (
                "case_number",
                "title",
                "requesting_party",
                "status",
                "created_at",
                "record_hash",
            )
        }
        if "status_log" in c.keys():  # schema 3 on
            case["status_log"] = read_json(c["status_log"], f"case {case_number} status_log")
        items = []
        events: dict[str, list[dict[str, Any]]] = {}
        for r in conn.execute(
            "SELECT i.*, p.item_number AS parent_item_number FROM items i "
            "LEFT JOIN items p ON p.id=i.parent_item_id WHERE i.case_id=? ORDER BY i.id",
            (c["id"],),
        ):
            items.append(
                {
                    "case_number": case_number,
                    "item_number": r["item_number"],
                    "description": r["description"],
                    "parent_item_number": r["parent_item_number"],
                    "seal_numbers": read_json(r["seal_numbers"], f"item {r['id']} seal_numbers"),
                    "storage_location": r["storage_location"],
                    "created_at": r["created_at"],
                    "record_hash": r["record_hash"],
                    "_id": r["id"],
                }
            )
            rows = conn.execute(
                "SELECT * FROM custody_events WHERE item_id=? ORDER BY seq, id", (r["id"],)
            ).fetchall()
            events[r["item_number"]] = [
                {
                    **{k: e[k] for k in e.keys() if k != "item_id"},
                    "case_number": case_number,
                    "item_number": r["item_number"],
                }
                for e in rows
            ]
        meas = []
        for r in conn.execute(
            "SELECT m.*, i.item_number FROM measurements m JOIN items i ON i.id=m.item_id "
            "WHERE i.case_id=? ORDER BY m.id",
            (c["id"],),
        ):
            d = {k: r[k] for k in r.keys() if k != "item_id"}
            d["settings"] = read_json(d["settings"], f"measurement {d['id']} settings")
            d["case_number"] = case_number
            d["_id"] = d.pop("id")
            meas.append(d)
        analyses = []
        for r in conn.execute(
            "SELECT a.*, m.record_hash AS measurement_hash, i.item_number FROM analyses a "
            "JOIN measurements m ON m.id=a.measurement_id JOIN items i ON i.id=m.item_id "
            "WHERE i.case_id=? ORDER BY a.id",
            (c["id"],),
        ):
            d = {k: r[k] for k in r.keys() if k not in ("measurement_id",)}
            d["parameters"] = read_json(d["parameters"], f"analysis {d['id']} parameters")
            d["reference_sets"] = read_json(
                d["reference_sets"], f"analysis {d['id']} reference_sets"
            )
            rj = d["result_json"]
            d["result_json"] = rj.encode("utf-8") if isinstance(rj, str) else bytes(rj or b"")
            d["case_number"] = case_number
            d["_id"] = d.pop("id")
            analyses.append(d)
        sheets = []
        fps: set[str] = set()
        for r in conn.execute(
            "SELECT f.*, a.record_hash AS analysis_hash, i.item_number FROM findings_sheets f "
            "JOIN analyses a ON a.id=f.analysis_id JOIN measurements m ON m.id=a.measurement_id "
            "JOIN items i ON i.id=m.item_id WHERE i.case_id=? ORDER BY f.id",
            (c["id"],),
        ):
            d = {k: r[k] for k in r.keys() if k not in ("analysis_id",)}
            d["case_number"] = case_number
            d["_id"] = d.pop("id")
            sheets.append(d)
            fps.add(d["analyst_fingerprint"])
        analysts = {}
        for fp in sorted(fps):
            r = conn.execute("SELECT * FROM analysts WHERE fingerprint=?", (fp,)).fetchone()
            if r is not None:
                analysts[fp] = {k: r[k] for k in r.keys() if k != "id"}
    finally:
        conn.execute("COMMIT")
    return CaseData(case, items, events, meas, analyses, sheets, analysts)
