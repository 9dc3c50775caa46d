"""Signed findings sheets: content, PDF rendering, Ed25519 keys and signatures.

A findings sheet is built from plain data (:func:`build_sheet_content`),
written twice — as canonical JSON (:func:`canonical_json`) and as a PDF
(:func:`render_pdf`) — and signed with the analyst's Ed25519 key
(:func:`sign_sheet`). :func:`verify_sheet` and :func:`verify_sheet_with_store`
check all three files and say which check failed. :func:`issue_findings_sheet`
does the whole round trip against a case store.

The analyst's decisions on an analysis (:func:`record_decision`,
:func:`list_decisions`, :func:`effective_calls`) are printed on the sheet and
signed with it; a second analyst reviews an issued sheet with
:func:`review_sheet` (countersignature, checked by :func:`verify_review`).
"""

from __future__ import annotations

from workbench.findings.content import (
    CAUTIONS,
    CONTENT_FORMAT,
    build_sheet_content,
    canonical_json,
    utc_timestamp,
)
from workbench.findings.decisions import (
    ElementCall,
    check_sheet_decisions,
    effective_calls,
    list_decisions,
    record_decision,
)
from workbench.findings.issue import (
    IssuedSheet,
    draft_sheet_content,
    gather_sheet_inputs,
    issue_findings_sheet,
    sign_and_store_sheet,
)
from workbench.findings.keys import (
    MIN_PASSPHRASE_LENGTH,
    KeyPair,
    fingerprint_of,
    generate_key_pair,
    load_private_key,
    load_public_key,
    public_key_pem_of,
    read_passphrase,
    save_key_pair,
)
from workbench.findings.review import (
    ReviewOutcome,
    review_sheet,
    verify_review,
    verify_review_with_store,
)
from workbench.findings.sheet import render_pdf
from workbench.findings.signing import (
    SIGNATURE_FORMAT,
    SignedSheet,
    VerificationResult,
    parse_signature_record,
    sign_sheet,
    verify_raw_pdf_signature,
    verify_sheet,
    verify_sheet_with_store,
)

__all__ = [
    "CAUTIONS",
    "CONTENT_FORMAT",
    "MIN_PASSPHRASE_LENGTH",
    "SIGNATURE_FORMAT",
    "ElementCall",
    "IssuedSheet",
    "KeyPair",
    "ReviewOutcome",
    "SignedSheet",
    "VerificationResult",
    "build_sheet_content",
    "canonical_json",
    "check_sheet_decisions",
    "draft_sheet_content",
    "effective_calls",
    "fingerprint_of",
    "gather_sheet_inputs",
    "generate_key_pair",
    "issue_findings_sheet",
    "list_decisions",
    "load_private_key",
    "load_public_key",
    "parse_signature_record",
    "public_key_pem_of",
    "read_passphrase",
    "record_decision",
    "render_pdf",
    "review_sheet",
    "save_key_pair",
    "sign_and_store_sheet",
    "sign_sheet",
    "utc_timestamp",
    "verify_raw_pdf_signature",
    "verify_review",
    "verify_review_with_store",
    "verify_sheet",
    "verify_sheet_with_store",
]
