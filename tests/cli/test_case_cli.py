"""CLI tests for the case, item, measure and bundle command groups (invented case data)."""

from __future__ import annotations

import json

from workbench.cli import main


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def _setup(capsys, store):
    s = ["--store", str(store)]
    assert (
        run(
            capsys,
            "case",
            "create",
            "FEN-2026-031",
            "--title",
            "Bronze fitting",
            "--requesting-party",
            "Fenwick County Museum",
            *s,
        )[0]
        == 0
    )
    code, out, _ = run(
        capsys,
        "item",
        "add",
        "FEN-2026-031",
        "1",
        "--description",
        "bronze harness fitting",
        "--seal",
        "FM-0091",
        "--received-by",
        "Rhea Solberg",
        "--received-from",
        "courier Tam Oduya",
        "--at",
        "2026-03-01T09:00:00Z",
        "--json",
        *s,
    )
    assert code == 0 and json.loads(out)["holder"] == "Rhea Solberg"
    return s


def test_case_create_list_show_search(capsys, tmp_path):
    s = _setup(capsys, tmp_path / "st")
    code, out, _ = run(capsys, "case", "list", "--json", *s)
    assert code == 0 and [c["case_number"] for c in json.loads(out)] == ["FEN-2026-031"]
    code, out, _ = run(capsys, "case", "show", "FEN-2026-031", *s)
    assert code == 0 and "bronze harness fitting" in out
    code, out, _ = run(capsys, "case", "search", "bronse fiting", "--json", *s)
    assert code == 0 and json.loads(out)[0]["case_number"] == "FEN-2026-031"
    code, _, err = run(
        capsys, "case", "create", "FEN-2026-031", "--title", "x", "--requesting-party", "y", *s
    )
    # exit 5 = refused by a case-store rule (workbench.cli docstring)
    assert code == 5 and "already exists" in err
    code, _, err = run(capsys, "case", "show", "NOPE", *s)
    # exit 6 = record not found (workbench.cli docstring)
    assert code == 6 and "no case" in err


def test_item_subsample_and_show(capsys, tmp_path):
    s = _setup(capsys, tmp_path / "st")
    assert (
        run(
            capsys,
            "custody",
            "add",
            "FEN-2026-031/1",
            "opened",
            "--actor",
            "Rhea Solberg",
            "--seal",
            "FM-0091",
            "--at",
            "2026-03-01T10:00:00Z",
            *s,
        )[0]
        == 0
    )
    code, out, _ = run(
        capsys,
        "item",
        "add",
        "FEN-2026-031",
        "1a",
        "--description",
        "drillings",
        "--parent",
        "1",
        "--received-by",
        "Rhea Solberg",
        "--at",
        "2026-03-01T11:00:00Z",
        *s,
    )
    assert code == 0 and "sub-sample of 1" in out
    code, out, _ = run(capsys, "item", "show", "FEN-2026-031/1a", "--json", *s)
    data = json.loads(out)
    assert [e["kind"] for e in data["custody_events"]] == [
        "received",
        "opened",
        "sub-sampled",
        "sub-sampled",
    ]
    code, out, _ = run(capsys, "item", "list", "FEN-2026-031", "--json", *s)
    assert [i["item_number"] for i in json.loads(out)] == ["1", "1a"]


def test_measure_add_show(capsys, tmp_path):
    s = _setup(capsys, tmp_path / "st")
    f = tmp_path / "xrf_run7.csv"
    f.write_bytes(b"energy_keV,counts\n8.05,1234\n")
    code, out, _ = run(
        capsys,
        "measure",
        "add",
        "FEN-2026-031/1",
        str(f),
        "--technique",
        "xrf",
        "--instrument",
        "handheld XRF 3",
        "--operator",
        "Rhea Solberg",
        "--setting",
        "voltage_kV=40",
        "--setting",
        "filter=Al",
        "--measured-at",
        "2026-03-01T12:00:00Z",
        "--json",
        *s,
    )
    assert code == 0
    m = json.loads(out)
    assert m["settings"] == {"voltage_kV": 40, "filter": "Al"} and m["technique"] == "XRF"
    code, out, _ = run(capsys, "measure", "show", str(m["id"]), "--json", *s)
    assert json.loads(out)["sha256"] == m["sha256"]
    code, out, _ = run(capsys, "measure", "show", "FEN-2026-031/1", *s)
    assert "xrf_run7.csv" in out
    code, _, err = run(
        capsys,
        "measure",
        "add",
        "FEN-2026-031/1",
        str(tmp_path / "nope.csv"),
        "--technique",
        "XRF",
        "--instrument",
        "i",
        "--operator",
        "o",
        *s,
    )
    # exit 2 = bad input (workbench.cli docstring)
    assert code == 2 and "does not exist" in err
    code, _, err = run(
        capsys,
        "measure",
        "add",
        "FEN-2026-031/1",
        str(f),
        "--technique",
        "XRF",
        "--instrument",
        "i",
        "--operator",
        "o",
        "--setting",
        "novalue",
        *s,
    )
    assert code == 2 and "key=value" in err


def test_bundle_export_import(capsys, tmp_path):
    s = _setup(capsys, tmp_path / "st")
    out_zip = tmp_path / "fen.zip"
    code, out, _ = run(capsys, "bundle", "export", "FEN-2026-031", str(out_zip), "--json", *s)
    assert code == 0 and json.loads(out)["sha256"]
    dst = ["--store", str(tmp_path / "dst")]
    code, out, _ = run(capsys, "bundle", "import", str(out_zip), "--json", *dst)
    assert code == 0 and json.loads(out)["status"] == "imported"
    bad = tmp_path / "bad.zip"
    bad.write_bytes(out_zip.read_bytes()[:100])
    code, _, err = run(capsys, "bundle", "import", str(bad), *dst)
    # exit 4 = verification failed (workbench.cli docstring)
    assert code == 4 and "nothing was imported" in err
