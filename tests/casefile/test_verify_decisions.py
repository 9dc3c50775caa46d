"""``custody verify`` checks the analyst's decisions and the technical reviews.

An invented case (tests/findings/findings_data.py) with two decisions, an issued
sheet and an approval is verified intact, then altered the way a forger with the
database file would (triggers dropped, the row's own hash recomputed so only the
chain or the custody events can tell): each alteration is a break that names the
decision or the review, on top of whatever the store-wide ledger reports.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from tests.casefile.attack_harness import raw
from tests.findings.findings_data import issue_sheet, make_store
from workbench.casefile import CaseStore
from workbench.casefile.decisions import (
    DECISION_HASH_FIELDS,
    REVIEW_HASH_FIELDS,
    stored_decisions,
)
from workbench.casefile.hashing import record_hash
from workbench.casefile.verify import verify_store
from workbench.findings import generate_key_pair, review_sheet
from workbench.findings.decisions import decide

PASS = "verify-dune-58"  # invented passphrase
CASE = "HFC-2026-0042"  # the invented case of tests/findings/findings_data.py
ZOE, BJORN = "Zoë Ångström", "Bjørn Łukasz"  # invented analyst and reviewer


@pytest.fixture(scope="module")
def pristine(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("verify")
    zoe, bjorn = generate_key_pair(PASS), generate_key_pair(PASS)
    st = make_store(tmp / "store", {ZOE: zoe.public_key_pem, BJORN: bjorn.public_key_pem})
    try:
        aid = st.list_analyses(CASE)[0].id
        decide(st, aid, "reject", "Ba", reason="455.40 nm is explained by Ti here", analyst=ZOE)
        decide(st, aid, "add", "Sr", reason="by eye", analyst=ZOE, line_texts=["500.1:Sr I"])
        issued = issue_sheet(st, aid, zoe, PASS, tmp / "out")
        review_sheet(
            st,
            issued.sheet_id,
            private_key_pem=bjorn.private_key_pem,
            passphrase=PASS,
            approve=True,
            comments="checked",
        )
    finally:
        st.close()
    return tmp / "store"


@pytest.fixture
def store_copy(pristine, tmp_path) -> Path:
    dst = tmp_path / "store"
    shutil.copytree(pristine, dst)
    return dst


def _report(root: Path):
    with CaseStore.open_readonly(root) as st:
        return verify_store(st, CASE)


def _kinds(report) -> set[str]:
    return {b.kind for b in report.breaks}


def test_intact_case_verifies(pristine):
    report = _report(pristine)
    assert report.ok, [b.describe() for b in report.breaks]
    assert not any("format-2" in w for w in report.warnings)


def test_rehashed_decision_edit_breaks_its_chain(store_copy):
    with CaseStore.open_readonly(store_copy) as st:
        analysis = st.list_analyses(CASE)[0]
        first = stored_decisions(st, analysis.id)[0].to_dict()
    rec = {**first, "analysis_hash": analysis.record_hash, "reason": "no reason"}  # forged
    conn = raw(store_copy)
    conn.execute(
        "UPDATE analysis_decisions SET reason=?, record_hash=? WHERE record_hash=?",
        ("no reason", record_hash(rec, DECISION_HASH_FIELDS), first["record_hash"]),
    )
    conn.close()
    report = _report(store_copy)
    assert not report.ok
    broken = [b for b in report.breaks if b.kind == "broken-decision"]
    # The rewritten decision 1 now matches its own hash, so the chain shows it:
    # decision 2 no longer links to it.
    assert broken and any("decision 2 does not link" in b.detail for b in broken)


def test_deleted_review_is_named(store_copy):
    conn = raw(store_copy)
    conn.execute("DELETE FROM sheet_reviews")
    conn.close()
    report = _report(store_copy)
    details = [b.detail for b in report.breaks if b.kind == "broken-review"]
    assert details and "this store does not hold" in details[0], details


def test_rehashed_review_edit_is_caught_by_its_custody_event(store_copy):
    conn = raw(store_copy)
    row = conn.execute("SELECT * FROM sheet_reviews").fetchone()
    names = [c[0] for c in conn.execute("SELECT * FROM sheet_reviews LIMIT 0").description]
    rec = dict(zip(names, row, strict=True))
    sheet_hash = conn.execute(
        "SELECT record_hash FROM findings_sheets WHERE id=?", (rec["sheet_id"],)
    ).fetchone()[0]
    rec["sheet_hash"] = sheet_hash
    rec["comments"] = "not checked"
    conn.execute(
        "UPDATE sheet_reviews SET comments=?, record_hash=? WHERE id=?",
        ("not checked", record_hash(rec, REVIEW_HASH_FIELDS), rec["id"]),
    )
    conn.close()
    report = _report(store_copy)
    assert "broken-review" in _kinds(report), [b.describe() for b in report.breaks]
