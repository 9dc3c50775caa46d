r"""Technical review of an issued findings sheet: countersign or return with comments.

A second registered analyst reviews a sheet the analyst has issued. An
approval is a second Ed25519 signature over *the same bytes* (the PDF and
its canonical JSON), made with :func:`~workbench.findings.signing.sign_sheet`
and kept as ``SHEET.review.sig.json`` plus the raw ``SHEET.review.sig``, so
that OpenSSL can check it exactly as it checks the analyst's::

    openssl pkeyutl -verify -pubin -inkey REVIEWER.pub.pem -rawin -in SHEET.pdf \\
        -sigfile SHEET.review.sig

A return is recorded with its comments and no signature; the analyst then
issues a new sheet. Both are stored by
:func:`workbench.casefile.decisions.add_review`, which appends a
``reviewed`` custody event.

Refusals: the reviewer is the analyst (same key or same registered name);
the sheet names another reviewer; the reviewer's key is unknown, revoked or
not the one given; the sheet already carries an approval; the analyst's own
signature does not verify.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from workbench.casefile.decisions import ReviewRecord, add_review, list_reviews
from workbench.errors import InputError, NotFoundError, SignatureInvalidError, SigningError
from workbench.findings.content import utc_timestamp
from workbench.findings.keys import fingerprint_of, load_private_key
from workbench.findings.signing import (
    VerificationResult,
    analyst_revocation,
    parse_signature_record,
    sign_sheet,
    untrusted_key_error,
    verify_raw_pdf_signature,
    verify_sheet,
    verify_sheet_with_store,
)

__all__ = [
    "REVIEW_SUFFIXES",
    "ReviewOutcome",
    "review_sheet",
    "verify_review",
    "verify_review_with_store",
]

#: File suffixes of a reviewer's signature: the record and the raw PDF signature.
REVIEW_SUFFIXES: dict[str, str] = {"record": ".review.sig.json", "sig": ".review.sig"}


@dataclass(frozen=True)
class ReviewOutcome:
    """A stored review.

    Attributes
    ----------
    review : ReviewRecord
        The stored row.
    signature_raw, signature_record : bytes
        The reviewer's signature files (empty for a return).
    paths : dict of str to Path
        Where the files were written (empty without ``out_dir``).
    """

    review: ReviewRecord
    signature_raw: bytes = b""
    signature_record: bytes = b""
    paths: dict[str, Path] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly summary."""
        return {**self.review.to_dict(), "files": {k: str(v) for k, v in self.paths.items()}}


def _named_reviewer(json_bytes: bytes) -> str | None:
    import json

    try:
        content = json.loads(bytes(json_bytes).decode("utf-8"))
    except (UnicodeDecodeError, ValueError):
        return None
    rev = content.get("reviewer") if isinstance(content, dict) else None
    return rev.get("fingerprint") if isinstance(rev, dict) else None


def _write_files(out_dir: Path, stem: str, blobs: dict[str, bytes]) -> dict[str, Path]:
    out_dir.mkdir(parents=True, exist_ok=True)
    finals = {k: out_dir / f"{stem}{REVIEW_SUFFIXES[k]}" for k in blobs}
    for p in finals.values():
        if p.exists():
            raise InputError(f"{p} already exists", "write the review files into another folder")
    for k, final in finals.items():
        tmp = final.with_name(f".{final.name}.tmp")
        with open(tmp, "wb") as fh:
            fh.write(blobs[k])
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, final)
    return finals


def review_sheet(
    store: Any,
    sheet_id: int,
    *,
    private_key_pem: bytes,
    passphrase: str,
    approve: bool,
    comments: str = "",
    reviewed_at: str | None = None,
    out_dir: str | os.PathLike[str] | None = None,
    stem: str | None = None,
) -> ReviewOutcome:
    """Review an issued sheet: countersign it (``approve=True``) or return it with comments.

    Parameters
    ----------
    store : CaseStore
        The open store holding the sheet and both analysts' keys.
    sheet_id : int
        The issued sheet.
    private_key_pem : bytes
        The reviewer's encrypted private key.
    passphrase : str
        Its passphrase.
    approve : bool
        True to sign as reviewer, False to return the sheet.
    comments : str
        The reviewer's comments (required to return a sheet).
    reviewed_at : str, optional
        UTC time; now by default.
    out_dir : path-like, optional
        Folder for ``<stem>.review.sig.json`` and ``<stem>.review.sig`` (approvals).
    stem : str, optional
        File stem; ``findings-sheet-<id>`` (as ``workbench findings show --export``) by default.

    Returns
    -------
    ReviewOutcome
        The stored review and, for an approval, the signature files.

    Raises
    ------
    SigningError
        Self-review, another named reviewer, unknown or revoked key, key not
        the registered one, or a sheet whose own signature fails.
    InputError
        A return without comments, or a second approval.
    """
    sheet = store.get_findings_sheet(int(sheet_id))
    pdf = store.file_bytes(sheet.pdf_sha256)
    js = store.file_bytes(sheet.json_sha256)
    record = store.file_bytes(sheet.record_sha256)
    verify_sheet_with_store(store, pdf, js, record)  # never countersign a broken sheet
    key = load_private_key(bytes(private_key_pem), passphrase)
    fp = fingerprint_of(key.public_key())  # type: ignore[attr-defined]
    try:
        reviewer = store.get_analyst(fp)
    except NotFoundError as exc:
        raise SigningError(
            f"reviewer key {fp} is not registered in the case store",
            "register the reviewer's public key first ('workbench keys register')",
        ) from exc
    if reviewer.fingerprint == sheet.analyst_fingerprint or reviewer.name == sheet.analyst:
        raise SigningError(
            f"{reviewer.name} cannot review their own analysis (sheet {sheet.id})",
            "a second registered analyst must review it",
        )
    named = _named_reviewer(js)
    if named and named != reviewer.fingerprint:
        raise SigningError(
            f"sheet {sheet.id} names the reviewer {named}, not {reviewer.fingerprint}",
            "the reviewer named on the sheet must review it, or the analyst re-issues it",
        )
    revoked, note = analyst_revocation(reviewer)
    if revoked:
        raise SigningError(
            f"key {reviewer.fingerprint} of {reviewer.name} is revoked ({note})",
            "review with the reviewer's current key",
        )
    if any(r.outcome == "approved" for r in list_reviews(store, sheet.id)):
        raise InputError(
            f"sheet {sheet.id} has already been approved by a reviewer", "nothing to do"
        )
    when = utc_timestamp(reviewed_at)
    if not approve:
        if not str(comments or "").strip():
            raise InputError(
                "a returned sheet needs the reviewer's comments",
                "say what must change (--comments)",
            )
        rec = add_review(
            store,
            sheet.id,
            reviewer_fingerprint=reviewer.fingerprint,
            outcome="returned",
            comments=comments,
            reviewed_at=when,
        )
        return ReviewOutcome(review=rec)
    signed = sign_sheet(pdf, js, key, signer=reviewer.name, signed_at=when)
    pem = reviewer.public_key_pem.encode("ascii")
    verify_sheet(pdf, js, signed.record, pem, expected_fingerprint=reviewer.fingerprint)
    paths: dict[str, Path] = {}
    if out_dir is not None:
        blobs = {"record": signed.record, "sig": signed.signature_raw}
        paths = _write_files(Path(out_dir), stem or f"findings-sheet-{sheet.id}", blobs)
    try:
        rec = add_review(
            store,
            sheet.id,
            reviewer_fingerprint=reviewer.fingerprint,
            outcome="approved",
            comments=comments,
            signature_raw=signed.signature_raw,
            signature_record=signed.record,
            reviewed_at=when,
        )
    except BaseException:
        for p in paths.values():
            p.unlink(missing_ok=True)
        raise
    return ReviewOutcome(
        review=rec,
        signature_raw=signed.signature_raw,
        signature_record=signed.record,
        paths=paths,
    )


def verify_review(
    pdf_bytes: bytes,
    json_bytes: bytes,
    analyst_record: bytes,
    review_record: bytes,
    reviewer_public_key_pem: bytes | None,
    *,
    review_raw: bytes | None = None,
    revoked: bool = False,
    revoked_note: str = "",
) -> VerificationResult:
    """Check a reviewer's countersignature over the same PDF and JSON as the analyst's.

    Parameters
    ----------
    pdf_bytes, json_bytes : bytes
        The sheet.
    analyst_record : bytes
        The analyst's signature record (to tell the two signers apart).
    review_record : bytes
        The reviewer's record (``SHEET.review.sig.json``).
    reviewer_public_key_pem : bytes or None
        The reviewer's public key.
    review_raw : bytes, optional
        The raw ``SHEET.review.sig``, also checked when given.
    revoked, revoked_note :
        As :func:`~workbench.findings.signing.verify_sheet`.

    Returns
    -------
    VerificationResult
        What was verified about the review signature.

    Raises
    ------
    SignatureInvalidError
        ``review by the analyst`` when both records name the same key,
        ``review by a different key`` when the sheet names another reviewer,
        or any failure of :func:`~workbench.findings.signing.verify_sheet`.
    """
    rec = parse_signature_record(review_record)
    analyst = parse_signature_record(analyst_record)
    if rec["key_fingerprint"] == analyst["key_fingerprint"]:
        raise SignatureInvalidError(
            "review by the analyst: the review signature is made with the analyst's own key",
            "a technical review must be signed by a second analyst",
        )
    named = _named_reviewer(json_bytes)
    result = verify_sheet(
        pdf_bytes,
        json_bytes,
        review_record,
        reviewer_public_key_pem,
        expected_fingerprint=named,
        revoked=revoked,
        revoked_note=revoked_note,
    )
    checks = list(result.checks)
    if review_raw is not None:
        import base64

        if bytes(review_raw) != base64.b64decode(rec["signature_pdf"]):
            raise SignatureInvalidError(
                "the raw review signature is not the one in the review record",
                "use the .review.sig file issued with this review",
            )
        verify_raw_pdf_signature(pdf_bytes, review_raw, reviewer_public_key_pem or b"")
        checks.append("raw .review.sig file valid")
    checks.append("reviewer is not the analyst")
    return VerificationResult(
        key_fingerprint=result.key_fingerprint,
        signer=result.signer,
        signed_at=result.signed_at,
        pdf_sha256=result.pdf_sha256,
        json_sha256=result.json_sha256,
        checks=tuple(checks),
    )


def verify_review_with_store(
    store: Any,
    pdf_bytes: bytes,
    json_bytes: bytes,
    analyst_record: bytes,
    review_record: bytes,
    *,
    review_raw: bytes | None = None,
) -> VerificationResult:
    """:func:`verify_review` with the reviewer's key looked up in a case store.

    The reviewer's key must be trusted in this store, as the analyst's must be
    for :func:`~workbench.findings.signing.verify_sheet_with_store`: a key that
    arrived in a bundle (imported, untrusted) is refused with ``untrusted
    key`` until a local administrator records trust.
    """
    rec = parse_signature_record(review_record)
    try:
        reviewer = store.get_analyst(rec["key_fingerprint"])
    except NotFoundError as exc:
        raise SignatureInvalidError(
            f"unknown key: reviewer key {rec['key_fingerprint']} is not registered in this store",
            "verify against the issuing lab's store, or give the reviewer's public key",
        ) from exc
    revoked, note = analyst_revocation(reviewer)
    result = verify_review(
        pdf_bytes,
        json_bytes,
        analyst_record,
        review_record,
        reviewer.public_key_pem.encode("ascii"),
        review_raw=review_raw,
        revoked=revoked,
        revoked_note=note,
    )
    provenance = reviewer.provenance_text
    if not reviewer.trusted:
        # As for the analyst's key (verify_sheet_with_store): a countersignature
        # by a key that came from outside counts only once trust is recorded here.
        raise untrusted_key_error(
            f"reviewer key {rec['key_fingerprint']} ({reviewer.name})",
            provenance,
            "the countersignature itself is intact",
        )
    return replace(
        result, checks=(*result.checks, f"reviewer key trusted in this store ({provenance})")
    )
