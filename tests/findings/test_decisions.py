"""Tests for workbench/findings/decisions.py: the analyst's decisions and the calls they give.

The result is the invented fixture of findings_data.py: Pb I at level 3, Ba II at level 2.
"""

from __future__ import annotations

import copy
import json

import pytest

from tests.findings.findings_data import RESULT, make_store
from tests.findings.findings_pdftext import pages_text, squash
from workbench.errors import InputError, StoreIntegrityError
from workbench.findings import (
    effective_calls,
    generate_key_pair,
    issue_findings_sheet,
    list_decisions,
    record_decision,
)
from workbench.findings.issue import draft_sheet_content, sign_and_store_sheet

PASS = "quay-decisions-5"  # invented
LAB = {"name": "Harbourside Forensic Chemistry Unit"}
ANALYST = "Zoë Ångström"


def _d(seq, action, target, **kw):
    return {"seq": seq, "action": action, "target": target, "lines": [], "reverses": None, **kw}


def _calls(decisions):
    return {c.element: c for c in effective_calls(copy.deepcopy(RESULT), decisions)}


def test_engine_calls_without_decisions():
    calls = _calls([])
    # Levels 3 and 2 are concluded (CONCLUDED_LEVEL = 2), from the fixture.
    assert calls["Pb"].concluded and calls["Ba"].concluded
    assert calls["Pb"].on_sheet and calls["Pb"].engine_concluded


@pytest.mark.parametrize(
    ("decisions", "element", "concluded", "on_sheet"),
    [
        ([_d(1, "reject_element", "Ba")], "Ba", False, False),
        ([_d(1, "reject_element", "Ba II")], "Ba", False, False),  # its only species
        (
            [_d(1, "reject_element", "Ba"), _d(2, "reverse", "decision 1", reverses=1)],
            "Ba",
            True,
            True,
        ),
        ([_d(1, "leave_off_sheet", "Pb")], "Pb", True, False),
        ([_d(1, "show_on_sheet", "Sb")], "Sb", False, True),
    ],
)
def test_decisions_change_the_calls(decisions, element, concluded, on_sheet):
    c = _calls(decisions)[element]
    assert (c.concluded, c.on_sheet) == (concluded, on_sheet)


def test_accepting_a_possible_call_concludes_it():
    res = copy.deepcopy(RESULT)
    res["elements"][1]["verdict_level"] = 1  # Ba II only "possible"
    calls = {c.element: c for c in effective_calls(res, [])}
    assert not calls["Ba"].concluded
    calls = {c.element: c for c in effective_calls(res, [_d(1, "accept_element", "Ba")])}
    assert calls["Ba"].concluded and not calls["Ba"].engine_concluded


def test_struck_line_leaves_the_evidence_and_last_line_unconcludes():
    # Ba II has one matched line in the fixture: striking it leaves no evidence.
    calls = _calls([_d(1, "reject_line", "Ba II|Ba II 455.40")])
    ba = calls["Ba"]
    assert ba.species[0]["matched_lines"] == [] and ba.species[0]["rejected_lines"] == [
        "Ba II 455.40"
    ]
    assert not ba.concluded
    pb = _calls([_d(1, "reject_line", "Pb I|Pb I 368.35")])["Pb"]
    assert [m["line_id"] for m in pb.species[0]["matched_lines"]] == ["Pb I 405.78"]
    assert pb.concluded


def test_added_element_is_concluded_with_its_lines():
    lines = [{"position": 500.1, "label": "Sr I 500.1 (invented)"}]
    c = _calls([_d(1, "add_element", "Sr", lines=lines)])["Sr"]
    assert c.added and c.concluded and c.on_sheet
    assert c.species[0]["matched_lines"] == lines


@pytest.fixture
def store(tmp_path):
    kp = generate_key_pair(PASS)
    st = make_store(tmp_path / "store", {ANALYST: kp.public_key_pem})
    st.kp = kp  # type: ignore[attr-defined]
    yield st
    st.close()


def _aid(store):
    return store.list_analyses("HFC-2026-0042")[0].id


@pytest.mark.parametrize(
    ("kw", "match"),
    [
        ({"action": "accept_element", "target": "Zz"}, "not an element or species"),
        ({"action": "reject_line", "target": "Pb I|nope"}, "not a line matched to Pb I"),
        ({"action": "reject_line", "target": "Pb I"}, "SPECIES|LINE_ID"),
        ({"action": "add_element", "target": "Sr"}, "needs at least one line"),
        ({"action": "add_element", "target": "Sr", "lines": [{"position": "x"}]}, "finite"),
        ({"action": "reverse", "reverses": 9}, "no decision 9"),
        ({"action": "accept_element", "target": "Pb", "reason": " "}, "needs a reason"),
        ({"action": "frobnicate", "target": "Pb"}, "unknown decision"),
    ],
)
def test_record_refusals(store, kw, match):
    args = {"reason": "checked by eye", "analyst": ANALYST, **kw}
    with pytest.raises(InputError, match=match):
        record_decision(store, _aid(store), **args)
    assert list_decisions(store, _aid(store)) == []  # nothing half-written


def test_record_list_and_reverse(store):
    aid = _aid(store)
    d1 = record_decision(
        store, aid, action="reject_element", target="Ba", reason="Ti line", analyst=ANALYST
    )
    d2 = record_decision(store, aid, action="reverse", reverses=1, reason="wrong", analyst=ANALYST)
    assert [d.seq for d in list_decisions(store, aid)] == [1, 2]
    assert d2.prev_hash == d1.record_hash  # hash chain
    with pytest.raises(InputError, match="already reversed"):
        record_decision(store, aid, action="reverse", reverses=1, reason="x", analyst=ANALYST)
    with pytest.raises(InputError, match="itself a reversal"):
        record_decision(store, aid, action="reverse", reverses=2, reason="x", analyst=ANALYST)


def test_decisions_are_append_only_and_tampering_is_detected(store):
    aid = _aid(store)
    record_decision(store, aid, action="reject_element", target="Ba", reason="r", analyst=ANALYST)
    conn = store.connection
    with pytest.raises(Exception, match="append-only"):  # SQLite trigger from migration 3
        conn.execute("UPDATE analysis_decisions SET reason='other'")
    conn.execute("DROP TRIGGER analysis_decisions_no_update")
    conn.execute("UPDATE analysis_decisions SET reason='other'")
    with pytest.raises(StoreIntegrityError, match="altered"):
        record_decision(store, aid, action="accept_element", target="Pb", reason="r", analyst="x")
    with pytest.raises(StoreIntegrityError, match="altered"):
        draft_sheet_content(
            store, aid, analyst_fingerprint=store.kp.fingerprint, lab=LAB, notes="", limitations=""
        )


def test_decisions_are_printed_and_signed(store, tmp_path):
    aid = _aid(store)
    record_decision(
        store,
        aid,
        action="reject_element",
        target="Ba",
        reason="455.40 is a Ti line here",
        analyst=ANALYST,
    )
    record_decision(
        store,
        aid,
        action="add_element",
        target="Sr",
        reason="Sr I 460.73 by eye",
        analyst=ANALYST,
        lines=[{"position": 500.1, "label": "Sr I (invented)"}],
    )
    issued = issue_findings_sheet(
        store,
        aid,
        analyst_fingerprint=store.kp.fingerprint,
        private_key_pem=store.kp.private_key_pem,
        passphrase=PASS,
        lab=LAB,
        notes="",
        limitations="",
        issued_at="2026-03-14T09:30:00Z",
    )
    content = json.loads(issued.json_bytes)
    assert [d["seq"] for d in content["decisions"]] == [1, 2]
    assert [r["element"] for r in content["summary"]] == ["Pb", "Sr"]  # Ba rejected, Sr added
    text = squash(" ".join(pages_text(issued.pdf_bytes)))
    assert "455.40 is a Ti line here" in text and "added the element by hand" in text


def test_signing_refuses_a_draft_older_than_the_decisions(store):
    aid = _aid(store)
    content = draft_sheet_content(
        store,
        aid,
        analyst_fingerprint=store.kp.fingerprint,
        lab=LAB,
        notes="",
        limitations="",
        issued_at="2026-03-14T09:30:00Z",
    )
    record_decision(store, aid, action="reject_element", target="Ba", reason="r", analyst=ANALYST)
    with pytest.raises(InputError, match=r"decisions on analysis \d+ changed"):
        sign_and_store_sheet(
            store, aid, content, private_key_pem=store.kp.private_key_pem, passphrase=PASS
        )
