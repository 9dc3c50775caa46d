"""Which tables the store ledger covers, and how each names one of its rows.

Every table of the case store is registered with the ledger
(:func:`workbench.casefile.ledger.register_table`) with a function that names
a row in words (natural keys, robust to missing parents), so that ``custody
verify`` can say *what* was deleted or altered. :mod:`~workbench.casefile.schema`
calls :func:`register_store_tables` when it is imported; a migration that adds
a table adds its entry to :data:`DESCRIBE` here.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable
from typing import Any

from workbench.casefile import ledger

__all__ = ["DESCRIBE", "register_store_tables"]


def _one(conn: sqlite3.Connection, sql: str, args: tuple) -> Any:
    r = conn.execute(sql, args).fetchone()
    return r[0] if r else None


def _item_label(conn: sqlite3.Connection, item_id: Any) -> str:
    r = conn.execute(
        "SELECT c.case_number, i.item_number FROM items i LEFT JOIN cases c ON c.id=i.case_id "
        "WHERE i.id=?",
        (item_id,),
    ).fetchone()
    if r is None:
        return f"item id {item_id}"
    return f"{r[0] if r[0] is not None else '?'}/{r[1]}"


def _describe_item(conn: sqlite3.Connection, row: dict) -> str:
    case = _one(conn, "SELECT case_number FROM cases WHERE id=?", (row["case_id"],))
    return f"item {case if case is not None else '?'}/{row['item_number']} (id {row['id']})"


def _describe_measurement(conn: sqlite3.Connection, row: dict) -> str:
    return (
        f"measurement {row['id']} of item {_item_label(conn, row['item_id'])} "
        f"({row['filename']}, SHA-256 {str(row['sha256'])[:12]}…)"
    )


def _describe_analysis(conn: sqlite3.Connection, row: dict) -> str:
    item = _one(conn, "SELECT item_id FROM measurements WHERE id=?", (row["measurement_id"],))
    return (
        f"analysis {row['id']} of measurement {row['measurement_id']} "
        f"(item {_item_label(conn, item)})"
    )


def _describe_sheet(conn: sqlite3.Connection, row: dict) -> str:
    return (
        f"findings sheet {row['id']} of analysis {row['analysis_id']} "
        f"(PDF SHA-256 {str(row['pdf_sha256'])[:12]}…, signed by {row['analyst']})"
    )


DESCRIBE: dict[str, Callable[[sqlite3.Connection, dict], str]] = {
    "schema_version": lambda c, r: f"schema version {r['version']}",
    "cases": lambda c, r: f"case {r['case_number']} (id {r['id']})",
    "items": _describe_item,
    "custody_events": lambda c, r: (
        f"custody event {_item_label(c, r['item_id'])} #{r['seq']} ({r['kind']}, id {r['id']})"
    ),
    "measurements": _describe_measurement,
    "analyses": _describe_analysis,
    "analysts": lambda c, r: f"analyst {r['name']} key {r['fingerprint']}",
    "findings_sheets": _describe_sheet,
    "key_events": lambda c, r: f"key event #{r['seq']} ({r['kind']} {r['fingerprint']})",
    "analysis_decisions": lambda c, r: (
        f"decision #{r['seq']} on analysis {r['analysis_id']} ({r['action']} {r['target']})"
    ),
    "sheet_reviews": lambda c, r: (
        f"technical review of findings sheet {r['sheet_id']} ({r['outcome']} by {r['reviewer']})"
    ),
}


def register_store_tables() -> None:
    """Put every table of the store under the ledger's coverage (idempotent)."""
    for table, describe in DESCRIBE.items():
        ledger.register_table(table, describe)
