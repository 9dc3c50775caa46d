"""Tests for workbench/casefile/decisions.py: stored decisions and reviews (invented case)."""

from __future__ import annotations

import sqlite3

import pytest

from tests.findings.findings_data import make_store
from workbench.casefile import CaseStore
from workbench.casefile.decisions import append_decision, check_decisions, stored_decisions
from workbench.casefile.hashing import GENESIS_HASH
from workbench.casefile.schema import SCHEMA_VERSION, connect, schema_version
from workbench.errors import InputError


@pytest.fixture
def store(tmp_path):
    st = make_store(tmp_path / "store", {})
    yield st
    st.close()


def _add(st, n, **kw):
    aid = st.list_analyses("HFC-2026-0042")[0].id
    args = {"action": "accept_element", "target": "Pb", "reason": f"reason {n}", "analyst": "Zoë"}
    args.update(kw)
    return append_decision(st, aid, **args)


def test_version_2_store_gains_the_tables(tmp_path):
    db = tmp_path / "s" / "cases.sqlite"
    db.parent.mkdir()
    connect(db, target_version=2).close()
    with CaseStore.open(tmp_path / "s") as s:
        assert schema_version(s.connection) == SCHEMA_VERSION == 4
        names = {r[0] for r in s.connection.execute("SELECT name FROM sqlite_master")}
        assert {"analysis_decisions", "sheet_reviews", "sheet_reviews_no_delete"} <= names


def test_chain_links_and_numbers(store):
    a, b, c = (_add(store, n) for n in range(3))
    assert (a.seq, b.seq, c.seq) == (1, 2, 3)
    assert a.prev_hash == GENESIS_HASH and b.prev_hash == a.record_hash
    assert check_decisions(store, a.analysis_id) == []


@pytest.mark.parametrize(
    ("sql", "problem"),
    [
        ("UPDATE analysis_decisions SET target='Ba' WHERE seq=2", "decision 2 was altered"),
        ("DELETE FROM analysis_decisions WHERE seq=2", "decision 3 follows decision 1"),
        (
            "UPDATE analysis_decisions SET decided_at='2020-01-01T00:00:00.000000Z' WHERE seq=1",
            "decision 1 was altered",
        ),
    ],
)
def test_tampering_breaks_the_chain(store, sql, problem):
    for n in range(3):
        _add(store, n)
    conn = store.connection
    with pytest.raises(sqlite3.DatabaseError, match="append-only"):  # triggers (migration 3)
        conn.execute(sql)
    conn.execute("DROP TRIGGER analysis_decisions_no_update")
    conn.execute("DROP TRIGGER analysis_decisions_no_delete")
    conn.execute(sql)
    aid = stored_decisions(store, store.list_analyses("HFC-2026-0042")[0].id)[0].analysis_id
    assert any(problem in p for p in check_decisions(store, aid))


@pytest.mark.parametrize(
    ("kw", "match"),
    [({"action": "nope"}, "unknown decision"), ({"reason": ""}, "needs a reason")],
)
def test_refusals(store, kw, match):
    with pytest.raises(InputError, match=match):
        _add(store, 0, **kw)
