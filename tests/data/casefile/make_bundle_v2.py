"""How tests/data/casefile/bundle-v2-reviewed.zip was made: by the code of commit ba43590.

That commit wrote bundle format 2 (no decisions, no reviews). Run from a checkout
of it (``git archive ba43590 workbench | tar -x -C /tmp/v2code``)::

    PYTHONPATH=/tmp/v2code uv run python tests/data/casefile/make_bundle_v2.py OUT_DIR

The case, people and keys are invented; the keys are fixed so the bundle is
reproducible. The store holds one decision and one approved review, which a
format-2 bundle leaves behind (its custody log still has the ``reviewed`` event).
"""

import sys
from pathlib import Path

from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workbench.casefile import CaseStore, export_bundle
from workbench.casefile.decisions import add_review, append_decision
from workbench.findings.signing import sign_sheet

CASE = "OLD-2026-0002"
keys = [Ed25519PrivateKey.from_private_bytes(bytes([b]) * 32) for b in (21, 22)]  # invented
pems = [
    k.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    for k in keys
]
root = Path(sys.argv[1])
with CaseStore.open(root / "store") as s:
    s.create_case(
        CASE, "Invented older case", "Invented requester", created_at="2026-01-05T09:00:00Z"
    )
    s.add_item(
        CASE,
        "1",
        "invented chip",
        seal_numbers=["OL-1"],
        received_by="Ana Old",
        received_from="PC Bo",
        at="2026-01-05T10:00:00Z",
    )
    m = s.add_measurement(
        f"{CASE}/1",
        b"wavelength_nm,intensity\n589.0,1200\n",
        "chip.csv",
        "LIBS",
        "Bench",
        {"gate_us": 1.0},
        "Ana Old",
        "2026-01-05T11:00:00Z",
    )
    a = s.add_analysis(
        m.id,
        parameters={"tol_nm": 0.05},
        reference_sets=[{"id": "x"}],
        result_json=b'{"elements":["Na"]}',
        software_version="0",
        analyst="Ana Old",
    )
    append_decision(
        s,
        a.id,
        action="accept_element",
        target="Na",
        reason="both D lines",
        analyst="Ana Old",
        decided_at="2026-01-05T12:00:00Z",
    )
    ana = s.register_analyst("Ana Old", "examiner", pems[0])
    rev = s.register_analyst("Rui Review", "reviewer", pems[1])
    pdf = b"%PDF-1.4\n% invented older sheet\n%%EOF\n"
    js = b'{"finding":"Na present","format":"invented"}'
    signed = sign_sheet(pdf, js, keys[0], signer="Ana Old", signed_at="2026-01-06T09:00:00Z")
    sheet = s.add_findings_sheet(
        a.id,
        analyst_fingerprint=ana.fingerprint,
        pdf_bytes=pdf,
        json_bytes=js,
        signature_raw=signed.signature_raw,
        signature_record=signed.record,
        issued_at="2026-01-06T09:00:00Z",
    )
    rsig = sign_sheet(pdf, js, keys[1], signer="Rui Review", signed_at="2026-01-07T09:00:00Z")
    add_review(
        s,
        sheet.id,
        reviewer_fingerprint=rev.fingerprint,
        outcome="approved",
        comments="checked",
        signature_raw=rsig.signature_raw,
        signature_record=rsig.record,
        reviewed_at="2026-01-07T09:00:00Z",
    )
    export_bundle(s, CASE, root / "bundle-v2-reviewed.zip")
