"""Verify edge cases: harmless leftovers, sub-sample time order, missing signing module."""

from __future__ import annotations

import sys

import pytest

from tests.casefile.helpers import add_signed_sheet, populate
from workbench.errors import CustodyRuleError, StoreIntegrityError


def test_orphans_are_harmless(store):
    populate(store)
    # an interrupted write (temp file) and a content file whose row never committed
    (store.files.root / "ab").mkdir(exist_ok=True)
    (store.files.root / "ab" / ".tmp-deadbeef").write_bytes(b"half written")
    store.files.put(b"file written, row never committed")
    report = store.verify()
    assert report.ok, report.first_break


def test_file_bytes_checks_hash(store):
    info = populate(store)
    sha = info["measurement"].sha256
    store.files.path(sha).write_bytes(b"swapped")
    with pytest.raises(StoreIntegrityError, match="replaced or corrupted"):
        store.file_bytes(sha)


def test_subsample_cannot_precede_parent_sampling(store):
    info = populate(store)
    # populate() takes sub-sample 1.1 at 10:30; 10:00 is before it
    with pytest.raises(CustodyRuleError, match="'time-order'"):
        store.add_custody_event(
            f"{info['case']}/1.1", "note", "Dana Whitlock", note="x", at="2026-02-03T10:00:00Z"
        )


def test_signature_check_unavailable_without_findings_module(store, monkeypatch):
    info = populate(store)
    pytest.importorskip("workbench.findings.signing")
    add_signed_sheet(store, info["analysis"].id)
    monkeypatch.setitem(sys.modules, "workbench.findings.signing", None)
    report = store.verify()
    assert report.ok
    assert report.signature_check.startswith("unavailable")
