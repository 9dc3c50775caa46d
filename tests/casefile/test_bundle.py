"""Case bundles: deterministic export, verified import, malformed bundles refused."""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import pytest

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


def _write(path: Path, entries: dict[str, bytes]) -> Path:
    with zipfile.ZipFile(path, "w") as zf:
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
