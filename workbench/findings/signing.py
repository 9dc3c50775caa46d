"""Ed25519 signatures over a findings sheet (PDF + canonical JSON).

The signature record format (``SHEET.sig.json``), strict base64 and the
verification of a sheet against a public key live in :mod:`workbench.crypto`,
below both the case store and this package; they are re-exported here.
This module adds what needs the findings layer: :func:`sign_sheet` (with the
sheet's time normalisation) and :func:`verify_sheet_with_store`, which looks
the signer up in a case store and refuses keys that store does not trust
(revoked, or imported and not yet trusted by a local administrator).
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from dataclasses import dataclass, replace
from datetime import datetime
from typing import Any

from workbench.crypto import (
    ALGORITHM,
    RECORD_CONTEXT,
    SIGNATURE_FORMAT,
    VerificationResult,
    b64encode,
    fingerprint_of,
    parse_signature_record,
    record_message,
    verify_raw_pdf_signature,
    verify_sheet,
)
from workbench.errors import NotFoundError, SignatureInvalidError
from workbench.findings.content import canonical_json, utc_timestamp

__all__ = [
    "ALGORITHM",
    "RECORD_CONTEXT",
    "SIGNATURE_FORMAT",
    "SignedSheet",
    "VerificationResult",
    "analyst_revocation",
    "parse_signature_record",
    "sign_sheet",
    "untrusted_key_error",
    "verify_raw_pdf_signature",
    "verify_sheet",
    "verify_sheet_with_store",
]


@dataclass(frozen=True)
class SignedSheet:
    """The signature of one sheet.

    Attributes
    ----------
    signature_raw : bytes
        64-byte Ed25519 signature over the PDF bytes (``SHEET.sig``).
    record : bytes
        The canonical signature record (``SHEET.sig.json``).
    key_fingerprint : str
        Fingerprint of the signing key.
    signed_at : str
        UTC signing time.
    """

    signature_raw: bytes
    record: bytes
    key_fingerprint: str
    signed_at: str


def sign_sheet(
    pdf_bytes: bytes,
    json_bytes: bytes,
    private_key: object,
    *,
    signer: str,
    signed_at: str | datetime,
) -> SignedSheet:
    """Sign a sheet's PDF and JSON and build the detached record.

    Parameters
    ----------
    pdf_bytes, json_bytes : bytes
        The exact bytes of the PDF and of the canonical JSON.
    private_key : Ed25519PrivateKey
        From :func:`workbench.findings.keys.load_private_key`.
    signer : str
        Analyst's registered name.
    signed_at : str or datetime
        Signing time (stored in UTC).

    Returns
    -------
    SignedSheet
        The raw PDF signature and the record (see the module docstring for
        what each signature covers).
    """
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    if not isinstance(private_key, Ed25519PrivateKey):
        raise SignatureInvalidError(
            f"cannot sign with a {type(private_key).__name__}",
            "load the analyst's Ed25519 key with load_private_key()",
        )
    fp = fingerprint_of(private_key.public_key())
    sig_pdf = private_key.sign(bytes(pdf_bytes))
    fields: dict[str, Any] = {
        "format": SIGNATURE_FORMAT,
        "algorithm": ALGORITHM,
        "key_fingerprint": fp,
        "signer": str(signer),
        "signed_at": utc_timestamp(signed_at),
        "pdf_sha256": hashlib.sha256(pdf_bytes).hexdigest(),
        "json_sha256": hashlib.sha256(json_bytes).hexdigest(),
        "signature_pdf": b64encode(sig_pdf),
        "signature_json": b64encode(private_key.sign(bytes(json_bytes))),
    }
    fields["signature_record"] = b64encode(private_key.sign(record_message(fields)))
    return SignedSheet(sig_pdf, canonical_json(fields), fp, fields["signed_at"])


def _field(obj: Any, *names: str) -> Any:
    for n in names:
        if isinstance(obj, Mapping):
            if obj.get(n) is not None:
                return obj[n]
        elif getattr(obj, n, None) is not None:
            return getattr(obj, n)
    return None


def analyst_revocation(analyst: Any) -> tuple[bool, str]:
    """Return (revoked, note) for an analyst record from the case store."""
    revoked_at = _field(analyst, "revoked_at")
    status = _field(analyst, "status")
    revoked = bool(_field(analyst, "revoked")) or revoked_at is not None or status == "revoked"
    if not revoked:
        return False, ""
    parts = []
    if revoked_at is not None:
        parts.append(f"at {revoked_at}")
    reason = _field(analyst, "revoked_reason", "revocation_reason", "reason")
    if reason:
        parts.append(f"reason: {reason}")
    by = _field(analyst, "revoked_by", "actor")
    if by:
        parts.append(f"by {by}")
    return True, "; ".join(parts)


def untrusted_key_error(key: str, provenance: str, intact: str) -> SignatureInvalidError:
    """The refusal of an intact signature by a key this store does not trust.

    Parameters
    ----------
    key : str
        The key as the message names it (fingerprint and owner).
    provenance : str
        Where the key came from (``imported, untrusted`` ...).
    intact : str
        What is intact nevertheless (the signature, the countersignature).
    """
    return SignatureInvalidError(
        f"untrusted key: {key} is {provenance}; {intact}",
        "confirm the key with its owner's laboratory, then a local administrator can "
        "record trust with 'workbench keys trust FINGERPRINT --by NAME --reason TEXT'",
    )


def verify_sheet_with_store(
    store: Any, pdf_bytes: bytes, json_bytes: bytes, record_bytes: bytes
) -> VerificationResult:
    """Verify a sheet, looking up the signer's key in a case store.

    Parameters
    ----------
    store : CaseStore
        Open case store with the registered analysts.
    pdf_bytes, json_bytes, record_bytes : bytes
        The sheet's three files.

    Returns
    -------
    VerificationResult
        What was verified.

    Raises
    ------
    SignatureInvalidError
        As :func:`verify_sheet`; ``unknown key`` when the fingerprint is not
        registered, ``revoked key`` (with when and why) when it was revoked,
        ``untrusted key`` when it was imported (or predates provenance
        records) and no local administrator has trusted it.
    """
    rec = parse_signature_record(record_bytes)
    try:
        analyst = store.get_analyst(rec["key_fingerprint"])
    except NotFoundError:
        analyst = None
    pem = _field(analyst, "public_key_pem") if analyst is not None else None
    if isinstance(pem, str):
        pem = pem.encode("ascii")
    revoked, note = analyst_revocation(analyst) if analyst is not None else (False, "")
    if analyst is None or pem is None:
        raise SignatureInvalidError(
            f"unknown key: {rec['key_fingerprint']} is not registered in this case store",
            "verify against the store of the issuing lab, or with the signer's public key "
            "(--pubkey) obtained from a trusted source",
        )
    result = verify_sheet(
        pdf_bytes,
        json_bytes,
        record_bytes,
        pem,
        revoked=revoked,
        expected_fingerprint=rec["key_fingerprint"],
        revoked_note=note,
    )
    provenance = str(_field(analyst, "provenance_text") or "local")
    if _field(analyst, "trusted") is False:
        # The signature is intact, but the key came from outside (a bundle) or
        # predates provenance records: only a recorded local act makes it count.
        raise untrusted_key_error(
            f"{rec['key_fingerprint']} ({_field(analyst, 'name')})",
            provenance,
            f"the signature itself is intact (signed {result.signed_at})",
        )
    return replace(
        result,
        checks=(*result.checks, f"key trusted in this store ({provenance})"),
        key_provenance=provenance,
    )
