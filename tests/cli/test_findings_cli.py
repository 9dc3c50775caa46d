"""Tests for workbench/cli/findings.py (issue, verify, show, list; invented case)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.findings.findings_data import make_store
from workbench.cli import main
from workbench.findings.keys import generate_key_pair, save_key_pair

PASS = "lantern-quay-99"  # invented


@pytest.fixture(scope="module")
def pairs():
    return generate_key_pair(PASS), generate_key_pair(PASS)


@pytest.fixture
def issued(tmp_path, monkeypatch, pairs, capsys):
    monkeypatch.setenv("WORKBENCH_PASSPHRASE", PASS)
    store_dir = tmp_path / "store"
    monkeypatch.setenv("WORKBENCH_STORE", str(store_dir))
    key_path = save_key_pair(pairs[0], tmp_path / "keys", "zoe")
    save_key_pair(pairs[1], tmp_path / "keys", "other")
    make_store(store_dir, {"Zoë Ångström": pairs[0].public_key_pem}).close()
    rc = main(
        [
            "findings",
            "issue",
            "1",
            "--key",
            str(key_path),
            "--lab-name",
            "Harbourside Forensic Chemistry Unit",
            "--notes",
            "**not bold**",
            "--issued-at",
            "2026-03-14T09:30:00Z",
            "--out",
            str(tmp_path / "out"),
            "--json",
        ]
    )
    assert rc == 0
    info = json.loads(capsys.readouterr().out)
    return tmp_path, info


def test_issue_writes_four_files(issued):
    _, info = issued
    assert set(info["files"]) == {"pdf", "json", "sig", "record"}
    assert info["sheet_id"] == 1
    assert Path(info["files"]["pdf"]).read_bytes().startswith(b"%PDF-")  # ISO 32000-1 7.5.2


def test_verify_valid_with_store_and_pubkey(issued, capsys):
    tmp, info = issued
    pdf = info["files"]["pdf"]
    assert main(["findings", "verify", pdf]) == 0
    out = capsys.readouterr().out
    assert out.startswith("VALID: signed by Zoë Ångström")
    assert "raw .sig file valid" in out
    rc = main(["findings", "verify", pdf, "--pubkey", str(tmp / "keys" / "zoe.pub.pem"), "--json"])
    assert rc == 0
    assert json.loads(capsys.readouterr().out)["valid"] is True


def _flip(path: str, pos: int) -> None:
    data = bytearray(Path(path).read_bytes())
    data[pos] ^= 0x20
    Path(path).write_bytes(bytes(data))


@pytest.mark.parametrize(
    ("kind", "pos", "message"),
    [
        ("pdf", 0, "PDF changed"),
        ("pdf", -1, "PDF changed"),
        ("json", 3, "JSON changed"),
        ("record", 40, "record"),
    ],
)
def test_verify_detects_tampering(issued, capsys, kind, pos, message):
    _, info = issued
    _flip(info["files"][kind], pos)
    assert main(["findings", "verify", info["files"]["pdf"]]) == 4
    assert message in capsys.readouterr().out


def test_verify_wrong_key_and_revoked(issued, capsys):
    tmp, info = issued
    pdf = info["files"]["pdf"]
    rc = main(
        ["findings", "verify", pdf, "--pubkey", str(tmp / "keys" / "other.pub.pem"), "--json"]
    )
    assert rc == 4
    assert "different key" in json.loads(capsys.readouterr().out)["problem"]
    assert (
        main(
            [
                "keys",
                "revoke",
                info["key_fingerprint"],
                "--reason",
                "compromised",
                "--actor",
                "Lab Manager",
            ]
        )
        == 0
    )
    capsys.readouterr()
    assert main(["findings", "verify", pdf]) == 4
    out = capsys.readouterr().out
    assert "revoked key" in out and "compromised" in out


def test_verify_unknown_key_and_missing_files(issued, capsys, tmp_path):
    _, info = issued
    pdf = info["files"]["pdf"]
    assert main(["findings", "verify", pdf, "--store", str(tmp_path / "nowhere")]) == 4
    assert "unknown key" in capsys.readouterr().out
    assert not (tmp_path / "nowhere").exists()  # no empty store created
    assert main(["findings", "verify", str(tmp_path / "absent.pdf")]) == 2
    assert "cannot read PDF" in capsys.readouterr().err


def test_swapped_raw_signature(issued, capsys):
    _, info = issued
    Path(info["files"]["sig"]).write_bytes(bytes(64))
    assert main(["findings", "verify", info["files"]["pdf"]]) == 4
    assert "raw signature file" in capsys.readouterr().out


def test_show_and_list(issued, capsys, tmp_path):
    _, info = issued
    assert main(["findings", "show", "1", "--json", "--export", str(tmp_path / "exp")]) == 0
    shown = json.loads(capsys.readouterr().out)
    assert shown["signature"]["valid"] is True
    # Fixture elements Pb (ion 1) and Ba (ion 2), labelled in spectroscopic notation.
    assert [f["species"] for f in shown["findings"]] == ["Pb I", "Ba II"]
    exported = Path(shown["files"]["pdf"]).read_bytes()
    assert exported == Path(info["files"]["pdf"]).read_bytes()
    assert main(["findings", "list", "--json"]) == 0
    assert [s["id"] for s in json.loads(capsys.readouterr().out)] == [1]
    assert main(["findings", "show", "99"]) == 6  # NotFoundError exit code (workbench.errors)


def test_issue_refuses_unregistered_key(issued, capsys):
    tmp, _ = issued
    rc = main(
        [
            "findings",
            "issue",
            "1",
            "--key",
            str(tmp / "keys" / "other.key.pem"),
            "--lab-name",
            "Lab",
            "--out",
            str(tmp / "out2"),
        ]
    )
    assert rc == 4 and "not registered" in capsys.readouterr().err
    assert not (tmp / "out2").exists() or not list((tmp / "out2").iterdir())


def test_issue_wrong_passphrase(issued, capsys, monkeypatch):
    tmp, _ = issued
    monkeypatch.setenv("WORKBENCH_PASSPHRASE", "definitely wrong")
    rc = main(
        [
            "findings",
            "issue",
            "1",
            "--key",
            str(tmp / "keys" / "zoe.key.pem"),
            "--lab-name",
            "Lab",
            "--out",
            str(tmp / "out3"),
        ]
    )
    assert rc == 4 and "wrong passphrase" in capsys.readouterr().err


def test_issue_passphrase_not_accepted_on_command_line(tmp_path, capsys):
    with pytest.raises(SystemExit) as exc:
        main(
            [
                "findings",
                "issue",
                "1",
                "--key",
                "k.pem",
                "--passphrase",
                "secret123",
                "--lab-name",
                "Lab",
                "--out",
                str(tmp_path),
            ]
        )
    assert exc.value.code == 2  # argparse usage error exit status (Python docs)
