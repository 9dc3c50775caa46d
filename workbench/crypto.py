"""Ed25519 signature primitives and the detached signature record format.

This module sits below both :mod:`workbench.casefile` (which verifies the
signatures of stored findings sheets) and :mod:`workbench.findings` (which
makes them), so neither has to reach into the other. It knows nothing about
sheets' content: only keys, bytes and the signature record.

Keys
----
Public keys travel as PEM SubjectPublicKeyInfo (what ``openssl pkeyutl
-pubin`` reads). A key is named by its *fingerprint*: ``"SHA256:"`` followed by
the lowercase hex SHA-256 of the raw 32-byte public key.

Base64
------
Signatures are written in standard base64 with padding. Decoding is *strict*:
only the one canonical spelling of each byte string is accepted (alphabet
checked, padding required, and the unused low bits of the last character
zero), so a record cannot be altered into a different but "equivalent" file
that still verifies (signature-record malleability).

The signature record (``SHEET.sig.json``)
-----------------------------------------
Canonical JSON (sorted keys, no white space, UTF-8) with:

``format``            ``"workbench-signature/1"``
``algorithm``         ``"Ed25519"``
``key_fingerprint``   fingerprint of the signing key
``signer``            the analyst's name as registered
``signed_at``         UTC time, ``YYYY-MM-DDTHH:MM:SSZ``
``pdf_sha256``        hex SHA-256 of the exact PDF bytes
``json_sha256``       hex SHA-256 of the exact JSON bytes
``signature_pdf``     base64 Ed25519 signature over the exact PDF bytes
``signature_json``    base64 Ed25519 signature over the exact JSON bytes
``signature_record``  base64 Ed25519 signature over :data:`RECORD_CONTEXT` followed
                      by the canonical JSON of *all the fields above*

Every byte of the PDF is covered by ``signature_pdf`` (the same 64 bytes are
written raw to ``SHEET.sig`` so OpenSSL 3 can check the PDF on its own);
every byte of the JSON by ``signature_json``; every field of the record by
``signature_record``. The record must be byte-for-byte canonical. The context
prefix keeps a record signature from being mistaken for one over a PDF or JSON.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import json
import re
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

from workbench.errors import KeyFileError, SignatureInvalidError

__all__ = [
    "ALGORITHM",
    "RECORD_CONTEXT",
    "RECORD_FIELDS",
    "SIGNATURE_FORMAT",
    "VerificationResult",
    "b64decode_strict",
    "b64encode",
    "ed25519_verify",
    "fingerprint_of",
    "load_public_key",
    "parse_signature_record",
    "public_key_pem",
    "raw_public_bytes",
    "record_canonical_json",
    "record_message",
    "verify_raw_pdf_signature",
    "verify_sheet",
]

SIGNATURE_FORMAT: str = "workbench-signature/1"
ALGORITHM: str = "Ed25519"
#: Prefix of the bytes signed by ``signature_record`` (domain separation).
RECORD_CONTEXT: bytes = b"workbench-signature/1 record\x00"

#: Fields covered by ``signature_record`` (everything in the record but itself).
RECORD_FIELDS: tuple[str, ...] = (
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
_ALL_FIELDS = (*RECORD_FIELDS, "signature_record")
_FP_RE = re.compile(r"^SHA256:[0-9a-f]{64}$")
_HEX_RE = re.compile(r"^[0-9a-f]{64}$")
_TIME_RE = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z$")
_B64_RE = re.compile(r"^[A-Za-z0-9+/]*={0,2}$")


# --------------------------------------------------------------------- base64
def b64encode(data: bytes) -> str:
    """Return the standard, padded base64 text of ``data``."""
    return base64.b64encode(bytes(data)).decode("ascii")


def b64decode_strict(text: str, what: str = "value") -> bytes:
    """Decode base64 accepting only its canonical spelling.

    Parameters
    ----------
    text : str
        Standard alphabet, with ``=`` padding to a multiple of 4 characters.
    what : str
        Name of the value, for the error message.

    Returns
    -------
    bytes
        The decoded bytes.

    Raises
    ------
    ValueError
        If the text holds other characters, lacks padding, or is not the
        canonical encoding of what it decodes to (non-zero padding bits).
    """
    if not isinstance(text, str) or not _B64_RE.match(text) or len(text) % 4:
        raise ValueError(f"{what} is not base64 in canonical form (alphabet or padding)")
    try:
        raw = base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError) as exc:
        raise ValueError(f"{what} is not base64 ({exc})") from exc
    # Padding bits of the last character are ignored by decoders; re-encoding
    # exposes them, so only one text per byte string is accepted.
    if base64.b64encode(raw).decode("ascii") != text:
        raise ValueError(f"{what} is not base64 in canonical form (non-zero padding bits)")
    return raw


# ----------------------------------------------------------------------- keys
def raw_public_bytes(public_key: object) -> bytes:
    """Return the raw 32 bytes of an Ed25519 public key object."""
    from cryptography.hazmat.primitives import serialization

    return public_key.public_bytes(  # type: ignore[attr-defined]
        serialization.Encoding.Raw, serialization.PublicFormat.Raw
    )


def public_key_pem(public_key: object) -> bytes:
    """Return the SubjectPublicKeyInfo PEM of a public key object."""
    from cryptography.hazmat.primitives import serialization

    return public_key.public_bytes(  # type: ignore[attr-defined]
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )


def load_public_key(pem: bytes | str, *, source: str = "public key") -> object:
    """Load an Ed25519 public key from PEM SubjectPublicKeyInfo.

    Parameters
    ----------
    pem : bytes or str
        Contents of a ``.pub.pem`` file.
    source : str
        Name of the file, for error messages.

    Returns
    -------
    Ed25519PublicKey
        The key.

    Raises
    ------
    KeyFileError
        If the bytes are not a PEM Ed25519 public key.
    """
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    if isinstance(pem, str):
        pem = pem.encode("ascii", "replace")
    if not isinstance(pem, bytes | bytearray) or b"-----BEGIN " not in pem:
        raise KeyFileError(
            f"{source}: file is not a PEM key (no '-----BEGIN' line)",
            "give the .pub.pem file written by 'workbench keys create'",
        )
    if b"PRIVATE KEY-----" in pem:
        raise KeyFileError(
            f"{source}: this is a private key, where a public key was expected",
            "give the .pub.pem file; never hand out the .key.pem file",
        )
    try:
        key = serialization.load_pem_public_key(bytes(pem))
    except Exception as exc:  # cryptography raises several types for unreadable PEM
        raise KeyFileError(
            f"{source}: file is not a PEM public key that can be read ({exc})",
            "give the .pub.pem file written by 'workbench keys create'",
        ) from exc
    if not isinstance(key, Ed25519PublicKey):
        raise KeyFileError(
            f"{source}: not an Ed25519 public key (found {type(key).__name__})",
            "use a key made by 'workbench keys create'",
        )
    return key


def fingerprint_of(public_key: object) -> str:
    """Return ``"SHA256:"`` + hex SHA-256 of the raw public key.

    Parameters
    ----------
    public_key : Ed25519PublicKey or bytes
        A key object, its PEM bytes, or its raw 32 bytes.
    """
    if isinstance(public_key, bytes | bytearray):
        raw = bytes(public_key)
        if len(raw) != 32:
            raw = raw_public_bytes(load_public_key(raw))
    else:
        raw = raw_public_bytes(public_key)
    return "SHA256:" + hashlib.sha256(raw).hexdigest()


def ed25519_verify(public_key: object, signature: bytes, message: bytes) -> bool:
    """Return whether ``signature`` is a valid Ed25519 signature of ``message``."""
    from cryptography.exceptions import InvalidSignature

    if len(signature) != 64:
        return False
    try:
        public_key.verify(bytes(signature), bytes(message))  # type: ignore[attr-defined]
    except InvalidSignature:
        return False
    return True


# ----------------------------------------------------------- signature record
def record_canonical_json(obj: Mapping[str, Any]) -> bytes:
    """Canonical JSON of a record: sorted keys, no white space, UTF-8, no NaN."""
    return json.dumps(
        obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
    ).encode("utf-8")


def record_message(fields: Mapping[str, Any]) -> bytes:
    """Return the bytes ``signature_record`` signs: context + canonical fields."""
    return RECORD_CONTEXT + record_canonical_json({k: fields[k] for k in RECORD_FIELDS})


@dataclass(frozen=True)
class VerificationResult:
    """What a successful verification established.

    Attributes
    ----------
    key_fingerprint, signer, signed_at, pdf_sha256, json_sha256 : str
        Taken from the (verified) record.
    checks : tuple of str
        The checks that passed, in order.
    key_provenance : str
        Where the verifying key came from (``"given public key"``, ``"local"``,
        ``"imported, trusted by NAME at TIME"``).
    """

    key_fingerprint: str
    signer: str
    signed_at: str
    pdf_sha256: str
    json_sha256: str
    checks: tuple[str, ...]
    key_provenance: str = "given public key"

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
            "key_provenance": self.key_provenance,
        }


def _malformed(why: str) -> SignatureInvalidError:
    return SignatureInvalidError(
        f"signature record malformed: {why}",
        "use the .sig.json file issued with the sheet, unedited; ask the issuing lab for "
        "a fresh copy if it was damaged",
    )


def _valid_time(text: str) -> bool:
    if not _TIME_RE.match(text):
        return False
    try:
        datetime.strptime(text, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=UTC)
    except ValueError:
        return False
    return True


def parse_signature_record(record_bytes: bytes) -> dict[str, Any]:
    """Parse and check the shape of a signature record.

    Parameters
    ----------
    record_bytes : bytes
        Contents of a ``.sig.json`` file.

    Returns
    -------
    dict
        The fields, with the three signatures still in base64.

    Raises
    ------
    SignatureInvalidError
        ``signature record malformed: ...`` (not JSON, wrong format id or
        algorithm, missing or extra fields, not canonical bytes, base64 that is
        not canonical).
    """
    if not isinstance(record_bytes, bytes | bytearray):
        raise _malformed("not bytes")
    try:
        data = json.loads(bytes(record_bytes).decode("utf-8"))
    except (UnicodeDecodeError, ValueError, RecursionError) as exc:
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
            raw = b64decode_strict(data[k], k)
        except ValueError as exc:
            raise _malformed(str(exc)) from exc
        if len(raw) != 64:
            raise _malformed(f"{k} decodes to {len(raw)} bytes, not 64")
    if not _valid_time(data["signed_at"]):
        raise _malformed(f"signed_at {data['signed_at']!r} is not YYYY-MM-DDTHH:MM:SSZ")
    if record_canonical_json(data) != bytes(record_bytes):
        raise _malformed(
            "the bytes are not in canonical form (the file was re-formatted or edited)"
        )
    return data


def _sig_ok(public_key: object, signature_b64: str, message: bytes) -> bool:
    # The record was parsed strictly, so this decode cannot fail or be ambiguous.
    return ed25519_verify(public_key, b64decode_strict(signature_b64), message)


def verify_raw_pdf_signature(pdf_bytes: bytes, signature_raw: bytes, public_key_pem: bytes) -> None:
    """Check a raw 64-byte ``SHEET.sig`` against the PDF (what OpenSSL checks).

    Raises
    ------
    SignatureInvalidError
        If the signature is not 64 bytes or does not verify.
    """
    key = load_public_key(public_key_pem)
    if len(signature_raw) != 64:
        raise SignatureInvalidError(
            f"raw signature file malformed: {len(signature_raw)} bytes, not 64",
            "use the .sig file issued with the sheet",
        )
    if not ed25519_verify(key, bytes(signature_raw), bytes(pdf_bytes)):
        raise SignatureInvalidError(
            "bad signature: the raw .sig file does not verify against this PDF and key",
            "the PDF or the .sig file was changed, or they belong to different sheets",
        )


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
    if not _sig_ok(key, rec["signature_record"], record_message(rec)):
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
    if not _sig_ok(key, rec["signature_pdf"], bytes(pdf_bytes)):
        raise SignatureInvalidError(
            "bad signature: the PDF signature does not verify", "treat the sheet as forged"
        )
    if not _sig_ok(key, rec["signature_json"], bytes(json_bytes)):
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
