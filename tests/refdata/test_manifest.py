import json
import shutil
from pathlib import Path

import pytest

from workbench.errors import DataIntegrityError, ManifestError, UnknownReferenceSetError
from workbench.refdata import data_version, default_root, list_sets, load_set, verify_sets
from workbench.refdata.manifest import read_manifest, sha256_file

ROOT = Path(__file__).resolve().parents[2] / "reference_sets"
# Folders that hold no shipped data: build scripts and the download cache.
EXCLUDED_DIRS = {"build", "_cache"}


def _data_files() -> set[str]:
    out = set()
    for path in ROOT.rglob("*"):
        rel = path.relative_to(ROOT)
        if not path.is_file() or rel.parts[0] in EXCLUDED_DIRS:
            continue
        if path.suffix in (".md", ".py") or rel.as_posix() == "manifest.json":
            continue
        out.add(rel.as_posix())
    return out


def test_default_root_is_the_checkout():
    assert default_root().resolve() == ROOT.resolve()


def test_manifest_lists_every_data_file_and_hashes_match():
    manifest = read_manifest(ROOT)
    entries = [*manifest["sets"], *manifest["components"], *manifest["atomic"], *manifest["other"]]
    listed = {e["file"] for e in entries}
    assert _data_files() == listed
    for e in entries:
        assert sha256_file(ROOT / e["file"]) == e["sha256"], e["file"]
    assert all(r["status"] == "ok" for r in verify_sets(ROOT))


def test_manifest_entries_have_provenance():
    manifest = read_manifest(ROOT)
    assert data_version(ROOT) == manifest["data_version"]
    for e in manifest["sets"]:
        for key in (
            "id",
            "title",
            "version",
            "domain",
            "axis",
            "unit",
            "file",
            "sha256",
            "format",
            "row_count",
            "elements",
            "stages",
            "sources",
            "build_recipe",
            "licence_summary",
        ):
            assert key in e, (e["id"], key)
        for src in e["sources"]:
            assert src["licence"] and src["citation"] and src["rows_contributed"] > 0
    ids = [s["id"] for s in list_sets(ROOT)]
    assert {"optical", "xray", "hydrogen_like"} <= set(ids)


@pytest.fixture()
def tree_copy(tmp_path):
    dest = tmp_path / "refs"
    shutil.copytree(ROOT, dest, ignore=shutil.ignore_patterns("_cache", "build"))
    return dest


def test_tampered_file_raises_naming_it(tree_copy):
    target = tree_copy / "sets" / "xray.parquet"
    data = bytearray(target.read_bytes())
    data[len(data) // 2] ^= 0x01  # flip one bit
    target.write_bytes(bytes(data))
    with pytest.raises(DataIntegrityError) as info:
        load_set("xray", tree_copy)
    assert "xray.parquet" in str(info.value)
    assert "build_all.py" in info.value.remedy
    status = {r["file"]: r["status"] for r in verify_sets(tree_copy)}
    assert status["sets/xray.parquet"] == "mismatch"
    assert status["sets/optical.parquet"] == "ok"


def test_missing_file_and_missing_manifest(tree_copy):
    (tree_copy / "sets" / "hydrogen_like.parquet").unlink()
    with pytest.raises(DataIntegrityError, match="missing"):
        load_set("hydrogen_like", tree_copy)
    assert {r["file"]: r["status"] for r in verify_sets(tree_copy)}[
        "sets/hydrogen_like.parquet"
    ] == "missing"
    (tree_copy / "manifest.json").unlink()
    with pytest.raises(ManifestError):
        load_set("optical", tree_copy)


def test_malformed_manifest(tree_copy):
    (tree_copy / "manifest.json").write_text(json.dumps({"sets": "x"}))
    with pytest.raises(ManifestError, match="sets"):
        read_manifest(tree_copy)


def test_unknown_id_lists_known_ones():
    with pytest.raises(UnknownReferenceSetError) as info:
        load_set("opticl", ROOT)
    assert "optical" in info.value.remedy and "xray" in info.value.remedy


def test_repeated_load_is_cached():
    a = load_set("xray", ROOT)
    b = load_set("xray", ROOT)
    assert a.table is b.table
    assert a.provenance() == {
        "id": "xray",
        "version": a.version,
        "sha256": a.sha256,
        "data_version": data_version(ROOT),
    }
