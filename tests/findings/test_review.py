"""Tests for workbench/findings/review.py: technical review of an issued sheet (invented case)."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

from tests.findings.findings_data import make_store
from workbench.casefile.decisions import list_reviews
from workbench.errors import InputError, SignatureInvalidError, SigningError
from workbench.findings import (
    generate_key_pair,
    issue_findings_sheet,
    review_sheet,
    verify_review,
    verify_review_with_store,
)

PASS = "review-quay-88"  # invented
LAB = {"name": "Harbourside Forensic Chemistry Unit"}


@pytest.fixture(scope="module")
def keys():
    return generate_key_pair(PASS), generate_key_pair(PASS), generate_key_pair(PASS)


@pytest.fixture
def sheet(tmp_path, keys):
    # Analyst Zoë, reviewer Bjørn, and a second key registered to Zoë (same person).
    st = make_store(
        tmp_path / "store",
        {"Zoë Ångström": keys[0].public_key_pem, "Bjørn Łukasz": keys[1].public_key_pem},
    )
    st.register_analyst("Zoë Ångström", "examiner", keys[2].public_key_pem)
    aid = st.list_analyses("HFC-2026-0042")[0].id
    issued = issue_findings_sheet(
        st,
        aid,
        analyst_fingerprint=keys[0].fingerprint,
        private_key_pem=keys[0].private_key_pem,
        passphrase=PASS,
        lab=LAB,
        notes="",
        limitations="",
        issued_at="2026-03-14T09:30:00Z",
        out_dir=tmp_path / "out",
    )
    yield st, issued
    st.close()


def _review(st, issued, kp, approve=True, **kw):
    return review_sheet(
        st,
        issued.sheet_id,
        private_key_pem=kp.private_key_pem,
        passphrase=PASS,
        approve=approve,
        **kw,
    )


def test_issue_review_verify(sheet, keys, tmp_path):
    st, issued = sheet
    out = _review(st, issued, keys[1], comments="lines checked", out_dir=tmp_path / "rev")
    assert out.review.outcome == "approved"
    res = verify_review_with_store(
        st,
        issued.pdf_bytes,
        issued.json_bytes,
        issued.signature_record,
        out.signature_record,
        review_raw=out.signature_raw,
    )
    assert res.signer == "Bjørn Łukasz" and "reviewer is not the analyst" in res.checks
    assert out.paths["record"].read_bytes() == out.signature_record
    # Custody: the sheet's "reported" event, then the review's "reviewed" event.
    kinds = [e.kind for e in st.custody_events("HFC-2026-0042/3")]
    assert kinds[-2:] == ["reported", "reviewed"]
    assert st.verify().ok


@pytest.mark.parametrize("which", [0, 2])  # the analyst's own key, and another key of hers
def test_self_review_refused(sheet, keys, which):
    st, issued = sheet
    with pytest.raises(SigningError, match="cannot review their own analysis"):
        _review(st, issued, keys[which])
    assert list_reviews(st, issued.sheet_id) == []


def test_return_needs_comments_then_approval_once(sheet, keys):
    st, issued = sheet
    with pytest.raises(InputError, match="needs the reviewer's comments"):
        _review(st, issued, keys[1], approve=False)
    back = _review(st, issued, keys[1], approve=False, comments="Ti I line 498 unresolved")
    assert back.review.outcome == "returned" and back.review.signature_sha256 is None
    _review(st, issued, keys[1])
    with pytest.raises(InputError, match="already been approved"):
        _review(st, issued, keys[1])
    assert [r.outcome for r in list_reviews(st, issued.sheet_id)] == ["returned", "approved"]


def _flip(data: bytes, pos: int) -> bytes:
    b = bytearray(data)
    b[pos] ^= 0x01
    return bytes(b)


@pytest.mark.parametrize(
    ("target", "message"),
    [
        ("review", "record altered|malformed"),
        ("analyst", "record altered|malformed"),
        ("swap", "review by the analyst"),
    ],
)
def test_verify_fails_if_either_signature_is_altered(sheet, keys, target, message):
    st, issued = sheet
    out = _review(st, issued, keys[1])
    analyst, review = issued.signature_record, out.signature_record
    # Byte 300 lies inside a base64 signature field of the canonical record.
    if target == "review":
        review = _flip(review, 300)
    elif target == "analyst":
        analyst = _flip(analyst, 300)
    else:
        review = analyst
    with pytest.raises(SignatureInvalidError, match=message):
        if target == "analyst":
            from workbench.findings.signing import verify_sheet_with_store

            verify_sheet_with_store(st, issued.pdf_bytes, issued.json_bytes, analyst)
        verify_review_with_store(st, issued.pdf_bytes, issued.json_bytes, analyst, review)


def test_named_reviewer_must_review(tmp_path, keys):
    st = make_store(
        tmp_path / "s2",
        {"Zoë Ångström": keys[0].public_key_pem, "Bjørn Łukasz": keys[1].public_key_pem},
    )
    st.register_analyst("Third Reviewer (invented)", "examiner", keys[2].public_key_pem)
    aid = st.list_analyses("HFC-2026-0042")[0].id
    kw = dict(
        analyst_fingerprint=keys[0].fingerprint,
        private_key_pem=keys[0].private_key_pem,
        passphrase=PASS,
        lab=LAB,
        notes="",
        limitations="",
        issued_at="2026-03-14T09:30:00Z",
    )
    with pytest.raises(SigningError, match="cannot review their own"):
        issue_findings_sheet(st, aid, reviewer_fingerprint=keys[0].fingerprint, **kw)
    issued = issue_findings_sheet(st, aid, reviewer_fingerprint=keys[1].fingerprint, **kw)
    with pytest.raises(SigningError, match="names the reviewer"):
        _review(st, issued, keys[2])
    out = _review(st, issued, keys[1])
    res = verify_review(
        issued.pdf_bytes,
        issued.json_bytes,
        issued.signature_record,
        out.signature_record,
        keys[1].public_key_pem,
    )
    assert res.key_fingerprint == keys[1].fingerprint
    st.close()


@pytest.mark.skipif(shutil.which("openssl") is None, reason="openssl is not on PATH")
def test_openssl_verifies_both_signatures(sheet, keys, tmp_path):
    version = subprocess.run(["openssl", "version"], capture_output=True, text=True).stdout
    if not version.startswith("OpenSSL 3"):
        pytest.skip(f"needs OpenSSL 3 for -rawin Ed25519 verification, found {version!r}")
    st, issued = sheet
    out = _review(st, issued, keys[1])
    (tmp_path / "ANALYST.pub.pem").write_bytes(keys[0].public_key_pem)
    (tmp_path / "REVIEWER.pub.pem").write_bytes(keys[1].public_key_pem)
    (tmp_path / "SHEET.pdf").write_bytes(issued.pdf_bytes)
    (tmp_path / "SHEET.sig").write_bytes(issued.signature_raw)
    (tmp_path / "SHEET.review.sig").write_bytes(out.signature_raw)

    def run(cmd):
        return subprocess.run(cmd, cwd=tmp_path, capture_output=True, text=True)

    # The commands exactly as README.md prints them, run on the issued and reviewed files.
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text()
    commands = [ln.split() for ln in readme.splitlines() if ln.startswith("openssl pkeyutl")]
    assert [c[5] for c in commands] == ["ANALYST.pub.pem", "REVIEWER.pub.pem"]
    for cmd in commands:
        res = run(cmd)
        # Output text of OpenSSL 3 pkeyutl -verify (openssl-pkeyutl(1) man page).
        assert res.returncode == 0 and "Signature Verified Successfully" in res.stdout
    crossed = [*commands[0][:-1], "SHEET.review.sig"]  # analyst's key, reviewer's signature
    assert run(crossed).returncode != 0
