import json
import re

import numpy as np
import pytest

from tests.compare.helpers import glass_replicate
from workbench.cli import main

FORBIDDEN = re.compile(r"match|same source", re.IGNORECASE)  # brief: never an identity claim


@pytest.fixture
def setup(tmp_path, monkeypatch):
    monkeypatch.setenv("WORKBENCH_STORE", str(tmp_path / "store"))
    rng = np.random.default_rng(20261202)
    files = []
    for i in range(4):
        f = tmp_path / f"known-{i}.csv"
        f.write_bytes(glass_replicate(rng, rng.normal(0.06, 0.002)))
        files.append(str(f))
    q = tmp_path / "questioned.csv"
    q.write_bytes(glass_replicate(rng, 0.06))
    return tmp_path, files, str(q)


def _json(capsys):
    return json.loads(capsys.readouterr().out)


def test_collection_workflow_in_store(setup, capsys):
    tmp, files, _ = setup
    assert main(["collection", "create", "lab", "--title", "Lab glass", "--json"]) == 0
    assert _json(capsys)["version"] == 1
    argv = ["collection", "add", "lab", "K1", *files, "--medium", "air", "--elements", "Ca,Sr"]
    assert main([*argv, "--material", "float glass", "--json"]) == 0
    added = _json(capsys)["added"]
    assert added["elements"] == ["Ca", "Sr"] and len(added["replicates"]) == 4
    assert (tmp / "store" / "collections" / "lab" / "collection.json").exists()
    assert main(["collection", "list", "--json"]) == 0
    assert [c["id"] for c in _json(capsys)["collections"]] == ["lab"]
    assert main(["collection", "show", "lab"]) == 0
    assert "K1" in capsys.readouterr().out


def test_compare_json_is_deterministic_and_worded(setup, capsys):
    tmp, files, q = setup
    root = str(tmp / "colls")
    main(["collection", "create", "c", "--title", "t", "--root", root])
    main(["collection", "add", "c", "K1", *files, "--medium", "air", "--root", root])
    capsys.readouterr()
    argv = ["compare", q, "--medium", "air", "--known", "c/K1", "--root", root,
            "--ratio", "Sr:407.771/Ca:393.366", "--json", "-"]  # fmt: skip
    assert main(argv) == 0
    first = capsys.readouterr().out
    assert main(argv) == 0
    assert capsys.readouterr().out == first
    data = json.loads(first)
    assert data["overall"]["outcome"] == "cannot be distinguished"  # same N(0.06, 0.002) source
    assert not FORBIDDEN.search(first)
    out = tmp / "out.json"
    assert main([*argv[:-1], str(out)]) == 0
    assert out.read_text() == first
    assert main(argv[:-2]) == 0  # text output
    text = capsys.readouterr().out
    assert "CANNOT BE DISTINGUISHED" in text and not FORBIDDEN.search(text)
    assert main(["compare", q, "--medium", "air", "--collection", "c", "--root", root]) == 0
    assert not FORBIDDEN.search(capsys.readouterr().out)


def test_compare_errors_have_exit_codes(setup, capsys):
    tmp, files, q = setup
    root = tmp / "colls"
    main(["collection", "create", "c", "--title", "t", "--root", str(root)])
    main(["collection", "add", "c", "K1", *files[:2], "--medium", "air", "--root", str(root)])
    capsys.readouterr()
    base = [
        "compare",
        q,
        "--medium",
        "air",
        "--known",
        "K1",
        "--collection",
        "c",
        "--root",
        str(root),
    ]
    # Two known replicates: too few for ±4 s -> ComparisonError, exit 2 (workbench.errors).
    assert main([*base, "--ratio", "Sr:407.771/Ca:393.366"]) == 2
    assert "at least 3" in capsys.readouterr().err
    # Tampered replicate file -> DataIntegrityError, exit 3.
    victim = next((root / "c" / "files").iterdir())
    victim.write_bytes(victim.read_bytes() + b"\n")
    assert main(base) == 3
    assert "altered" in capsys.readouterr().err
    assert main(["compare", q, "--root", str(root)]) == 2  # no collection given


def test_materials_cli(capsys):
    assert main(["materials", "--elements", "Ti,Pb,Zn", "--claimed-year", "1850", "--json"]) == 0
    data = _json(capsys)
    flagged = {c["id"] for c in data["candidates"] if c["anachronism"]}
    assert "titanium_white_anatase" in flagged  # 1916 > 1850 (table, from memory)
    assert "lead_white" not in flagged
    assert main(["materials", "--elements", "Hg"]) == 0
    assert "vermilion" in capsys.readouterr().out
    assert main(["materials", "--elements", "Qq"]) == 2
    assert main(["materials"]) == 2


def test_materials_cli_with_result_file(tmp_path, capsys):
    res = tmp_path / "r.json"
    res.write_text(json.dumps({"elements": [{"element": "Cu", "verdict_level": 3},
                                            {"element": "As", "verdict_level": 2}]}))  # fmt: skip
    assert main(["materials", "--result", str(res), "--json"]) == 0
    assert _json(capsys)["candidates"][0]["id"] == "emerald_green"
    res.write_text("{not json")
    assert main(["materials", "--result", str(res)]) == 2
