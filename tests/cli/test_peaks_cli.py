"""``workbench peaks`` end to end through the dispatcher."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np

from workbench.cli import main

DATA = Path(__file__).parent.parent / "data" / "io"


def _write_spectrum(path: Path) -> bytes:
    rng = np.random.default_rng(20261202)
    x = np.linspace(300.0, 700.0, 4001)
    y = 20.0 + 400.0 * np.exp(-0.5 * ((x - 500.3) / 0.25) ** 2) + rng.normal(0.0, 1.0, x.size)
    text = "Wavelength (nm),Counts\n" + "".join(
        f"{a:.4f},{b:.4f}\n" for a, b in zip(x, y, strict=True)
    )
    path.write_text(text, encoding="utf-8")
    return text.encode()


def test_table_output_shows_sha_and_peak(tmp_path, capsys):
    data = _write_spectrum(tmp_path / "scan.csv")
    assert main(["peaks", str(tmp_path / "scan.csv")]) == 0
    out = capsys.readouterr().out
    assert hashlib.sha256(data).hexdigest() in out  # hashlib as oracle
    assert "500.3" in out  # synthetic line centre above
    assert "medium not stated; assumed air" in out


def test_json_to_file_is_deterministic(tmp_path):
    _write_spectrum(tmp_path / "scan.csv")
    out1, out2 = tmp_path / "a.json", tmp_path / "b.json"
    assert main(["peaks", str(tmp_path / "scan.csv"), "--json", str(out1)]) == 0
    assert main(["peaks", str(tmp_path / "scan.csv"), "--json", str(out2)]) == 0
    assert out1.read_bytes() == out2.read_bytes()
    doc = json.loads(out1.read_text())
    assert len(doc["peaks"]) == 1
    assert abs(doc["peaks"][0]["wavelength_nm"] - 500.3) < 0.01  # synthetic centre, 0.1 px
    assert doc["peak_finding"]["min_snr"] == 5.0 and "baseline" not in doc


def test_json_stdout_and_options(tmp_path, capsys):
    _write_spectrum(tmp_path / "scan.csv")
    rc = main(
        [
            "peaks",
            str(tmp_path / "scan.csv"),
            "--baseline",
            "als",
            "--min-snr",
            "8",
            "--medium",
            "vacuum",
            "--json",
            "-",
        ]
    )
    assert rc == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["medium"] == "vacuum" and doc["peak_finding"]["baseline"] == "als"


def test_peak_list_input_shown_as_read(capsys):
    assert main(["peaks", str(DATA / "multiblock.jdx"), "--block", "1"]) == 0
    assert "input is a peak list" in capsys.readouterr().out


def test_bad_input_gives_exit_2_and_one_line(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    xs = [400 + i for i in range(60)]
    xs[3] = xs[2]  # duplicated position on spreadsheet row 5 (header is row 1)
    bad.write_text("wavelength (nm),counts\n" + "".join(f"{v},1\n" for v in xs), encoding="utf-8")
    assert main(["peaks", str(bad), "--json", "-"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "row 5 repeats" in err and "Fix:" in err
