"""Tampering with a store behind the tool's back is detected, with its exact place.

Each case simulates an attacker with file access: a raw sqlite3 connection
drops the immutability triggers, then changes the database or the files.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable
from pathlib import Path

import pytest

from tests.casefile.helpers import populate
from workbench.casefile import CaseStore, event_hash
from workbench.casefile.hashing import record_hash, sha256_hex
from workbench.casefile.records import ANALYSIS_HASH_FIELDS

CASE = "HLX-2026-0007"


def _raw(root: Path) -> sqlite3.Connection:
    conn = sqlite3.connect(root / "cases.sqlite", isolation_level=None)
    conn.row_factory = sqlite3.Row
    for (name,) in conn.execute("SELECT name FROM sqlite_master WHERE type='trigger'").fetchall():
        conn.execute(f'DROP TRIGGER "{name}"')
    return conn


def _event(conn, item: str, seq: int) -> sqlite3.Row:
    return conn.execute(
        "SELECT e.* FROM custody_events e JOIN items i ON i.id=e.item_id "
        "WHERE i.item_number=? AND e.seq=?",
        (item, seq),
    ).fetchone()


def _rehash(conn, item: str, seq: int) -> None:
    row = dict(_event(conn, item, seq))
    row.update(case_number=CASE, item_number=item)
    conn.execute("UPDATE custody_events SET hash=? WHERE id=?", (event_hash(row), row["id"]))


def t_event_byte(root, conn):
    ev = _event(conn, "1", 2)
    conn.execute("UPDATE custody_events SET location='bench 5' WHERE id=?", (ev["id"],))
    return ("altered-event", "1", 2, ev["id"])


def t_event_rehashed(root, conn):
    # attacker also recomputes the altered event's own hash: the NEXT link breaks
    ev = _event(conn, "1", 2)
    conn.execute("UPDATE custody_events SET actor='Someone Else' WHERE id=?", (ev["id"],))
    _rehash(conn, "1", 2)
    return ("broken-link", "1", 3, _event(conn, "1", 3)["id"])


def t_delete_event(root, conn):
    ev = _event(conn, "1", 2)
    conn.execute("DELETE FROM custody_events WHERE id=?", (ev["id"],))
    return ("missing-event", "1", 2, _event(conn, "1", 3)["id"])


def t_reorder(root, conn):
    e2, e3 = _event(conn, "1", 2), _event(conn, "1", 3)
    conn.execute("UPDATE custody_events SET seq=-1 WHERE id=?", (e2["id"],))
    conn.execute("UPDATE custody_events SET seq=2 WHERE id=?", (e3["id"],))
    conn.execute("UPDATE custody_events SET seq=3 WHERE id=?", (e2["id"],))
    return ("reordered", "1", 2, e3["id"])


def t_backdated_forgery(root, conn):
    # a forged tail event with a valid hash but a time before its predecessor
    last = dict(_event(conn, "1.1", 3))
    forged = {
        **last,
        "seq": 4,
        "kind": "note",
        "at": "2026-01-01T00:00:00.000000Z",
        "note": "forged",
        "ref_kind": None,
        "ref_key": None,
        "ref_hash": None,
        "prev_hash": last["hash"],
        "case_number": CASE,
        "item_number": "1.1",
    }
    forged["hash"] = event_hash(forged)
    conn.execute(
        "INSERT INTO custody_events (item_id, seq, kind, at, actor, seal_state, note, "
        "recorded_at, prev_hash, hash) VALUES (?,?,?,?,?,?,?,?,?,?)",
        (
            last["item_id"],
            4,
            "note",
            forged["at"],
            forged["actor"],
            forged["seal_state"],
            "forged",
            forged["recorded_at"],
            forged["prev_hash"],
            forged["hash"],
        ),
    )
    row = _event(conn, "1.1", 4)
    return ("rule-violation", "1.1", 4, row["id"])


def t_replace_file(root, conn):
    sha = conn.execute("SELECT sha256 FROM measurements").fetchone()[0]
    path = root / "files" / sha[:2] / sha[2:]
    path.write_bytes(path.read_bytes().replace(b"1200", b"1300"))
    return ("file-replaced", "1.1", None, None)


def t_delete_file(root, conn):
    sha = conn.execute("SELECT sha256 FROM measurements").fetchone()[0]
    (root / "files" / sha[:2] / sha[2:]).unlink()
    return ("file-missing", "1.1", None, None)


def t_alter_result(root, conn):
    conn.execute("UPDATE analyses SET result_json=?", (b'{"elements":["Pb"]}',))
    return ("altered-result", "1.1", None, None)


def t_alter_result_and_hash(root, conn):
    new = b'{"elements":["Pb"]}'
    conn.execute("UPDATE analyses SET result_json=?, result_sha256=?", (new, sha256_hex(new)))
    return ("altered-record", "1.1", None, None)


def t_replace_analysis_fully(root, conn):
    # result, its SHA-256 and the record hash all recomputed: the chain still names the old one
    new = b'{"elements":["Pb"]}'
    a = dict(
        conn.execute(
            "SELECT a.*, m.record_hash AS measurement_hash FROM analyses a "
            "JOIN measurements m ON m.id=a.measurement_id"
        ).fetchone()
    )
    a.update(case_number=CASE, item_number="1.1", result_sha256=sha256_hex(new))
    import json

    a["parameters"] = json.loads(a["parameters"])
    a["reference_sets"] = json.loads(a["reference_sets"])
    conn.execute(
        "UPDATE analyses SET result_json=?, result_sha256=?, record_hash=?",
        (new, sha256_hex(new), record_hash(a, ANALYSIS_HASH_FIELDS)),
    )
    return ("unchained-record", "1.1", None, None)


def t_delete_measurement(root, conn):
    conn.execute("PRAGMA foreign_keys=OFF")
    conn.execute("DELETE FROM analyses")
    conn.execute("DELETE FROM measurements")
    ev = _event(conn, "1.1", 2)
    return ("missing-record", "1.1", 2, ev["id"])


def t_item_description(root, conn):
    conn.execute("UPDATE items SET description='a spoon' WHERE item_number='1'")
    return ("altered-record", "1", None, None)


def t_case_title(root, conn):
    conn.execute("UPDATE cases SET title='Something else'")
    return ("altered-record", None, None, None)


TAMPERINGS: dict[str, Callable] = {
    f.__name__[2:]: f
    for f in (
        t_event_byte,
        t_event_rehashed,
        t_delete_event,
        t_reorder,
        t_backdated_forgery,
        t_replace_file,
        t_delete_file,
        t_alter_result,
        t_alter_result_and_hash,
        t_replace_analysis_fully,
        t_delete_measurement,
        t_item_description,
        t_case_title,
    )
}


def _run(tmp_path: Path, name: str):
    root = tmp_path / name
    with CaseStore.open(root) as s:
        populate(s, CASE)
        assert s.verify().ok
    conn = _raw(root)
    expected = TAMPERINGS[name](root, conn)
    conn.close()
    with CaseStore.open(root) as s:
        report = s.verify()
    return expected, report


@pytest.mark.parametrize("name", sorted(TAMPERINGS))
def test_tampering_detected_at_exact_place(tmp_path, name):
    (kind, item, seq, event_id), report = _run(tmp_path, name)
    assert not report.ok
    b = report.first_break
    # expected place is where the test itself tampered (common practice, no source)
    assert (b.kind, b.item_number, b.seq, b.event_id) == (kind, item, seq, event_id), b.describe()
    if item is not None or kind == "altered-record":
        assert b.case_number == CASE


def test_tampering_tally(tmp_path):
    tried = detected = 0
    for name in sorted(TAMPERINGS):
        tried += 1
        (kind, *_), report = _run(tmp_path, name)
        detected += (not report.ok) and report.first_break.kind == kind
    print(f"tamperings tried: {tried}, detected at the right place: {detected}")
    # every tampering tried must be detected (the point of the chain; no source needed)
    assert detected == tried == len(TAMPERINGS)
