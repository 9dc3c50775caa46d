import json
import shutil
from pathlib import Path

from workbench.cli import main

ROOT = Path(__file__).resolve().parents[2] / "reference_sets"


def test_list_json(capsys):
    assert main(["refsets", "list", "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)
    ids = {r["id"] for r in rows}
    assert {"optical", "xray", "hydrogen_like"} <= ids
    opt = next(r for r in rows if r["id"] == "optical")
    assert "Fe" in opt["elements"] and opt["row_count"] > 1000


def test_show_filters_json(capsys):
    code = main(
        [
            "refsets",
            "show",
            "optical",
            "--element",
            "Pb",
            "--ion",
            "1",
            "--range-nm",
            "405.8",
            "406.0",
            "--json",
        ]
    )
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    # Pb I 405.781 nm air (NIST ASD, from memory)
    assert any(abs(r["wavelength_air_nm"] - 405.781) < 0.003 for r in out["lines"])
    assert out["set"]["id"] == "optical"
    assert main(["refsets", "show", "xray", "--element", "Cu", "--limit", "3"]) == 0
    assert "Cu" in capsys.readouterr().out


def test_show_unknown_id_exit_3(capsys):
    assert main(["refsets", "show", "nope"]) == 3
    assert "optical" in capsys.readouterr().err


def test_verify_ok_and_mismatch(tmp_path, capsys):
    assert main(["refsets", "verify"]) == 0
    dest = tmp_path / "refs"
    shutil.copytree(ROOT, dest, ignore=shutil.ignore_patterns("_cache", "build"))
    p = dest / "atomic" / "ionization_energies.csv"
    p.write_bytes(p.read_bytes() + b"\n")
    capsys.readouterr()
    assert main(["refsets", "verify", "--root", str(dest), "--json"]) == 3
    out = json.loads(capsys.readouterr().out)
    assert not out["ok"]
    bad = [f for f in out["files"] if f["status"] != "ok"]
    assert [f["file"] for f in bad] == ["atomic/ionization_energies.csv"]


def test_import_lab(tmp_path, capsys):
    csv = tmp_path / "lines.csv"
    # invented lab data; Cu I 324.754 nm air (NIST ASD, from memory)
    csv.write_text("element,ion,wavelength_nm,medium\nCu,1,324.754,air\n")
    lab = tmp_path / "labs"
    assert (
        main(
            [
                "refsets",
                "import-lab",
                str(csv),
                "--id",
                "demo-lab",
                "--title",
                "Demo",
                "--lab-dir",
                str(lab),
            ]
        )
        == 0
    )
    capsys.readouterr()
    assert main(["refsets", "show", "demo-lab", "--lab-dir", str(lab), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["shown"] == 1
    assert main(["refsets", "list", "--lab-dir", str(lab), "--json"]) == 0
    ids = [r["id"] for r in json.loads(capsys.readouterr().out)]
    assert ids[-1] == "demo-lab" and "optical" in ids
    bad = tmp_path / "bad.csv"
    bad.write_text("element,ion,wavelength_nm,medium\nQq,1,324.754,air\n")
    assert (
        main(
            ["refsets", "import-lab", str(bad), "--id", "b", "--title", "B", "--lab-dir", str(lab)]
        )
        == 3
    )
    assert "line 2" in capsys.readouterr().err


def test_verify_covers_the_components_table(capsys):
    assert main(["refsets", "verify", "--json"]) == 0
    files = [f["file"] for f in json.loads(capsys.readouterr().out)["files"]]
    assert "sets/optical_components.parquet" in files


def test_components_of_ba_ii_4934(capsys):
    # Ba II 493.41 nm air (NIST ASD, from memory): one row, eleven Gaia-ESO components
    assert (
        main(
            [
                "refsets",
                "show",
                "optical",
                "--element",
                "Ba",
                "--ion",
                "2",
                "--range-nm",
                "493.53",
                "493.56",
                "--json",
            ]
        )
        == 0
    )
    lines = json.loads(capsys.readouterr().out)["lines"]
    assert len(lines) == 1 and lines[0]["n_components"] == 11
    line_id = lines[0]["line_id"]
    assert main(["refsets", "components", line_id, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["line"]["line_id"] == line_id and len(out["components"]) == 11
    assert {c["isotope"] for c in out["components"]} == {
        "134Ba",
        "135Ba",
        "136Ba",
        "137Ba",
        "138Ba",
    }
    assert main(["refsets", "components", line_id]) == 0
    text = capsys.readouterr().out
    assert "11 component(s)" in text and "138Ba" in text


def test_components_of_a_single_row_and_an_unknown_id(capsys):
    # Pb I 405.781 nm air (NIST ASD, from memory) is listed once by its sources
    assert (
        main(
            [
                "refsets",
                "show",
                "optical",
                "--element",
                "Pb",
                "--ion",
                "1",
                "--range-nm",
                "405.89",
                "405.90",
                "--json",
            ]
        )
        == 0
    )
    line_id = json.loads(capsys.readouterr().out)["lines"][0]["line_id"]
    assert main(["refsets", "components", line_id]) == 0
    assert "no components" in capsys.readouterr().out
    assert main(["refsets", "components", "optical:Xx:1:1.0"]) == 2
    err = capsys.readouterr().err
    assert "optical:Xx:1:1.0" in err and "refsets show" in err
