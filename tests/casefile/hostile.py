"""Builders for hostile stores (tests only; invented cases, labs and people).

Each function simulates an attacker, or damage, with file access: a raw
sqlite3 connection that drops the immutability triggers first.
"""

from __future__ import annotations

import shutil
import sqlite3
from pathlib import Path

from tests.casefile.helpers import add_signed_sheet, populate
from workbench.casefile import CaseStore
from workbench.casefile.decisions import add_review, append_decision

CASE = "HLX-2026-0007"


def rich_store(root: Path) -> Path:
    """A store with a row in every table: case (status changed), items, events,
    measurement, analysis, signed sheet, an analyst's decision, a returned review,
    a revoked second key and the key log."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    with CaseStore.open(root) as s:
        info = populate(s, CASE)
        sheet = add_signed_sheet(s, info["analysis"].id)["sheet"]
        append_decision(
            s,
            info["analysis"].id,
            action="reject_element",
            target="Na I",
            reason="only one line, in the blank as well",
            analyst="Dana Whitlock",
        )
        pem = (
            Ed25519PrivateKey.generate()
            .public_key()
            .public_bytes(
                serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
            )
        )
        other = s.register_analyst("Omar Vell", "examiner", pem, registered_by="Lab manager")
        add_review(
            s,
            sheet.id,
            reviewer_fingerprint=other.fingerprint,
            outcome="returned",
            comments="state the blank's Na level",
        )
        s.revoke_analyst(other.fingerprint, "left the laboratory", "Lab manager")
        s.set_case_status(CASE, "closed")
        s.set_case_status(CASE, "open")
    return root


def raw(root: Path) -> sqlite3.Connection:
    """A raw connection with every trigger dropped and foreign keys off."""
    conn = sqlite3.connect(root / "cases.sqlite", isolation_level=None)
    conn.execute("PRAGMA foreign_keys=OFF")
    for (name,) in conn.execute("SELECT name FROM sqlite_master WHERE type='trigger'").fetchall():
        conn.execute(f'DROP TRIGGER "{name}"')
    return conn


def all_rows(root: Path) -> list[tuple[str, int]]:
    """Every (table, rowid) in the store, every table."""
    conn = sqlite3.connect(root / "cases.sqlite")
    tables = [
        r[0]
        for r in conn.execute(
            "SELECT name FROM sqlite_master WHERE type='table' AND name NOT LIKE 'sqlite_%' "
            "ORDER BY name"
        )
    ]
    out = [(t, int(rid)) for t in tables for (rid,) in conn.execute(f'SELECT rowid FROM "{t}"')]
    conn.close()
    return out


def copy_store(src: Path, dst: Path) -> Path:
    """A byte copy of a (closed) store."""
    shutil.copytree(src, dst)
    return dst


def snapshot(root: Path) -> dict[str, tuple[bytes, int]]:
    """Every file under the store with its bytes and mtime (ns)."""
    return {
        str(p.relative_to(root)): (p.read_bytes(), p.stat().st_mtime_ns)
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }
