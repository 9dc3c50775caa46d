"""Ed25519 signatures over a findings sheet (PDF + canonical JSON).

What is signed
--------------
A sheet is two files, the PDF and its canonical JSON, plus a detached
signature record (``SHEET.sig.json``). The record is canonical JSON with:

``format``            ``"workbench-signature/1"``
``algorithm``         ``"Ed25519"``
``key_fingerprint``   ``"SHA256:"`` + hex SHA-256 of the raw public key
``signer``            the analyst's name as registered
``signed_at``         UTC time, ``YYYY-MM-DDTHH:MM:SSZ``
``pdf_sha256``        hex SHA-256 of the exact PDF bytes
``json_sha256``       hex SHA-256 of the exact JSON bytes
``signature_pdf``     base64 Ed25519 signature over the exact PDF bytes
``signature_json``    base64 Ed25519 signature over the exact JSON bytes
``signature_record``  base64 Ed25519 signature over :data:`RECORD_CONTEXT` followed
                      by the canonical JSON of *all the fields above*

So every byte of the PDF is covered by ``signature_pdf`` (the same 64 bytes
are written raw to ``SHEET.sig`` so that OpenSSL 3 can check the PDF on its
own: ``openssl pkeyutl -verify -pubin -inkey KEY.pub.pem -rawin -in SHEET.pdf
-sigfile SHEET.sig``); every byte of the JSON by ``signature_json``; and every
field of the record (signer, time, digests and both signatures) by
``signature_record``, which binds the PDF and JSON to each other and to that
signer and time. The record itself must be byte-for-byte canonical, so even a
change of white space in it is detected. The context prefix keeps a record
signature from ever being mistaken for a signature over some PDF or JSON.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import json
import re
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from workbench.errors import NotFoundError, SignatureInvalidError
from workbench.findings.content import canonical_json, utc_timestamp
from workbench.findings.keys import fingerprint_of, load_public_key

__all__ = [
    "ALGORITHM",
    "RECORD_CONTEXT",
    "SIGNATURE_FORMAT",
    "SignedSheet",
    "VerificationResult",
    "analyst_revocation",
    "parse_signature_record",
    "sign_sheet",
    "verify_raw_pdf_signature",
    "verify_sheet",
    "verify_sheet_with_store",
]

SIGNATURE_FORMAT: str = "workbench-signature/1"
ALGORITHM: str = "Ed25519"
#: Prefix of the bytes signed by ``signature_record`` (domain separation).
RECORD_CONTEXT: bytes = b"workbench-signature/1 record\x00"

_FIELDS: tuple[str, ...] = (
    "format",
    "algorithm",
    "key_fingerprint",
    "signer",
    "signed_at",
    "pdf_sha256",
    "json_sha256",
    "signature_pdf",
    "signature_json",
)
_ALL_FIELDS = (*_FIELDS, "signature_record")
_FP_RE = re.compile(r"^SHA256:[0-9a-f]{64}$")
_HEX_RE = re.compile(r"^[0-9a-f]{64}$")


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


@dataclass(frozen=True)
class VerificationResult:
    """What a successful verification established.

    Attributes
    ----------
    key_fingerprint, signer, signed_at, pdf_sha256, json_sha256 : str
        Taken from the (verified) record.
    checks : tuple of str
        The checks that passed, in order.
    """

    key_fingerprint: str
    signer: str
    signed_at: str
    pdf_sha256: str
    json_sha256: str
    checks: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return {
            "valid": True,
            "key_fingerprint": self.key_fingerprint,
            "signer": self.signer,
            "signed_at": self.signed_at,
            "pdf_sha256": self.pdf_sha256,
            "json_sha256": self.json_sha256,
            "checks": list(self.checks),
        }


def _b64(data: bytes) -> str:
    return base64.b64encode(data).decode("ascii")


def _record_message(fields: Mapping[str, Any]) -> bytes:
    return RECORD_CONTEXT + canonical_json({k: fields[k] for k in _FIELDS})


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
        "signature_pdf": _b64(sig_pdf),
        "signature_json": _b64(private_key.sign(bytes(json_bytes))),
    }
    fields["signature_record"] = _b64(private_key.sign(_record_message(fields)))
    return SignedSheet(sig_pdf, canonical_json(fields), fp, fields["signed_at"])


def _malformed(why: str) -> SignatureInvalidError:
    return SignatureInvalidError(
        f"signature record malformed: {why}",
        "use the .sig.json file issued with the sheet, unedited; ask the issuing lab for "
        "a fresh copy if it was damaged",
    )


def parse_signature_record(record_bytes: bytes) -> dict[str, Any]:
    """Parse and check the shape of a signature record.

    Parameters
    ----------
    record_bytes : bytes
        Contents of a ``.sig.json`` file.

    Returns
    -------
    dict
        The fields, with ``signature_pdf``/``signature_json``/``signature_record``
        still in base64.

    Raises
    ------
    SignatureInvalidError
        ``signature record malformed: ...`` (not JSON, wrong format id or
        algorithm, missing or extra fields, not canonical bytes, bad base64).
    """
    if not isinstance(record_bytes, bytes | bytearray):
        raise _malformed("not bytes")
    try:
        data = json.loads(bytes(record_bytes).decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise _malformed(f"not JSON ({exc})") from exc
    if not isinstance(data, dict):
        raise _malformed("not a JSON object")
    if data.get("format") != SIGNATURE_FORMAT:
        raise _malformed(f"format is {data.get('format')!r}, expected {SIGNATURE_FORMAT!r}")
    if data.get("algorithm") != ALGORITHM:
        raise _malformed(f"algorithm is {data.get('algorithm')!r}, expected {ALGORITHM!r}")
    missing = [k for k in _ALL_FIELDS if k not in data]
    extra = sorted(set(data) - set(_ALL_FIELDS))
    if missing:
        raise _malformed(f"missing field(s) {', '.join(missing)}")
    if extra:
        raise _malformed(f"unexpected field(s) {', '.join(extra)}")
    for k in _ALL_FIELDS:
        if not isinstance(data[k], str):
            raise _malformed(f"field {k!r} is not a string")
    if not _FP_RE.match(data["key_fingerprint"]):
        raise _malformed(f"key_fingerprint {data['key_fingerprint']!r} is not SHA256:<64 hex>")
    for k in ("pdf_sha256", "json_sha256"):
        if not _HEX_RE.match(data[k]):
            raise _malformed(f"{k} is not 64 lowercase hex digits")
    for k in ("signature_pdf", "signature_json", "signature_record"):
        try:
            raw = base64.b64decode(data[k], validate=True)
        except (binascii.Error, ValueError) as exc:
            raise _malformed(f"{k} is not base64") from exc
        if len(raw) != 64:
            raise _malformed(f"{k} decodes to {len(raw)} bytes, not 64")
    try:
        if utc_timestamp(data["signed_at"]) != data["signed_at"]:
            raise _malformed("signed_at is not YYYY-MM-DDTHH:MM:SSZ")
    except SignatureInvalidError:
        raise
    except Exception as exc:
        raise _malformed(f"signed_at {data['signed_at']!r} is not a UTC time") from exc
    if canonical_json(data) != bytes(record_bytes):
        raise _malformed(
            "the bytes are not in canonical form (the file was re-formatted or edited)"
        )
    return data


def _verify(public_key: object, signature_b64: str, message: bytes) -> bool:
    from cryptography.exceptions import InvalidSignature

    try:
        public_key.verify(base64.b64decode(signature_b64), message)  # type: ignore[attr-defined]
    except InvalidSignature:
        return False
    return True


def verify_raw_pdf_signature(pdf_bytes: bytes, signature_raw: bytes, public_key_pem: bytes) -> None:
    """Check a raw 64-byte ``SHEET.sig`` against the PDF (what OpenSSL checks).

    Raises
    ------
    SignatureInvalidError
        If the signature is not 64 bytes or does not verify.
    """
    from cryptography.exceptions import InvalidSignature

    key = load_public_key(public_key_pem)
    if len(signature_raw) != 64:
        raise SignatureInvalidError(
            f"raw signature file malformed: {len(signature_raw)} bytes, not 64",
            "use the .sig file issued with the sheet",
        )
    try:
        key.verify(bytes(signature_raw), bytes(pdf_bytes))  # type: ignore[attr-defined]
    except InvalidSignature as exc:
        raise SignatureInvalidError(
            "bad signature: the raw .sig file does not verify against this PDF and key",
            "the PDF or the .sig file was changed, or they belong to different sheets",
        ) from exc


def verify_sheet(
    pdf_bytes: bytes,
    json_bytes: bytes,
    record_bytes: bytes,
    public_key_pem: bytes | None,
    *,
    revoked: bool = False,
    expected_fingerprint: str | None = None,
    revoked_note: str = "",
) -> VerificationResult:
    """Verify a sheet against its signature record and the signer's public key.

    Checks, in this order (the first failure is raised):

    1. the record is well-formed and canonical  → ``signature record malformed``
    2. a public key is known for the record    → ``unknown key``
    3. the key's fingerprint is the record's (and ``expected_fingerprint``)
       → ``signature by a different key``
    4. the record's own signature               → ``record altered``
    5. the PDF's SHA-256                        → ``PDF changed``
    6. the JSON's SHA-256                       → ``JSON changed``
    7. the PDF and JSON signatures              → ``bad signature``
    8. the key is not revoked                   → ``revoked key``

    Parameters
    ----------
    pdf_bytes, json_bytes, record_bytes : bytes
        The sheet's three files.
    public_key_pem : bytes or None
        The signer's public key; ``None`` when none is known.
    revoked : bool
        Whether the key has been revoked.
    expected_fingerprint : str, optional
        The fingerprint the caller expects to have signed.
    revoked_note : str
        Extra words for the revoked-key message (when and why).

    Returns
    -------
    VerificationResult
        What was verified.

    Raises
    ------
    SignatureInvalidError
        Naming the check that failed.
    """
    rec = parse_signature_record(record_bytes)
    fp = rec["key_fingerprint"]
    checks = ["record well-formed"]
    if public_key_pem is None:
        raise SignatureInvalidError(
            f"unknown key: no public key is known for {fp}",
            "give the signer's public key (--pubkey) or a case store where it is registered",
        )
    key = load_public_key(public_key_pem)
    key_fp = fingerprint_of(key)
    if expected_fingerprint is not None and expected_fingerprint != fp:
        raise SignatureInvalidError(
            f"signature by a different key: the record names {fp}, expected {expected_fingerprint}",
            "check who signed this sheet; do not rely on it until that is settled",
        )
    if key_fp != fp:
        raise SignatureInvalidError(
            f"signature by a different key: the record names {fp}, the public key given is "
            f"{key_fp}",
            "verify with the public key of the analyst who signed the sheet",
        )
    checks.append("key fingerprint matches")
    if not _verify(key, rec["signature_record"], _record_message(rec)):
        raise SignatureInvalidError(
            "record altered: the signature record's own signature does not verify "
            "(signer, time, digests or signatures in it were changed)",
            "obtain the unedited .sig.json from the issuing lab",
        )
    checks.append("record signature valid")
    pdf_digest = hashlib.sha256(pdf_bytes).hexdigest()
    if pdf_digest != rec["pdf_sha256"]:
        raise SignatureInvalidError(
            f"PDF changed: its SHA-256 is {pdf_digest}, the signed record says {rec['pdf_sha256']}",
            "the PDF is not the one that was signed (edited, damaged or from another sheet); "
            "obtain the original from the issuing lab",
        )
    checks.append("PDF digest matches")
    json_digest = hashlib.sha256(json_bytes).hexdigest()
    if json_digest != rec["json_sha256"]:
        raise SignatureInvalidError(
            f"JSON changed: its SHA-256 is {json_digest}, the signed record says "
            f"{rec['json_sha256']}",
            "the JSON is not the one that was signed; obtain the original from the issuing lab",
        )
    checks.append("JSON digest matches")
    if not _verify(key, rec["signature_pdf"], bytes(pdf_bytes)):
        raise SignatureInvalidError(
            "bad signature: the PDF signature does not verify", "treat the sheet as forged"
        )
    if not _verify(key, rec["signature_json"], bytes(json_bytes)):
        raise SignatureInvalidError(
            "bad signature: the JSON signature does not verify", "treat the sheet as forged"
        )
    checks.append("PDF and JSON signatures valid")
    if revoked:
        note = f" ({revoked_note})" if revoked_note else ""
        raise SignatureInvalidError(
            f"revoked key: {fp} was revoked{note}; the signature itself is intact "
            f"(signed {rec['signed_at']})",
            "do not rely on this sheet; ask the lab whether it has been re-issued",
        )
    checks.append("key not revoked")
    return VerificationResult(
        key_fingerprint=fp,
        signer=rec["signer"],
        signed_at=rec["signed_at"],
        pdf_sha256=rec["pdf_sha256"],
        json_sha256=rec["json_sha256"],
        checks=tuple(checks),
    )


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
        registered, ``revoked key`` (with when and why) when it was revoked.
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
    return verify_sheet(
        pdf_bytes,
        json_bytes,
        record_bytes,
        pem,
        revoked=revoked,
        expected_fingerprint=rec["key_fingerprint"],
        revoked_note=note,
    )
