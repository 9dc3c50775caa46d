"""Tests for workbench/findings/signing.py."""

from __future__ import annotations

import base64
import json
import shutil
import subprocess

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workbench.errors import KeyFileError, NotFoundError, SignatureInvalidError
from workbench.findings.content import canonical_json
from workbench.findings.keys import fingerprint_of, public_key_pem_of
from workbench.findings.signing import (
    parse_signature_record,
    sign_sheet,
    verify_raw_pdf_signature,
    verify_sheet,
    verify_sheet_with_store,
)

# RFC 8032 section 7.1, TEST 1-3 (secret key, public key, message, signature; all hex).
# Written from memory; the library reproduces every byte of them, which confirms them.
RFC8032 = [
    (
        "9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60",
        "d75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a",
        "",
        "e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39"
        "701cf9b46bd25bf5f0595bbe24655141438e7a100b",
    ),
    (
        "4ccd089b28ff96da9db6c346ec114e0f5b8a319f35aba624da8cf6ed4fb8a6fb",
        "3d4017c3e843895a92b70aa74d1b7ebc9c982ccf2ec4968cc0cd55f12af4660c",
        "72",
        "92a009a9f0d4cab8720e820b5f642540a2b27b5416503f8fb3762223ebdb69da085ac1e43e15996e458f36"
        "13d0f11d8c387b2eaeb4302aeeb00d291612bb0c00",
    ),
    (
        "c5aa8df43f9f837bedb7442f31dcb7b166d38535076f094b85ce3a2e0b4458f7",
        "fc51cd8e6218a1a38da47ed00230f0580816ed13ba3303ac5deb911548908025",
        "af82",
        "6291d657deec24024827e69c3abe01a30ce548a284743a445e3680d7db5ac3ac18ff9b538d16f290ae67f7"
        "60984dc6594a7c15e9716ed28dc027beceea1ec40a",
    ),
]

# Invented sheet bytes: a minimal PDF-looking header and a canonical JSON document.
PDF = b"%PDF-1.4\n% invented test document\n" + bytes(range(256)) * 4 + b"\n%%EOF\n"
JSON = canonical_json({"format": "workbench-findings/1", "analyst": {"name": "Zoë Ångström"}})
SIGNED_AT = "2026-03-14T09:30:00Z"


def _key(seed: int) -> Ed25519PrivateKey:
    return Ed25519PrivateKey.from_private_bytes(bytes([seed]) * 32)  # fixed invented seeds


KEY = _key(7)
PUB = public_key_pem_of(KEY)
FP = fingerprint_of(KEY.public_key())


@pytest.fixture(scope="module")
def signed():
    return sign_sheet(PDF, JSON, KEY, signer="Zoë Ångström", signed_at=SIGNED_AT)


@pytest.mark.parametrize(("sk", "pk", "msg", "sig"), RFC8032)
def test_rfc8032_vectors(sk, pk, msg, sig):
    key = Ed25519PrivateKey.from_private_bytes(bytes.fromhex(sk))
    assert fingerprint_of(key.public_key()) == fingerprint_of(bytes.fromhex(pk))
    out = sign_sheet(bytes.fromhex(msg), b"{}", key, signer="rfc", signed_at=SIGNED_AT)
    # The raw PDF signature is plain Ed25519 over the bytes, so it equals the RFC signature.
    assert out.signature_raw.hex() == sig
    rec = json.loads(out.record)
    assert base64.b64decode(rec["signature_pdf"]).hex() == sig


def test_valid_sheet_verifies(signed):
    res = verify_sheet(PDF, JSON, signed.record, PUB)
    assert res.key_fingerprint == FP
    assert res.signer == "Zoë Ångström"
    assert res.signed_at == SIGNED_AT
    assert res.checks[-1] == "key not revoked"
    verify_raw_pdf_signature(PDF, signed.signature_raw, PUB)
    assert len(signed.signature_raw) == 64  # Ed25519 signature length, RFC 8032 section 5.1.6


def test_record_is_canonical_and_complete(signed):
    rec = parse_signature_record(signed.record)
    assert canonical_json(rec) == signed.record
    assert rec["format"] == "workbench-signature/1"
    assert rec["algorithm"] == "Ed25519"
    assert rec["key_fingerprint"] == FP


def _flip(data: bytes, pos: int) -> bytes:
    b = bytearray(data)
    b[pos] ^= 0x01
    return bytes(b)


@pytest.mark.parametrize("pos", [0, 1, 9, 500, -8, -1])  # first, last and in between
def test_changed_pdf_byte_detected(signed, pos):
    with pytest.raises(SignatureInvalidError, match="PDF changed"):
        verify_sheet(_flip(PDF, pos), JSON, signed.record, PUB)
    with pytest.raises(SignatureInvalidError, match="bad signature"):
        verify_raw_pdf_signature(_flip(PDF, pos), signed.signature_raw, PUB)


@pytest.mark.parametrize("pos", [0, 5, len(JSON) // 2, -1])
def test_changed_json_byte_detected(signed, pos):
    with pytest.raises(SignatureInvalidError, match="JSON changed"):
        verify_sheet(PDF, _flip(JSON, pos), signed.record, PUB)


def test_appended_bytes_detected(signed):
    with pytest.raises(SignatureInvalidError, match="PDF changed"):
        verify_sheet(PDF + b"\n", JSON, signed.record, PUB)


def test_every_record_byte_is_covered(signed):
    # Flip each byte of the record in turn: every single change must be refused.
    for pos in range(len(signed.record)):
        with pytest.raises(SignatureInvalidError):
            verify_sheet(PDF, JSON, _flip(signed.record, pos), PUB)


def _edit(record: bytes, **changes) -> bytes:
    data = json.loads(record)
    data.update(changes)
    return canonical_json(data)


def test_record_field_edits_say_record_altered(signed):
    for field, value in [
        ("signer", "Someone Else"),
        ("signed_at", "2025-01-01T00:00:00Z"),
        ("pdf_sha256", "0" * 64),
    ]:
        with pytest.raises(SignatureInvalidError, match="record altered"):
            verify_sheet(PDF, JSON, _edit(signed.record, **{field: value}), PUB)


def test_reformatted_record_is_malformed(signed):
    pretty = json.dumps(json.loads(signed.record), indent=2, sort_keys=True).encode()
    with pytest.raises(SignatureInvalidError, match=r"record malformed.*canonical"):
        verify_sheet(PDF, JSON, pretty, PUB)


@pytest.mark.parametrize(
    ("record", "why"),
    [
        (b"", "not JSON"),
        (b"\xff\xfe", "not JSON"),
        (b"[1, 2]", "not a JSON object"),
        (b'{"format": "other/1"}', "format"),
        (b'{"format": "workbench-signature/1", "algorithm": "RSA"}', "algorithm"),
        (b'{"format": "workbench-signature/1", "algorithm": "Ed25519"}', "missing field"),
    ],
)
def test_malformed_records(record, why):
    with pytest.raises(SignatureInvalidError, match=f"record malformed: {why}"):
        verify_sheet(PDF, JSON, record, PUB)


def test_record_with_bad_base64_or_extra_field(signed):
    with pytest.raises(SignatureInvalidError, match="not base64"):
        verify_sheet(PDF, JSON, _edit(signed.record, signature_pdf="!!!"), PUB)
    short = base64.b64encode(b"x" * 10).decode()
    with pytest.raises(SignatureInvalidError, match="not 64"):
        verify_sheet(PDF, JSON, _edit(signed.record, signature_json=short), PUB)
    with pytest.raises(SignatureInvalidError, match="unexpected field"):
        verify_sheet(PDF, JSON, _edit(signed.record, comment="hi"), PUB)


def test_swapped_signature_from_another_sheet(signed):
    other_pdf = PDF.replace(b"invented", b"inverted")
    other = sign_sheet(other_pdf, JSON, KEY, signer="Zoë Ångström", signed_at=SIGNED_AT)
    # Whole record of the other sheet: its PDF digest does not match this PDF.
    with pytest.raises(SignatureInvalidError, match="PDF changed"):
        verify_sheet(PDF, JSON, other.record, PUB)
    # Only the PDF signature swapped into this record: the record's own signature fails.
    swapped = _edit(signed.record, signature_pdf=json.loads(other.record)["signature_pdf"])
    with pytest.raises(SignatureInvalidError, match="record altered"):
        verify_sheet(PDF, JSON, swapped, PUB)
    with pytest.raises(SignatureInvalidError, match="bad signature"):
        verify_raw_pdf_signature(PDF, other.signature_raw, PUB)


def test_forged_record_with_consistent_record_signature(signed):
    # An attacker with a *different* key re-signs the record but keeps our fingerprint.
    attacker = _key(9)
    forged = sign_sheet(PDF + b" ", JSON, attacker, signer="x", signed_at=SIGNED_AT)
    data = json.loads(forged.record)
    data["key_fingerprint"] = FP
    with pytest.raises(SignatureInvalidError, match="record altered"):
        verify_sheet(PDF + b" ", JSON, canonical_json(data), PUB)


def test_wrong_key(signed):
    other_pub = public_key_pem_of(_key(8))
    with pytest.raises(SignatureInvalidError, match="different key"):
        verify_sheet(PDF, JSON, signed.record, other_pub)
    with pytest.raises(SignatureInvalidError, match="different key"):
        verify_sheet(PDF, JSON, signed.record, PUB, expected_fingerprint="SHA256:" + "1" * 64)


def test_unknown_and_revoked_key(signed):
    with pytest.raises(SignatureInvalidError, match="unknown key"):
        verify_sheet(PDF, JSON, signed.record, None)
    with pytest.raises(SignatureInvalidError, match=r"revoked key.*lost laptop"):
        verify_sheet(PDF, JSON, signed.record, PUB, revoked=True, revoked_note="lost laptop")


def test_malformed_public_key(signed):
    with pytest.raises(KeyFileError, match="not a PEM key"):
        verify_sheet(PDF, JSON, signed.record, b"garbage")


class _FakeStore:
    """Minimal stand-in with the CaseStore.get_analyst contract (dict or NotFoundError)."""

    def __init__(self, analysts):
        self.analysts = analysts

    def get_analyst(self, ref):
        if ref not in self.analysts:
            raise NotFoundError(f"no analyst {ref}", "register the key")
        return self.analysts[ref]


def test_verify_with_store(signed):
    ok = _FakeStore({FP: {"name": "Zoë", "public_key_pem": PUB, "revoked_at": None}})
    assert verify_sheet_with_store(ok, PDF, JSON, signed.record).key_fingerprint == FP
    with pytest.raises(SignatureInvalidError, match=r"unknown key.*not registered"):
        verify_sheet_with_store(_FakeStore({}), PDF, JSON, signed.record)
    revoked = _FakeStore(
        {
            FP: {
                "name": "Zoë",
                "public_key_pem": PUB.decode(),
                "revoked_at": "2026-04-01T12:00:00Z",
                "revoked_reason": "key compromised",
            }
        }
    )
    with pytest.raises(
        SignatureInvalidError, match=r"revoked key.*2026-04-01T12:00:00Z.*compromised"
    ):
        verify_sheet_with_store(revoked, PDF, JSON, signed.record)


def test_sign_refuses_non_ed25519():
    with pytest.raises(SignatureInvalidError, match="cannot sign"):
        sign_sheet(PDF, JSON, object(), signer="x", signed_at=SIGNED_AT)


@pytest.mark.skipif(shutil.which("openssl") is None, reason="openssl is not on PATH")
def test_openssl_interop(tmp_path, signed):
    version = subprocess.run(["openssl", "version"], capture_output=True, text=True).stdout
    if not version.startswith("OpenSSL 3"):
        pytest.skip(f"needs OpenSSL 3 for -rawin Ed25519 verification, found {version!r}")
    (tmp_path / "KEY.pem").write_bytes(PUB)
    (tmp_path / "SHEET.pdf").write_bytes(PDF)
    (tmp_path / "SHEET.sig").write_bytes(signed.signature_raw)
    (tmp_path / "BAD.pdf").write_bytes(_flip(PDF, 100))

    def run(pdf):
        cmd = ["openssl", "pkeyutl", "-verify", "-pubin", "-inkey", "KEY.pem", "-rawin"]
        cmd += ["-in", pdf, "-sigfile", "SHEET.sig"]
        return subprocess.run(cmd, cwd=tmp_path, capture_output=True, text=True)

    good = run("SHEET.pdf")
    # Output text of OpenSSL 3 pkeyutl -verify (openssl-pkeyutl(1) man page).
    assert good.returncode == 0 and "Signature Verified Successfully" in good.stdout
    bad = run("BAD.pdf")
    assert bad.returncode != 0 and "Signature Verified Successfully" not in bad.stdout


def _padding_flips(b64: str) -> list[str]:
    """Every other spelling of the same bytes: set the unused low bits of the last symbol."""
    alphabet = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/"
    stem = b64.rstrip("=")
    pad = len(b64) - len(stem)
    unused = {1: 2, 2: 4}[pad]  # 64 bytes -> 86 symbols + "==": 4 spare bits (RFC 4648 s.4)
    last = alphabet.index(stem[-1])
    return [
        stem[:-1] + alphabet[last | extra] + "=" * pad
        for extra in range(1, 2**unused)
        if last | extra != last
    ]


@pytest.mark.parametrize("field", ["signature_pdf", "signature_json", "signature_record"])
def test_padding_bit_flips_are_refused(signed, field):
    """Issue 11 item 7: base64 decoders ignore the padding bits; the record must not."""
    rec = json.loads(signed.record)
    variants = _padding_flips(rec[field])
    assert variants  # a 64-byte value always leaves 4 spare bits (RFC 4648 section 4)
    for v in variants:
        # same bytes under a lenient decoder (the malleability being closed)
        assert base64.b64decode(v) == base64.b64decode(rec[field])
        forged = canonical_json({**rec, field: v})
        with pytest.raises(SignatureInvalidError, match="canonical form"):
            verify_sheet(PDF, JSON, forged, PUB)


@pytest.mark.parametrize("bad", ["QUJD", "QUJD\n", "QU JD", "QUJ=", "QUJDRA", "QUJDRA=="[:-1]])
def test_strict_base64_refuses_non_canonical_text(bad):
    from workbench.crypto import b64decode_strict

    if bad == "QUJD":
        assert b64decode_strict(bad) == b"ABC"  # RFC 4648 section 10 style: "ABC" -> "QUJD"
        return
    with pytest.raises(ValueError, match=r"canonical form|not base64"):
        b64decode_strict(bad)


def test_verify_with_store_refuses_untrusted_imported_key(signed):
    """Issue 11 item 1: a key that arrived in a bundle does not make a sheet VALID."""
    untrusted = _FakeStore(
        {
            FP: {
                "name": "Zoë",
                "public_key_pem": PUB,
                "trusted": False,
                "provenance_text": "imported, untrusted",
            }
        }
    )
    with pytest.raises(SignatureInvalidError, match=r"untrusted key.*imported, untrusted"):
        verify_sheet_with_store(untrusted, PDF, JSON, signed.record)
    trusted = _FakeStore(
        {
            FP: {
                "name": "Zoë",
                "public_key_pem": PUB,
                "trusted": True,
                "provenance_text": "imported, trusted by Lab manager at 2026-03-15T10:00:00Z",
            }
        }
    )
    res = verify_sheet_with_store(trusted, PDF, JSON, signed.record)
    assert res.key_provenance.startswith("imported, trusted by Lab manager")
    assert res.to_dict()["key_provenance"] == res.key_provenance


def test_wrong_passphrase_is_named_even_when_the_padding_happens_to_be_valid():
    # A wrong passphrase on an encrypted PKCS#8 key fails the CBC padding check most of the
    # time; about 1 in 256 passphrases pass it and fail in the ASN.1 parser instead. Both must
    # read "wrong passphrase" (200 attempts: P(no parser failure) = (255/256)^200 ≈ 0.46, so
    # the loop is also run until one such case has been seen, bounded at 5000 tries).
    from cryptography.hazmat.primitives import serialization

    from workbench.errors import KeyFileError
    from workbench.findings.keys import generate_key_pair, load_private_key

    pair = generate_key_pair("correct horse battery staple")
    parser_failures = 0
    for i in range(5000):
        wrong = f"wrong-{i}"
        try:
            serialization.load_pem_private_key(pair.private_key_pem, password=wrong.encode())
        except ValueError as exc:
            if "decrypt" not in str(exc).lower():
                parser_failures += 1
                with pytest.raises(KeyFileError, match="wrong passphrase"):
                    load_private_key(pair.private_key_pem, wrong)
        if parser_failures and i >= 200:
            break
        if i < 200:
            with pytest.raises(KeyFileError, match="wrong passphrase"):
                load_private_key(pair.private_key_pem, wrong)
    assert parser_failures >= 1
