import hashlib
import json

import h5py
import numpy as np
import pytest

from tests.maps.conftest import INSTRUMENT
from workbench.casefile import CaseStore
from workbench.maps import Runner, cube_sha256, open_cube, run_maps
from workbench.maps.store import register_products, write_products


@pytest.fixture(scope="module")
def products(h5_cube, tmp_path_factory):
    cube = open_cube(h5_cube)
    with Runner("threads") as runner:
        res = run_maps(cube, runner, instrument=INSTRUMENT)
    out = tmp_path_factory.mktemp("products")
    manifest = write_products(
        res, out, cube_sha256=cube_sha256(h5_cube), rgb=("Pb L", "Fe K", "Cu K")
    )
    return res, out, manifest


def test_store_previews_and_manifest(products, h5_cube):
    res, out, manifest = products
    for name, sha in manifest["files"].items():  # every listed file has its SHA-256
        assert hashlib.sha256((out / name).read_bytes()).hexdigest() == sha
    assert {"Pb_L.png", "Fe_K.png", "Cu_K.png", "rgb.png", "maps.h5"} <= set(manifest["files"])
    assert (out / "Pb_L.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (RFC 2083)
    with h5py.File(out / "maps.h5") as f:
        d = f["maps/Pb L"]
        assert d.chunks is not None and d.compression == "gzip"
        np.testing.assert_array_equal(d[()], res.maps[res.family_index("Pb L")])
        assert json.loads(f.attrs["families"]) == res.families
    assert manifest["cube"]["sha256"] == hashlib.sha256(h5_cube.read_bytes()).hexdigest()
    assert manifest["versions"]["reference_data"]
    # The sum-spectrum record is the engine's JSON (schema 2, docs/result-schema.md).
    assert json.loads((out / "sum_match.json").read_bytes())["schema_version"] == 2


@pytest.mark.parametrize(("limit", "kept"), [(1 << 30, "bytes"), (1000, "hash")])
def test_registered_as_products_of_the_measurement(products, h5_cube, tmp_path, limit, kept):
    _, out, manifest = products
    with CaseStore.open(tmp_path / "store") as store:
        store.create_case("MAP-1", "maps test (invented)", "nobody (invented)")
        store.add_item("MAP-1", "1", "panel (invented)", received_by="A", received_from="B")
        rec = register_products(
            store,
            ("MAP-1", "1"),
            h5_cube,
            out,
            manifest,
            operator="A",
            analyst="B",
            measured_at="2026-12-02T10:00:00Z",
            instrument_name=INSTRUMENT.name,
            copy_limit_bytes=limit,
        )
        assert rec["original_kept"] == kept
        m = store.get_measurement(rec["measurement_id"])
        assert m.settings["original_kept"] == kept
        stored = store.file_bytes(m.sha256)
        if kept == "bytes":
            assert stored == h5_cube.read_bytes()  # kept byte for byte
        else:
            ref = json.loads(stored)
            assert ref["sha256"] == manifest["cube"]["sha256"]
        a = store.get_analysis(rec["analysis_id"])
        assert a.parameters["kind"] == "element_maps"
        assert a.result_json == (out / "sum_match.json").read_bytes()
        for name, sha in a.parameters["products"].items():
            assert store.file_bytes(sha) == (out / name).read_bytes()
        assert store.verify().ok
