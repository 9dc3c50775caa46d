import json

import numpy as np
import pytest

from tests.compare.helpers import glass_replicate, peak_csv
from workbench.compare.collections import (
    add_exemplar,
    create_collection,
    list_collections,
    load_collection,
    shared_collections_root,
)
from workbench.errors import ComparisonError, DataIntegrityError, InputError


@pytest.fixture
def root(tmp_path):
    rng = np.random.default_rng(20261202)
    create_collection(tmp_path, "glass", "Test glass", created_by="tester (invented)")
    reps = [glass_replicate(rng, 0.06) for _ in range(3)]
    add_exemplar(
        tmp_path, "glass", "K1", reps, material="float glass", medium="air", elements={"Ca", "sr"}
    )
    return tmp_path


def test_round_trip_keeps_bytes_and_metadata(root):
    coll = load_collection(root, "glass")
    assert coll.version == 2  # create = 1, one add = 2 (documented rule)
    ex = coll.exemplar("K1")
    assert ex.material == "float glass"
    assert ex.elements == ("Ca", "Sr")
    assert len(ex.replicates) == 3
    for rep in ex.replicates:
        data = (root / "glass" / rep.file).read_bytes()
        assert rep.file == f"files/{rep.sha256}"
        assert coll.replicate_bytes(rep) == data
        assert rep.medium == "air" and rep.axis == "wavelength"
    peaks = coll.read_replicates("K1")
    assert peaks[0].table.height == 9  # nine lines in tests.compare.helpers.GLASS_LINES


def test_index_json_is_sorted_and_stable(root):
    text = (root / "glass" / "collection.json").read_text()
    assert text == json.dumps(json.loads(text), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def test_tampered_replicate_file_is_refused(root):
    rep = load_collection(root, "glass").exemplar("K1").replicates[1]
    path = root / "glass" / rep.file
    path.write_bytes(path.read_bytes().replace(b"3", b"4", 1))
    with pytest.raises(DataIntegrityError, match="altered"):
        load_collection(root, "glass")


def test_missing_replicate_file_is_refused(root):
    rep = load_collection(root, "glass").exemplar("K1").replicates[0]
    (root / "glass" / rep.file).unlink()
    with pytest.raises(DataIntegrityError, match="missing"):
        load_collection(root, "glass")


def test_tampered_index_hash_is_refused(root):
    index = root / "glass" / "collection.json"
    raw = json.loads(index.read_text())
    raw["exemplars"][0]["replicates"][0]["sha256"] = "0" * 64
    index.write_text(json.dumps(raw))
    with pytest.raises(DataIntegrityError):
        load_collection(root, "glass")


def test_bad_replicate_writes_nothing(root):
    before = sorted(p.name for p in (root / "glass" / "files").iterdir())
    good = peak_csv([393.366, 407.771], [10.0, 1.0])
    with pytest.raises(InputError):
        add_exemplar(root, "glass", "K2", [good, b"not,a,peak\nlist"], medium="air")
    assert sorted(p.name for p in (root / "glass" / "files").iterdir()) == before
    assert load_collection(root, "glass").version == 2
    assert not list((root / "glass").glob(".*tmp"))


def test_duplicates_and_unknowns(root):
    with pytest.raises(ComparisonError):
        create_collection(root, "glass", "again")
    with pytest.raises(ComparisonError):
        add_exemplar(root, "glass", "K1", [peak_csv([400.0], [1.0])], medium="air")
    with pytest.raises(ComparisonError, match="known: glass"):
        load_collection(root, "nope")
    with pytest.raises(ComparisonError):
        load_collection(root, "glass").exemplar("K9")
    with pytest.raises(InputError):
        create_collection(root, "../evil", "path escape")


def test_medium_is_recorded_explicitly(root):
    # workbench.io assumes air when nothing states the medium; the collection records it.
    coll = add_exemplar(root, "glass", "K3", [peak_csv([400.0], [1.0])])
    assert coll.exemplar("K3").replicates[0].medium == "air"
    coll = add_exemplar(root, "glass", "K4", [peak_csv([400.0], [1.0])], medium="vacuum")
    assert coll.exemplar("K4").replicates[0].medium == "vacuum"


def test_list_collections(root, tmp_path):
    rows = list_collections(root)
    assert rows == [
        {"id": "glass", "title": "Test glass", "version": 2, "exemplars": 1, "replicates": 3}
    ]
    assert list_collections(tmp_path / "absent") == []


def test_shared_demo_collection_loads_and_verifies():
    coll = load_collection(shared_collections_root(), "demo-float-glass")
    assert [e.id for e in coll.exemplars] == ["KRF-G01", "KRF-G02", "KRF-G03"]  # build_demo.py
    assert all(len(e.replicates) == 4 for e in coll.exemplars)
    assert "INVENTED" in coll.title
