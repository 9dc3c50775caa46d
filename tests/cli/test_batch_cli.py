"""``workbench batch`` through the real CLI entry point."""

from __future__ import annotations

import json

import polars as pl

from workbench.cli import main
from workbench.demo import demo_file


def test_batch_cli_matches_single_file_cli_byte_for_byte(tmp_path, capsys):
    d = tmp_path / "in"
    d.mkdir()
    (d / "ground.csv").write_bytes(demo_file("white_pigment"))  # invented demo spectrum
    (d / "broken.csv").write_bytes(b"1,2\n")
    out = tmp_path / "out"
    rc = main(
        [
            "batch",
            str(d / "*.csv"),
            "--out",
            str(out),
            "--scheduler",
            "threads",
            "--json",
            "--elements",
            "Pb,Zn,Ti,Ca,Fe",
        ]
    )
    assert rc == 2  # one file failed, the rest went on
    rows = json.loads(capsys.readouterr().out)
    assert [r["file"].rsplit("/", 1)[-1] for r in rows] == ["broken.csv", "ground.csv"]
    assert rows[0]["error"] and rows[1]["error"] is None
    single = tmp_path / "single.json"
    assert (
        main(
            ["match", str(d / "ground.csv"), "--json", str(single), "--elements", "Pb,Zn,Ti,Ca,Fe"]
        )
        == 0
    )
    assert (out / "ground.csv.json").read_bytes() == single.read_bytes()
    assert pl.read_parquet(out / "summary.parquet").height == 2
