"""``workbench match``, ``analyse``, ``demo`` and ``--version`` through the real CLI entry point."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from workbench.cli import main
from workbench.demo import demo_file


@pytest.fixture(scope="module")
def paint_chip(tmp_path_factory):
    path = tmp_path_factory.mktemp("demo") / "paint_chip.csv"
    path.write_bytes(demo_file("paint_chip"))  # invented demo spectrum
    return path


def test_match_json_stdout_is_deterministic(paint_chip, capsysbinary):
    assert main(["match", str(paint_chip), "--json", "-"]) == 0
    first = capsysbinary.readouterr().out
    assert main(["match", str(paint_chip), "--json", "-"]) == 0
    second = capsysbinary.readouterr().out
    assert first == second
    rep = json.loads(first)
    assert rep["schema_version"] == 2  # bumped by issue 9 (docs/result-schema.md)
    assert rep["input"]["medium"] == "air"
    levels = {el["species"]: el["verdict_level"] for el in rep["elements"]}
    # The invented paint chip was synthesised with Ti II and Ba II (workbench.demo).
    assert levels["Ti II"] == 3 and levels["Ba II"] == 3
    # Nothing outside the recipe's elements is called "established" (by construction).
    recipe = {"Ti", "Ba", "Ca", "Fe", "Cr", "Si", "Mg"}
    assert {el["element"] for el in rep["elements"] if el["verdict_level"] == 3} <= recipe


def test_match_writes_summary_json_and_csv(paint_chip, tmp_path, capsys):
    out = tmp_path / "r.json"
    rc = main(["match", str(paint_chip), "--json", str(out), "--csv-dir", str(tmp_path / "csv")])
    assert rc == 0
    text = capsys.readouterr().out
    assert "established" in text and "qualified examiner" in text
    assert json.loads(out.read_bytes())["input"]["sha256"]
    assert sorted(p.name for p in (tmp_path / "csv").iterdir()) == [
        "elements.csv",
        "lines.csv",
        "matched_lines.csv",
        "missing_lines.csv",
        "warnings.csv",
    ]


@pytest.mark.parametrize(
    ("content", "args", "needle"),
    [
        (None, [], "does not exist"),
        (b"", [], "empty"),
        (b"wavelength (nm),intensity\n3961.5,10\n3968.5,20\n4226.7,30\n", [], "Å"),
        (b"wavelength (nm),intensity\n396.1,10\nabc,20\n", [], "row"),
    ],
)
def test_bad_input_gives_one_clear_error(tmp_path, capsys, content, args, needle):
    path = tmp_path / "bad.csv"
    if content is not None:
        path.write_bytes(content)
    rc = main(["match", str(path), *args])
    err = capsys.readouterr().err
    assert rc == 2
    assert err.startswith("error: ") and "Fix:" in err and "Traceback" not in err
    assert needle in err


def test_analyse_stores_result_and_chain_verifies(tmp_path, capsys):
    from workbench.casefile import CaseStore
    from workbench.demo import seed_demo_case

    store_dir = tmp_path / "store"
    with CaseStore.open(store_dir) as store:
        seeded = seed_demo_case(store)
    mid = seeded["measurements"]["NRFL-2026-0417"]
    rc = main(
        [
            "analyse",
            str(mid),
            "--analyst",
            "Test Analyst (invented)",
            "--store",
            str(store_dir),
            "--json",
        ]
    )
    assert rc == 0
    out = json.loads(capsys.readouterr().out)
    with CaseStore.open(store_dir) as store:
        stored = store.get_analysis(out["analysis_id"])
        assert json.loads(stored.result_json) == out["result"]
    assert main(["custody", "verify", "--store", str(store_dir)]) == 0


def test_demo_without_app(tmp_path, capsys):
    assert main(["demo", "--no-app", "--store", str(tmp_path / "s")]) == 0
    out = capsys.readouterr().out
    assert "invented" in out and "Pb L" in out


def test_version_names_data_version(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["--version"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert out.startswith("workbench ") and "reference data 20" in out


def test_match_does_not_import_the_front_end(paint_chip, tmp_path):
    code = (
        "import sys; from workbench.cli import main; "
        f"main(['match', {str(paint_chip)!r}, '--json', {str(tmp_path / 'o.json')!r}]); "
        "print('streamlit' in sys.modules, 'plotly' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip().splitlines()[-1] == "False False"


def test_match_with_instrument_file(tmp_path, capsysbinary):
    spec = tmp_path / "xrf.csv"
    spec.write_bytes(demo_file("white_pigment"))  # invented demo spectrum
    inst = tmp_path / "handheld.json"
    inst.write_text(json.dumps({"anode": "Rh", "tube_kV": 40, "fwhm_MnKa_eV": 150}))
    assert main(["match", str(spec), "--instrument", str(inst), "--json", "-"]) == 0
    rep = json.loads(capsysbinary.readouterr().out)
    assert rep["parameters"]["instrument"]["fwhm_MnKa_eV"] == 150
    assert rep["parameters"]["instrument"]["name"] == "handheld"
    assert rep["xray"]["instrument_assumed"] is False


def test_match_with_bad_instrument_file_is_one_clear_error(tmp_path, capsys):
    spec = tmp_path / "xrf.csv"
    spec.write_bytes(demo_file("white_pigment"))  # invented demo spectrum
    inst = tmp_path / "bad.json"
    inst.write_text('{"tube_kv": 40}')
    assert main(["match", str(spec), "--instrument", str(inst)]) == 2
    err = capsys.readouterr().err
    assert "unknown instrument setting(s): tube_kv" in err and "Traceback" not in err


def test_match_evidence_model_options(paint_chip, capsysbinary):
    # Issue 9 options reach the engine and are recorded in the result.
    args = ["match", str(paint_chip), "--json", "-", "--no-calibration"]
    args += ["--source-model", "lte-plasma", "--abundance-prior", "crustal"]
    args += ["--saturation-level", "1e9"]
    assert main(args) == 0
    rep = json.loads(capsysbinary.readouterr().out)
    assert rep["parameters"]["apply_calibration"] is False
    assert rep["calibration"]["applied"] is False
    assert rep["evidence_model"]["source_model"]["name"] == "lte-plasma"
    assert rep["evidence_model"]["abundance_prior"] == "crustal"
    assert rep["input"]["peak_finding"]["saturation_level"] == 1e9


def test_too_wide_window_is_one_clear_error(paint_chip, capsys):
    # ±5000 nm would compare every peak with every line: refused at once (exit 2).
    assert main(["match", str(paint_chip), "--tolerance-nm", "5000"]) == 2
    err = capsys.readouterr().err
    assert "pairs would be compared" in err and "Traceback" not in err


def test_columns_option_picks_a_column_by_its_header(capsysbinary):
    # pvlib 0.16.1's ASTM G173-03 (tests/data/realspectra/pvlib): three
    # irradiance columns; the reader takes the first unless told.
    import json

    from tests.realdata.loader import DATA

    g173 = str(DATA / "pvlib" / "ASTMG173.csv")
    args = ["match", g173, "--mode", "absorption", "--unit", "nm", "--json", "-"]
    assert main([*args, "--columns", "position=wavelength,intensity=global"]) == 0
    notes = json.loads(capsysbinary.readouterr().out)["input"]["notes"]
    assert "x from 'wavelength' (unit nm), y from 'global'" in notes
    assert main(args) == 0
    notes = json.loads(capsysbinary.readouterr().out)["input"]["notes"]
    assert "x from 'wavelength' (unit nm), y from 'extraterrestrial'" in notes
    # ... and the columns left are named, with the way to choose one.
    assert any(n.startswith("other column(s) not read: 'global', 'direct'") for n in notes)


def test_the_terminal_summary_shows_what_the_reader_decided(capsys):
    # pvlib 0.16.1's ASTM G173-03 states no medium and holds three spectra:
    # the assumed medium and the column read belong in what the analyst sees.
    from tests.realdata.loader import DATA

    g173 = str(DATA / "pvlib" / "ASTMG173.csv")
    assert main(["match", g173, "--mode", "absorption", "--unit", "nm"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("input     ASTMG173.csv")
    assert lines[1].startswith("read      ")
    head = "\n".join(lines[: lines.index(next(x for x in lines if x.startswith("axis")))])
    assert "medium not stated; assumed air" in head
    assert "y from 'extraterrestrial'" in head and "not read: 'global', 'direct'" in head


@pytest.mark.parametrize("value", ["global", "intensity=", "=global"])
def test_columns_option_malformed_is_a_usage_error(value, capsys):
    with pytest.raises(SystemExit) as exc:
        main(["match", "x.csv", "--columns", value])
    assert exc.value.code == 2 and "is not ROLE=HEADER" in capsys.readouterr().err


def test_help_names_every_input_format_the_readers_take(capsys):
    # The CLI words the formats itself (importing the readers would slow its
    # start-up); they must be the readers' own list (workbench.io.INPUT_FORMATS).
    from workbench.io import INPUT_FORMATS

    for command in ("match", "peaks"):
        with pytest.raises(SystemExit):
            main([command, "--help"])
        out = " ".join(capsys.readouterr().out.split())
        assert INPUT_FORMATS in out, command


def test_analyse_passes_the_column_and_block_choices_to_the_reader(tmp_path, capsys):
    # `workbench analyse` took --columns (add_engine_options) but did not pass it
    # on until stop 32: the stored analysis read the file's default column.
    # ASTM G173-03 from pvlib 0.16.1 (tests/data/realspectra/pvlib).
    from tests.realdata.loader import DATA
    from workbench.casefile import CaseStore
    from workbench.demo import seed_demo_case

    store_dir = tmp_path / "store"
    with CaseStore.open(store_dir) as store:
        seed_demo_case(store)
        item = store.list_items("NRFL-2026-0417")[0]
        m = store.add_measurement(
            (item.case_number, item.item_number),
            (DATA / "pvlib" / "ASTMG173.csv").read_bytes(),
            "ASTMG173.csv",
            "absorption",
            "reference spectrum (pvlib)",
            {},
            "Test Analyst (invented)",
            "2026-11-21T09:00:00Z",
        )
    args = ["analyse", str(m.id), "--analyst", "Test Analyst (invented)", "--store"]
    args += [str(store_dir), "--unit", "nm", "--mode", "absorption", "--json"]
    assert main([*args, "--columns", "intensity=global"]) == 0
    notes = json.loads(capsys.readouterr().out)["result"]["input"]["notes"]
    assert "x from 'wavelength' (unit nm), y from 'global'" in notes
    assert main(args) == 0
    notes = json.loads(capsys.readouterr().out)["result"]["input"]["notes"]
    assert not any("y from 'global'" in n for n in notes)


def test_match_reads_the_sheet_asked_for(tmp_path, capsys):
    from tests.io.xlsx_fixture import xlsx_bytes

    # Ca II K, H and Ca I (air nm; NIST ASD, from memory); invented heights.
    rows = [["wavelength (nm)", "intensity"], [393.366, 100.0], [396.847, 80.0], [422.673, 60.0]]
    f = tmp_path / "book.xlsx"
    f.write_bytes(xlsx_bytes({"Notes": [["see sheet 2"]], "A": rows[:1], "B": rows}))
    assert main(["match", str(f), "--block", "B", "--json", str(tmp_path / "r.json")]) == 0
    notes = json.loads((tmp_path / "r.json").read_bytes())["input"]["notes"]
    assert "sheet 'B' (other sheets, not read: 'Notes', 'A')" in notes
    capsys.readouterr()
    assert main(["match", str(f), "--block", "C"]) == 2
    assert "has no sheet 'C'" in capsys.readouterr().err
