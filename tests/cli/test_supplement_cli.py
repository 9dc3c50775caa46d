"""From an XRF analysis to a signed sheet that carries the candidate-materials result.

Whole invented demo flow through the CLI: seed the demo store, analyse the XRF
measurement, list candidate materials for a claimed date of 1850 with
``--supplement-out``, and issue a sheet with ``--supplement``.
"""

from __future__ import annotations

import json
from pathlib import Path

from workbench.cli import main
from workbench.findings.keys import generate_key_pair, save_key_pair

PASS = "harbour-dusk-1850"  # invented


def test_materials_supplement_reaches_the_sheet(tmp_path, monkeypatch, capsys):
    from workbench.casefile import CaseStore
    from workbench.demo import seed_demo_case

    monkeypatch.setenv("WORKBENCH_PASSPHRASE", PASS)
    store_dir = tmp_path / "store"
    with CaseStore.open(store_dir) as store:
        mid = seed_demo_case(store)["measurements"]["NRFL-2026-0502"]
    assert (
        main(
            [
                "analyse",
                str(mid),
                "--analyst",
                "Dr Mirela Okafor (invented)",
                "--store",
                str(store_dir),
                "--json",
            ]
        )
        == 0
    )
    out = json.loads(capsys.readouterr().out)
    result = tmp_path / "result.json"
    result.write_text(json.dumps(out["result"]))
    sup = tmp_path / "materials.json"
    assert (
        main(
            [
                "materials",
                "--result",
                str(result),
                "--claimed-year",
                "1850",
                "--supplement-out",
                str(sup),
            ]
        )
        == 0
    )
    capsys.readouterr()
    doc = json.loads(sup.read_text())
    assert doc["kind"] == "materials" and "1850" in doc["title"]

    key = save_key_pair(generate_key_pair(PASS), tmp_path / "keys", "okafor")
    assert (
        main(
            [
                "keys",
                "register",
                str(tmp_path / "keys" / "okafor.pub.pem"),
                "--name",
                "Dr Mirela Okafor (invented)",
                "--role",
                "examiner",
                "--store",
                str(store_dir),
            ]
        )
        == 0
    )
    capsys.readouterr()  # drop the registration message
    rc = main(
        [
            "findings",
            "issue",
            str(out["analysis_id"]),
            "--key",
            str(key),
            "--lab-name",
            "Northbridge Regional Forensic Laboratory (invented)",
            "--supplement",
            str(sup),
            "--out",
            str(tmp_path / "sheet"),
            "--store",
            str(store_dir),
            "--json",
        ]
    )
    assert rc == 0
    info = json.loads(capsys.readouterr().out)
    sheet = json.loads(Path(info["files"]["json"]).read_text(encoding="utf-8"))
    assert sheet["supplements"][0]["kind"] == "materials"
    # Titanium white on an 1850 claim is flagged (materials table; dates from memory).
    assert any("itanium" in a for a in sheet["supplements"][0]["data"]["anachronisms"])
    assert main(["findings", "verify", info["files"]["pdf"], "--store", str(store_dir)]) == 0


def test_bad_supplement_file_is_refused(tmp_path, monkeypatch, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    monkeypatch.setenv("WORKBENCH_PASSPHRASE", PASS)
    key = save_key_pair(generate_key_pair(PASS), tmp_path / "keys", "k")
    rc = main(
        [
            "findings",
            "issue",
            "1",
            "--key",
            str(key),
            "--lab-name",
            "X (invented)",
            "--supplement",
            str(bad),
            "--out",
            str(tmp_path / "o"),
            "--store",
            str(tmp_path / "s"),
        ]
    )
    err = capsys.readouterr().err
    assert rc == 2 and "not JSON" in err and "Fix:" in err
