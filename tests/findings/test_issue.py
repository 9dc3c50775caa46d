"""Tests for workbench/findings/issue.py against a real case store (invented case)."""

from __future__ import annotations

import json

import pytest

from tests.findings.findings_data import make_store
from tests.findings.findings_pdftext import pages_text, squash
from workbench.errors import KeyFileError, NotFoundError, SignatureInvalidError, SigningError
from workbench.findings.issue import issue_findings_sheet
from workbench.findings.keys import generate_key_pair
from workbench.findings.signing import verify_raw_pdf_signature, verify_sheet_with_store

PASS = "harbour-lights-7"  # invented
LAB = {"name": "Harbourside Forensic Chemistry Unit", "accreditation": "ISO/IEC 17025 (invented)"}


@pytest.fixture(scope="module")
def keys():
    return generate_key_pair(PASS), generate_key_pair(PASS)


@pytest.fixture
def store(tmp_path, keys):
    st = make_store(
        tmp_path / "store",
        {"Zoë Ångström": keys[0].public_key_pem, "Bjørn Łukasz": keys[1].public_key_pem},
    )
    yield st
    st.close()


def _analysis_id(store):
    return store.list_analyses("HFC-2026-0042")[0].id


def _issue(store, kp, **kw):
    args = dict(
        analyst_fingerprint=kp.fingerprint,
        private_key_pem=kp.private_key_pem,
        passphrase=PASS,
        lab=LAB,
        notes="Notes with <i>markup</i>.",
        limitations="Single spot.",
        issued_at="2026-03-14T09:30:00Z",
    )
    args.update(kw)
    return issue_findings_sheet(store, _analysis_id(store), **args)


def test_issue_stores_signs_and_writes(store, keys, tmp_path):
    out = tmp_path / "out"
    issued = _issue(store, keys[0], out_dir=out)
    assert sorted(p.name for p in out.iterdir()) == sorted(
        issued.paths[k].name for k in ("pdf", "json", "sig", "record")
    )  # no temp files left
    assert issued.paths["pdf"].read_bytes() == issued.pdf_bytes
    res = verify_sheet_with_store(
        store, issued.pdf_bytes, issued.json_bytes, issued.signature_record
    )
    assert res.key_fingerprint == keys[0].fingerprint
    verify_raw_pdf_signature(issued.pdf_bytes, issued.signature_raw, keys[0].public_key_pem)
    rec = store.get_findings_sheet(issued.sheet_id)
    assert store.file_bytes(rec.pdf_sha256) == issued.pdf_bytes
    assert store.file_bytes(rec.record_sha256) == issued.signature_record
    # The store appends a "reported" custody event (casefile store contract).
    assert store.custody_events("HFC-2026-0042/3")[-1].kind == "reported"
    content = json.loads(issued.json_bytes)
    # Case and item references, custody kinds: from the invented store set up above.
    assert content["case"]["reference"] == "HFC-2026-0042"
    assert content["item"]["reference"] == "HFC-2026-0042/3"
    assert content["custody"][0]["action"] == "received"
    assert content["analysis"]["record_hash"] == store.get_analysis(_analysis_id(store)).record_hash
    text = squash(" ".join(pages_text(issued.pdf_bytes)))
    assert "Notes with <i>markup</i>." in text and "DC Bjørn Łukasz" in text
    assert store.verify().ok


def test_issue_is_reproducible_in_content(store, keys, tmp_path):
    a = _issue(store, keys[0])
    b = _issue(store, keys[0])
    # Same analysis and issue time: same JSON apart from the custody history, which
    # now includes the first sheet's "reported" event (and the item's event count).
    ja, jb = json.loads(a.json_bytes), json.loads(b.json_bytes)
    assert len(jb["custody"]) == len(ja["custody"]) + 1
    for j in (ja, jb):
        j.pop("custody")
        j["item"].pop("status")  # says how many custody events there are
    assert ja == jb


def test_issue_refuses_wrong_key_and_passphrase(store, keys):
    with pytest.raises(SigningError, match="does not match the registered key"):
        _issue(store, keys[0], private_key_pem=keys[1].private_key_pem)
    with pytest.raises(KeyFileError, match="wrong passphrase"):
        _issue(store, keys[0], passphrase="wrong-passphrase")
    assert store.list_findings_sheets("HFC-2026-0042") == []


def test_issue_refuses_unknown_and_revoked(store, keys, tmp_path):
    stranger = generate_key_pair(PASS)
    with pytest.raises(SigningError, match="not registered"):
        _issue(store, stranger)
    store.revoke_analyst(keys[1].fingerprint, "laptop stolen", "Lab Manager")
    out = tmp_path / "out2"
    with pytest.raises(SigningError, match=r"revoked.*laptop stolen"):
        _issue(store, keys[1], out_dir=out)
    assert not out.exists() or list(out.iterdir()) == []


def test_revoked_after_issue_fails_verification(store, keys):
    issued = _issue(store, keys[1])
    store.revoke_analyst(keys[1].fingerprint, "left the lab", "Lab Manager")
    with pytest.raises(SignatureInvalidError, match=r"revoked key.*left the lab"):
        verify_sheet_with_store(store, issued.pdf_bytes, issued.json_bytes, issued.signature_record)


def test_issue_unknown_analysis(store, keys):
    with pytest.raises(NotFoundError):
        issue_findings_sheet(
            store,
            999,
            analyst_fingerprint=keys[0].fingerprint,
            private_key_pem=keys[0].private_key_pem,
            passphrase=PASS,
            lab=LAB,
            notes="",
            limitations="",
        )


def test_existing_files_are_not_overwritten(store, keys, tmp_path):
    out = tmp_path / "out"
    first = _issue(store, keys[0], out_dir=out)
    with pytest.raises(Exception, match="already exists"):
        _issue(store, keys[0], out_dir=out)
    assert first.paths["pdf"].read_bytes() == first.pdf_bytes
    assert len(store.list_findings_sheets("HFC-2026-0042")) == 1  # nothing stored the 2nd time
