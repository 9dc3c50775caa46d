"""workbench.refdata.loader: components table and tables saved before n_components."""

import hashlib
import json

import polars as pl
import pytest

from workbench.errors import DataIntegrityError, UnknownReferenceSetError
from workbench.refdata import (
    CANONICAL_SCHEMA,
    COMPONENT_SCHEMA,
    import_lab_set,
    load_components,
    load_set,
    save_lab_set,
)
from workbench.refdata.columns import ADDED_COLUMNS

# Invented demo lab data; Na D wavelengths from NIST ASD (from memory).
CSV = b"element,ion,wavelength_nm,medium\nNa,1,588.995,air\nNa,1,589.592,air\n"


def test_load_components_of_one_line():
    opt = load_set("optical").table
    line_id = opt.filter(pl.col("n_components") > 5)["line_id"][0]
    comps = load_components("optical", line_id=line_id)
    assert list(comps.columns) == list(COMPONENT_SCHEMA)
    assert comps.height == opt.filter(pl.col("line_id") == line_id)["n_components"][0]
    assert (comps["blend_id"] == line_id).all()
    assert comps["component"].to_list() == list(range(1, comps.height + 1))


def test_load_components_unknown_set():
    with pytest.raises(UnknownReferenceSetError, match="xray"):
        load_components("xray")


def test_tampered_components_file_is_refused(tmp_path):
    import shutil

    from workbench.refdata import default_root

    dest = tmp_path / "refs"
    shutil.copytree(default_root(), dest, ignore=shutil.ignore_patterns("_cache", "build"))
    target = dest / "sets" / "optical_components.parquet"
    data = bytearray(target.read_bytes())
    data[len(data) // 2] ^= 0x01
    target.write_bytes(bytes(data))
    with pytest.raises(DataIntegrityError, match="optical_components"):
        load_components("optical", dest)


def test_lab_set_saved_before_n_components_still_loads(tmp_path):
    rs = import_lab_set(CSV, "old-lab", "Old lab set", source_name="old.csv")
    lab = tmp_path / "labs"
    save_lab_set(rs, lab)
    # rewrite the saved table as data version 2026.12.1 wrote it: without the new columns
    path = lab / rs.entry["file"]
    legacy = pl.read_parquet(path).drop(list(ADDED_COLUMNS))
    legacy.write_parquet(path)
    manifest_path = lab / "lab_manifest.json"
    manifest = json.loads(manifest_path.read_text())
    manifest["sets"][0]["sha256"] = hashlib.sha256(path.read_bytes()).hexdigest()
    manifest_path.write_text(json.dumps(manifest))
    loaded = load_set("old-lab", lab_dir=lab)
    assert dict(zip(loaded.table.columns, loaded.table.dtypes, strict=True)) == CANONICAL_SCHEMA
    assert loaded.table["n_components"].null_count() == loaded.table.height
