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


def test_batch_passes_the_column_and_sheet_choices_to_each_file(tmp_path, capsys):
    # `workbench batch` took --columns and --block (the engine options of match)
    # but did not pass them on until stop 32. Invented workbook: the sheet asked
    # for holds the spectrum in its 'counts B' column.
    from tests.io.xlsx_fixture import xlsx_bytes

    rows = [["wavelength (nm)", "counts A", "counts B"]]
    rows += [[400.0 + 0.01 * i, 1.0, 1.0 + (i == 300) * 500.0] for i in range(600)]
    d = tmp_path / "in"
    d.mkdir()
    (d / "book.xlsx").write_bytes(xlsx_bytes({"Notes": [["invented"]], "Run 2": rows}))
    args = ["batch", str(d), "--out", str(tmp_path / "out"), "--scheduler", "threads"]
    args += ["--block", "Run 2", "--columns", "intensity=counts B", "--json"]
    assert main(args) == 0
    (row,) = json.loads(capsys.readouterr().out)
    notes = json.loads((tmp_path / "out" / row["json"]).read_bytes())["input"]["notes"]
    assert "sheet 'Run 2' (other sheets, not read: 'Notes')" in notes
    assert "x from 'wavelength (nm)' (unit nm), y from 'counts B'" in notes


def test_batch_reads_the_peak_finding_options_as_match_does(tmp_path, capsys):
    # --saturation-level was accepted by batch and dropped (only --min-snr reached
    # peak finding) until stop 32: the result must be match's, byte for byte.
    import numpy as np

    x = np.linspace(500.0, 520.0, 2000)
    y = 10.0 + 5000.0 * np.exp(-0.5 * ((x - 510.0) / 0.05) ** 2)  # invented line
    y = np.minimum(y, 3000.0)  # clipped at an invented detector ceiling
    d = tmp_path / "in"
    d.mkdir()
    f = d / "clipped.csv"
    f.write_text(
        "wavelength (nm),counts\n"
        + "".join(f"{a:.4f},{b:.2f}\n" for a, b in zip(x, y, strict=True))
    )
    opts = ["--saturation-level", "2900", "--min-snr", "4"]
    out = tmp_path / "out"
    assert main(["batch", str(d), "--out", str(out), "--scheduler", "threads", *opts]) == 0
    single = tmp_path / "single.json"
    assert main(["match", str(f), "--json", str(single), *opts]) == 0
    capsys.readouterr()
    assert (out / "clipped.csv.json").read_bytes() == single.read_bytes()
    params = json.loads(single.read_bytes())["input"]["peak_finding"]
    assert params["saturation_level"] == 2900.0
