"""Findings sheets in the store: stored immutably, chained, signatures checked by verify."""

from __future__ import annotations

import sqlite3

import pytest

from tests.casefile.helpers import add_signed_sheet, populate
from workbench.errors import CaseFileError, SignatureInvalidError

signing = pytest.importorskip(
    "workbench.findings.signing", reason="signature check unavailable until findings exists"
)


def test_sheet_stored_chained_and_verified(store):
    info = populate(store)
    s = add_signed_sheet(store, info["analysis"].id)
    sheet = s["sheet"]
    assert store.file_bytes(sheet.pdf_sha256) == s["pdf"]
    assert store.list_findings_sheets(info["case"])[0].id == sheet.id
    last = store.custody_events(f"{info['case']}/1.1")[-1]
    assert last.kind == "reported" and last.ref_hash == sheet.record_hash
    report = store.verify()
    assert report.ok and report.signature_check == "ok"
    assert report.counts["signatures"] == 1


def test_bad_signature_refused_on_add(store):
    info = populate(store)
    s = add_signed_sheet(store, info["analysis"].id)
    with pytest.raises(SignatureInvalidError):
        store.add_findings_sheet(
            info["analysis"].id,
            analyst_fingerprint=s["analyst"].fingerprint,
            pdf_bytes=s["pdf"] + b" ",
            json_bytes=s["json"],
            signature_raw=store.file_bytes(s["sheet"].signature_sha256),
            signature_record=store.file_bytes(s["sheet"].record_sha256),
            issued_at="2026-02-04T09:00:00Z",
        )
    assert len(store.list_findings_sheets()) == 1


def test_revoked_key_after_issue_is_a_warning_not_a_break(store):
    info = populate(store)
    s = add_signed_sheet(store, info["analysis"].id)
    store.revoke_analyst(s["analyst"].fingerprint, "key file exposed", "Lab manager")
    report = store.verify()
    assert report.ok and report.warnings and "revoked" in report.warnings[0]
    with pytest.raises(CaseFileError, match="revoked"):
        store.add_findings_sheet(
            info["analysis"].id,
            analyst_fingerprint=s["analyst"].fingerprint,
            pdf_bytes=s["pdf"],
            json_bytes=s["json"],
            signature_raw=b"x" * 64,
            signature_record=b"{}",
            issued_at="2026-02-05T09:00:00Z",
        )


def test_swapped_public_key_breaks_signature(store, tmp_path):
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    info = populate(store)
    s = add_signed_sheet(store, info["analysis"].id)
    other = (
        Ed25519PrivateKey.generate()
        .public_key()
        .public_bytes(serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo)
    )
    conn = sqlite3.connect(store.root / "cases.sqlite", isolation_level=None)
    conn.execute("DROP TRIGGER analysts_fixed_fields")
    conn.execute("UPDATE analysts SET public_key_pem=?", (other.decode(),))
    conn.close()
    report = store.verify()
    assert not report.ok
    b = report.first_break
    assert b.kind == "signature-invalid" and b.item_number == "1.1"
    assert s["sheet"].record_hash  # the sheet record itself is intact
