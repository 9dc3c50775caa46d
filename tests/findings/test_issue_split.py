"""Tests for draft_sheet_content + sign_and_store_sheet in workbench/findings/issue.py.

The invented store comes from tests/findings/findings_data.py (invented case).
"""

from __future__ import annotations

import copy
import json

import pytest

from tests.findings.findings_data import make_store
from workbench.errors import InputError, KeyFileError, SigningError
from workbench.findings.content import canonical_json
from workbench.findings.issue import (
    draft_sheet_content,
    issue_findings_sheet,
    sign_and_store_sheet,
)
from workbench.findings.keys import generate_key_pair
from workbench.findings.signing import verify_sheet_with_store

PASS = "harbour-lights-7"  # invented
LAB = {"name": "Harbourside Forensic Chemistry Unit"}  # invented
WHEN = "2026-03-14T09:30:00Z"  # invented issue time


@pytest.fixture(scope="module")
def keys():
    return generate_key_pair(PASS), generate_key_pair(PASS)


@pytest.fixture
def store(tmp_path, keys):
    st = make_store(
        tmp_path / "store",
        {"Zoë Ångström": keys[0].public_key_pem, "Bjørn Łukasz": keys[1].public_key_pem},
    )
    yield st
    st.close()


def _aid(store) -> int:
    return store.list_analyses("HFC-2026-0042")[0].id


def _draft(store, kp, **kw):
    args = dict(analyst_fingerprint=kp.fingerprint, lab=LAB, notes="n", limitations="l")
    args.update(kw)
    return draft_sheet_content(store, _aid(store), issued_at=WHEN, **args)


def _sign(store, kp, content, **kw):
    args = dict(private_key_pem=kp.private_key_pem, passphrase=PASS)
    args.update(kw)
    return sign_and_store_sheet(store, _aid(store), content, **args)


def test_the_drafted_content_is_what_gets_signed(store, keys):
    content = _draft(store, keys[0])
    issued = _sign(store, keys[0], content)
    # The JSON file is the canonical form of exactly the drafted content (issue.py contract).
    assert issued.json_bytes == canonical_json(content)
    assert issued.issued_at == WHEN and json.loads(issued.json_bytes)["issued_at"] == WHEN
    res = verify_sheet_with_store(
        store, issued.pdf_bytes, issued.json_bytes, issued.signature_record
    )
    assert res.key_fingerprint == keys[0].fingerprint
    assert [s.id for s in store.list_findings_sheets("HFC-2026-0042")] == [issued.sheet_id]


def test_issue_findings_sheet_is_draft_then_sign(store, keys):
    # Drafting writes nothing, so a draft made just before the one-call issue is the
    # content that call signs (issue.py contract: issue = draft + sign_and_store).
    content = _draft(store, keys[0])
    assert store.list_findings_sheets("HFC-2026-0042") == []
    issued = issue_findings_sheet(
        store, _aid(store), analyst_fingerprint=keys[0].fingerprint,
        private_key_pem=keys[0].private_key_pem, passphrase=PASS, lab=LAB, notes="n",
        limitations="l", issued_at=WHEN,
    )  # fmt: skip
    assert issued.content == content
    assert issued.json_bytes == canonical_json(content)


def test_key_of_another_analyst_is_refused_and_nothing_is_stored(store, keys):
    content = _draft(store, keys[0])
    with pytest.raises(SigningError, match="does not match the registered key"):
        _sign(store, keys[0], content, private_key_pem=keys[1].private_key_pem)
    with pytest.raises(KeyFileError, match="wrong passphrase"):
        _sign(store, keys[0], content, passphrase="wrong-passphrase")
    assert store.list_findings_sheets("HFC-2026-0042") == []


def test_revoked_between_draft_and_signing_is_refused(store, keys):
    content = _draft(store, keys[1])
    store.revoke_analyst(keys[1].fingerprint, "laptop stolen", "Lab Manager")
    with pytest.raises(SigningError, match=r"revoked.*laptop stolen"):
        _sign(store, keys[1], content)
    assert store.list_findings_sheets("HFC-2026-0042") == []


def test_unregistered_analyst_cannot_draft(store):
    stranger = generate_key_pair(PASS)
    with pytest.raises(SigningError, match="not registered"):
        _draft(store, stranger)


@pytest.mark.parametrize(
    ("change", "error", "message"),
    [
        (lambda c: c["analysis"].update(id=999), InputError, "reports analysis 999"),
        (lambda c: c["analysis"].update(record_hash="0" * 64), InputError, "hash"),
        (lambda c: c["analyst"].update(name="Someone Else"), SigningError, "registered to"),
        (lambda c: c.update(issued_at="2026-03-14T10:30:00+01:00"), InputError, "issue time"),
        (lambda c: c.pop("analyst"), InputError, "no 'analyst' section"),
    ],
)
def test_content_not_matching_the_store_is_refused(store, keys, change, error, message):
    content = copy.deepcopy(_draft(store, keys[0]))
    change(content)
    with pytest.raises(error, match=message):
        _sign(store, keys[0], content)
    assert store.list_findings_sheets("HFC-2026-0042") == []


def test_files_written_only_when_stored(store, keys, tmp_path):
    out = tmp_path / "out"
    content = _draft(store, keys[0])
    with pytest.raises(SigningError):
        _sign(store, keys[0], content, private_key_pem=keys[1].private_key_pem, out_dir=out)
    assert not out.exists() or list(out.iterdir()) == []
    issued = _sign(store, keys[0], content, out_dir=out)
    assert sorted(p.name for p in out.iterdir()) == sorted(p.name for p in issued.paths.values())
