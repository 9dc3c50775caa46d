"""``workbench map`` through the real CLI entry point."""

from __future__ import annotations

import json

import h5py
import numpy as np

from workbench.cli import main


def test_map_writes_products_and_prints_json(tmp_path, capsys):
    out = tmp_path / "out"
    # The INVENTED demo painting (workbench.maps.demo): Pb, Hg, Fe, Cu, Ca were planted.
    rc = main(
        [
            "map",
            "--demo",
            "--out",
            str(out),
            "--scheduler",
            "threads",
            "--json",
            "--rgb",
            "Pb L,Hg L,Cu K",
        ]
    )
    assert rc == 0
    captured = capsys.readouterr()
    manifest = json.loads(captured.out)
    assert manifest["families"] == ["Ca K", "Cu K", "Fe K", "Hg L", "Pb L"]
    assert "INVENTED" in captured.err and "pixel fit" in captured.err  # label and progress bar
    assert (out / "rgb.png").is_file() and (out / "maps.h5").is_file()
    assert json.loads((out / "manifest.json").read_bytes()) == manifest


def test_map_records_in_a_case(tmp_path, capsys):
    store = tmp_path / "store"
    assert (
        main(
            [
                "case",
                "create",
                "MAP-9",
                "--title",
                "t (invented)",
                "--requesting-party",
                "p (invented)",
                "--store",
                str(store),
            ]
        )
        == 0
    )
    assert (
        main(
            [
                "item",
                "add",
                "MAP-9",
                "1",
                "--description",
                "panel (invented)",
                "--received-by",
                "A",
                "--received-from",
                "B",
                "--store",
                str(store),
            ]
        )
        == 0
    )
    capsys.readouterr()
    rc = main(
        [
            "map",
            "--demo",
            "--out",
            str(tmp_path / "o"),
            "--scheduler",
            "threads",
            "--case",
            "MAP-9",
            "--item",
            "1",
            "--store",
            str(store),
            "--json",
        ]
    )
    assert rc == 0
    rec = json.loads(capsys.readouterr().out)["case_record"]
    assert rec["original_kept"] == "bytes" and "maps.h5" in rec["products"]


def test_bad_cube_is_one_clear_error(tmp_path, capsys):
    p = tmp_path / "flat.h5"
    with h5py.File(p, "w") as f:
        f.create_dataset("counts", data=np.zeros((4, 4), np.uint16))
    assert main(["map", str(p), "--scheduler", "threads"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "no 3-D numeric dataset" in err and "Fix:" in err
    assert "Traceback" not in err
    q = tmp_path / "nocal.npy"
    np.save(q, np.zeros((2, 2, 16), np.uint16))
    assert main(["map", str(q), "--scheduler", "threads"]) == 2
    assert "no energy calibration" in capsys.readouterr().err
    assert main(["map", "--scheduler", "threads"]) == 2
    assert "no cube given" in capsys.readouterr().err
