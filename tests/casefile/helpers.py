"""Helpers for the case-store tests (invented cases, labs and people)."""

from __future__ import annotations

import json

from workbench.casefile import CaseStore


def populate(s: CaseStore, case_number: str = "HLX-2026-0007") -> dict:
    """A small invented case: an item, a sub-sample, a measurement and an analysis."""
    s.create_case(case_number, "Green glass fragments", "Harrowgate Constabulary")
    s.add_item(
        case_number,
        "1",
        "bag of green glass fragments",
        seal_numbers=["HC-55120"],
        storage_location="store room B, shelf 2",
        received_by="Dana Whitlock",
        received_from="PC Ivo Marten",
        at="2026-02-03T09:00:00Z",
    )
    s.add_custody_event(
        f"{case_number}/1",
        "opened",
        "Dana Whitlock",
        seal_number="HC-55120",
        location="bench 4",
        at="2026-02-03T10:00:00Z",
    )
    s.add_item(
        case_number,
        "1.1",
        "largest fragment",
        parent_item="1",
        received_by="Dana Whitlock",
        at="2026-02-03T10:30:00Z",
    )
    m = s.add_measurement(
        f"{case_number}/1.1",
        b"wavelength_nm,intensity\n589.0,1200\n589.6,800\n",
        "frag1_libs.csv",
        "LIBS",
        "Bench LIBS unit 2",
        {"gate_delay_us": 1.0, "pulses": 50},
        "Dana Whitlock",
        "2026-02-03T11:00:00Z",
    )
    a = s.add_analysis(
        m.id,
        parameters={"tolerance_nm": 0.05},
        reference_sets=[{"id": "demo-lines", "version": "1", "sha256": "0" * 64}],
        result_json=json.dumps({"elements": ["Na"]}).encode(),
        software_version="0.1.0",
        analyst="Dana Whitlock",
    )
    return {"case": case_number, "measurement": m, "analysis": a}


def add_signed_sheet(s: CaseStore, analysis_id: int, name: str = "Dana Whitlock") -> dict:
    """Register a fresh analyst key and store a signed findings sheet for an analysis."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from workbench.findings.signing import sign_sheet

    key = Ed25519PrivateKey.generate()
    pem = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    analyst = s.register_analyst(name, "examiner", pem)
    pdf = b"%PDF-1.4\n% invented findings sheet for tests\n%%EOF\n"
    js = json.dumps({"analysis": analysis_id, "finding": "Na present"}, sort_keys=True).encode()
    signed = sign_sheet(pdf, js, key, signer=name, signed_at="2026-02-04T09:00:00Z")
    sheet = s.add_findings_sheet(
        analysis_id,
        analyst_fingerprint=analyst.fingerprint,
        pdf_bytes=pdf,
        json_bytes=js,
        signature_raw=signed.signature_raw,
        signature_record=signed.record,
        issued_at="2026-02-04T09:00:00Z",
    )
    return {"key": key, "analyst": analyst, "sheet": sheet, "pdf": pdf, "json": js}
