"""Case bundles: deterministic export, verified import, malformed bundles refused."""

from __future__ import annotations

import json
import struct
import zipfile
from pathlib import Path

import pytest

from tests.casefile.attack_harness import rehash_records
from tests.casefile.helpers import add_signed_sheet, populate
from workbench.casefile import CaseStore, export_bundle, import_bundle
from workbench.casefile.hashing import canonical_json, sha256_hex
from workbench.errors import BundleError, CaseFileError

CASE = "HLX-2026-0007"


@pytest.fixture
def bundle(tmp_path) -> Path:
    with CaseStore.open(tmp_path / "src") as s:
        info = populate(s, CASE)
        add_signed_sheet(s, info["analysis"].id)
        return export_bundle(s, CASE, tmp_path / "case.zip")


def _entries(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as zf:
        return {n: zf.read(n) for n in zf.namelist()}


def _write(path: Path, entries: dict[str, bytes], method: int = zipfile.ZIP_STORED) -> Path:
    with zipfile.ZipFile(path, "w", compression=method) as zf:
        for name, data in entries.items():
            zf.writestr(name, data)
    return path


def _remanifest(entries: dict[str, bytes]) -> dict[str, bytes]:
    """What a careful forger does: recompute the manifest and its hash."""
    manifest = json.loads(entries["manifest.json"])
    manifest["entries"] = [
        {"name": n, "sha256": sha256_hex(b), "size_bytes": len(b)}
        for n, b in sorted(entries.items())
        if n not in ("manifest.json", "manifest.sha256")
    ]
    mb = canonical_json(manifest)
    return {**entries, "manifest.json": mb, "manifest.sha256": (sha256_hex(mb) + "\n").encode()}


def _snapshot(root: Path) -> tuple:
    files = sorted(str(p.relative_to(root)) for p in (root / "files").rglob("*") if p.is_file())
    with CaseStore.open(root) as s:
        rows = s.connection.execute(
            "SELECT (SELECT COUNT(*) FROM cases), (SELECT COUNT(*) FROM custody_events), "
            "(SELECT COUNT(*) FROM analysts)"
        ).fetchone()
    return tuple(rows), tuple(files)


def test_export_is_deterministic_and_round_trips(bundle, tmp_path):
    with CaseStore.open(tmp_path / "dst") as d:
        assert import_bundle(bundle, d).status == "imported"
        report = d.verify()
        assert report.ok and report.signature_check == "ok", report.first_break
        again = export_bundle(d, CASE, tmp_path / "again.zip")
        # identical case content gives identical bytes (deterministic zip, design brief)
        assert again.read_bytes() == bundle.read_bytes()
        assert import_bundle(bundle, d).status == "already present"
    names = zipfile.ZipFile(bundle).namelist()
    assert names == sorted(names)
    assert {i.date_time for i in zipfile.ZipFile(bundle).infolist()} == {(1980, 1, 1, 0, 0, 0)}


def test_export_never_overwrites(bundle, tmp_path):
    with CaseStore.open(tmp_path / "src") as s, pytest.raises(CaseFileError, match="exists"):
        export_bundle(s, CASE, bundle)


def test_different_case_with_same_number_refused(bundle, tmp_path):
    with CaseStore.open(tmp_path / "dst") as d:
        d.create_case(CASE, "another case", "someone")
        with pytest.raises(CaseFileError, match="differs"):
            import_bundle(bundle, d)


def _truncated(b: Path, out: Path) -> tuple[Path, str]:
    out.write_bytes(b.read_bytes()[: len(b.read_bytes()) // 2])
    return out, "not a readable zip"


def _extra(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    e["files/" + "ab" * 32] = b"smuggled"
    return _write(out, e), "files/abab"


def _extra_remanifested(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    data = b"smuggled but listed"
    e["files/" + sha256_hex(data)] = data
    return _write(out, _remanifest(e)), "not referenced by any record"


def _altered(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    e["records/items.json"] = e["records/items.json"].replace(b"largest", b"smallest")
    return _write(out, e), "records/items.json"


def _altered_remanifested(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    e["records/events.json"] = e["records/events.json"].replace(b"bench 4", b"bench 9")
    return _write(out, _remanifest(e)), "altered-event"


def _traversal(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    e["../../evil.txt"] = b"x"
    return _write(out, e), "unsafe entry name"


def _missing_manifest(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    del e["manifest.json"]
    return _write(out, e), "manifest.json"


def _missing_file(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    sha = json.loads(e["records/measurements.json"])[0]["sha256"]
    del e[f"files/{sha}"]
    return _write(out, e), f"files/{sha}"


def _replaced_file(b: Path, out: Path) -> tuple[Path, str]:
    e = _entries(b)
    sha = json.loads(e["records/measurements.json"])[0]["sha256"]
    e[f"files/{sha}"] = b"other data"
    return _write(out, _remanifest(e)), "does not match its name"


def _not_zip(b: Path, out: Path) -> tuple[Path, str]:
    out.write_text("hello")
    return out, "not a readable zip"


MALFORMED = {
    f.__name__[1:]: f
    for f in (
        _truncated,
        _extra,
        _extra_remanifested,
        _altered,
        _altered_remanifested,
        _traversal,
        _missing_manifest,
        _missing_file,
        _replaced_file,
        _not_zip,
    )
}


@pytest.mark.parametrize("name", sorted(MALFORMED))
def test_malformed_bundle_refused_store_unchanged(bundle, tmp_path, name):
    bad, expect = MALFORMED[name](bundle, tmp_path / f"{name}.zip")
    dst = tmp_path / "dst"
    with CaseStore.open(dst) as d:
        d.create_case("OTHER-1", "untouched", "someone")
    before = _snapshot(dst)
    with CaseStore.open(dst) as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    # the message names the entry or check, as designed (common practice, no source)
    assert expect in str(err.value)
    assert "nothing was imported" in str(err.value)
    assert _snapshot(dst) == before


def test_size_limit(bundle, tmp_path):
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError, match="limit"):
        import_bundle(bundle, d, max_entry_bytes=100)


# ------------------------------------------------------------------ issue 11
def test_imported_keys_arrive_untrusted_until_a_recorded_local_act(bundle, tmp_path):
    """Item 1: importing a bundle never makes outside keys trusted."""
    from workbench.errors import SignatureInvalidError
    from workbench.findings.signing import verify_sheet_with_store

    with CaseStore.open(tmp_path / "dst") as d:
        import_bundle(bundle, d)
        (a,) = d.list_analysts()
        assert (a.provenance, a.trusted, a.provenance_text) == (
            "imported",
            False,
            "imported, untrusted",
        )
        sheet = d.list_findings_sheets(CASE)[0]
        files = [
            d.file_bytes(sheet.pdf_sha256),
            d.file_bytes(sheet.json_sha256),
            d.file_bytes(sheet.record_sha256),
        ]
        with pytest.raises(SignatureInvalidError, match="untrusted key"):
            verify_sheet_with_store(d, *files)
        report = d.verify()
        # integrity is intact; the untrusted signer is a warning, not a break
        assert report.ok and any("not trusted" in w for w in report.warnings)
        d.trust_analyst(a.fingerprint, "Ines Calder (lab manager)", "confirmed by phone")
        res = verify_sheet_with_store(d, *files)
        assert "trusted by Ines Calder (lab manager)" in res.key_provenance
        kinds = [e["kind"] for e in d.key_events(a.fingerprint)]
        assert kinds == ["imported", "trusted"]
        assert d.verify().ok


def test_a_bundle_cannot_carry_trust_or_revocation_state(bundle, tmp_path):
    """Item 1: the analysts record travels as identity only; a forged 'trusted' is ignored."""
    e = _entries(bundle)
    analysts = json.loads(e["records/analysts.json"])
    assert set(analysts[0]) == {"fingerprint", "name", "role", "public_key_pem"}
    analysts[0].update(trusted=1, provenance="local", status="active")
    e["records/analysts.json"] = canonical_json(analysts)
    forged = _write(tmp_path / "forged.zip", _remanifest(e))
    with CaseStore.open(tmp_path / "dst") as d:
        import_bundle(forged, d)
        (a,) = d.list_analysts()
        assert (a.provenance, a.trusted) == ("imported", False)


def test_refused_import_leaves_no_files(bundle, tmp_path, monkeypatch):
    """Item 6: a refusal inside the transaction leaves neither rows nor files."""
    import workbench.casefile.bundle as bundle_mod

    dst = tmp_path / "dst"
    with CaseStore.open(dst) as d:
        d.create_case("OTHER-1", "untouched", "someone")
    before = _snapshot(dst)
    real_insert = bundle_mod._insert

    def failing_insert(conn, data, source):
        real_insert(conn, data, source)  # every row written, then the write is refused
        raise CaseFileError("simulated refusal", "nothing was written")

    monkeypatch.setattr(bundle_mod, "_insert", failing_insert)
    with CaseStore.open(dst) as d, pytest.raises(CaseFileError, match="simulated"):
        import_bundle(bundle, d)
    assert _snapshot(dst) == before
    assert not list((dst / "files").glob(".staging-*"))


def test_staged_files_left_by_a_crash_are_finished_or_dropped(bundle, tmp_path):
    with CaseStore.open(tmp_path / "dst") as d:
        import_bundle(bundle, d)
        sha = d.list_measurements(CASE)[0].sha256
        data = d.file_bytes(sha)
        path = d.files.path(sha)
    path.unlink()  # as if the process died after the commit, before the move
    stage = tmp_path / "dst" / "files" / ".staging-crash"
    stage.mkdir()
    (stage / sha).write_bytes(data)
    (stage / sha256_hex(b"not named by any row")).write_bytes(b"not named by any row")
    with CaseStore.open(tmp_path / "dst") as d:
        assert d.file_bytes(sha) == data
        assert d.verify().ok
    assert not stage.exists()


def _recompressed(b: Path, out: Path, method: int) -> Path:
    with zipfile.ZipFile(out, "w") as zf:
        for name, data in sorted(_entries(b).items()):
            zf.writestr(name, data, compress_type=method)
    return out


@pytest.mark.parametrize("method", [zipfile.ZIP_DEFLATED, zipfile.ZIP_LZMA])
def test_damaged_compressed_stream_gives_a_clear_error(bundle, tmp_path, method):
    """Item 6: a damaged deflate or LZMA stream is a BundleError, not a traceback."""
    good = _recompressed(bundle, tmp_path / "good.zip", method)
    with zipfile.ZipFile(good) as zf:
        info = max(zf.infolist(), key=lambda i: i.compress_size)
    raw = bytearray(good.read_bytes())
    # the entry's data starts after its 30-byte local header, name and extra field
    # (PKWARE APPNOTE 4.3.7); damage the middle of its compressed stream
    name_len, extra_len = struct.unpack(
        "<HH", raw[info.header_offset + 26 : info.header_offset + 30]
    )
    start = info.header_offset + 30 + name_len + extra_len
    for k in range(start + info.compress_size // 3, start + info.compress_size // 3 + 16):
        raw[k] ^= 0x5A
    bad = tmp_path / "bad.zip"
    bad.write_bytes(bytes(raw))
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    assert "nothing was imported" in str(err.value)


def test_zip_bomb_refused_before_anything_is_unpacked(bundle, tmp_path, monkeypatch):
    """Item 6: declared sizes and ratio are checked before any entry is read."""
    e = _entries(bundle)
    e["files/" + "0" * 64] = bytes(20 * 1024 * 1024)  # 20 MiB of zeros deflate ~1000:1
    bomb = _write(tmp_path / "bomb.zip", e, zipfile.ZIP_DEFLATED)
    assert bomb.stat().st_size < 200_000
    opened = []
    real_open = zipfile.ZipFile.open
    monkeypatch.setattr(
        zipfile.ZipFile, "open", lambda self, *a, **k: opened.append(a) or real_open(self, *a, **k)
    )
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError, match="zip bomb"):
        import_bundle(bomb, d)
    assert opened == []


def test_rehash_helper_is_faithful(bundle, tmp_path):
    # recomputing an untouched bundle changes nothing (common practice, no source)
    e = _entries(bundle)
    records = {n: json.loads(e[f"records/{n}.json"]) for n in ("case", "items", "events")}
    rehash_records(records)
    assert all(canonical_json(records[n]) == e[f"records/{n}.json"] for n in records)


@pytest.mark.parametrize(
    ("record", "edit", "field"),
    [
        ("case", lambda r: r.update(title="x" * 5_000_000), "title"),
        ("items", lambda r: r[0].update(seal_numbers="HC-55120"), "seal_numbers"),
        ("events", lambda r: r[0].update(seq=1.0), "seq"),
        ("case", lambda r: r.update(status="reopened"), "status"),
    ],
)
def test_fields_validated_as_on_direct_entry(bundle, tmp_path, record, edit, field):
    """Item 6: what direct entry refuses, import refuses, naming the field.

    The forger is careful: every record hash and custody chain is recomputed,
    so only the field rules can refuse it.
    """
    e = _entries(bundle)
    records = {n: json.loads(e[f"records/{n}.json"]) for n in ("case", "items", "events")}
    edit(records[record])
    rehash_records(records)
    for n, data in records.items():
        e[f"records/{n}.json"] = canonical_json(data)
    bad = _write(tmp_path / "bad.zip", _remanifest(e))
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    assert field in str(err.value) and "not valid" in str(err.value)
