"""Tests for workbench/cli/keys.py (run through the real dispatcher)."""

from __future__ import annotations

import io
import json
import os
import stat
from pathlib import Path

import pytest

from workbench.cli import main

PASS = "lantern-quay-99"  # invented


@pytest.fixture
def env(tmp_path, monkeypatch):
    monkeypatch.setenv("WORKBENCH_PASSPHRASE", PASS)
    monkeypatch.setenv("WORKBENCH_STORE", str(tmp_path / "store"))
    return tmp_path


def _json(capsys):
    return json.loads(capsys.readouterr().out)


def test_create_register_list_revoke(env, capsys):
    assert main(["keys", "create", "--name", "zoe", "--out", str(env / "k"), "--json"]) == 0
    made = _json(capsys)
    assert made["fingerprint"].startswith("SHA256:")
    # 0600: common practice for private keys, no source.
    assert stat.S_IMODE(os.stat(made["private_key"]).st_mode) == 0o600
    assert PASS.encode() not in Path(made["private_key"]).read_bytes()  # encrypted

    rc = main(
        [
            "keys",
            "register",
            made["public_key"],
            "--name",
            "Zoë Ångström",
            "--role",
            "examiner",
            "--json",
        ]
    )
    assert rc == 0
    assert _json(capsys)["fingerprint"] == made["fingerprint"]

    assert main(["keys", "list", "--json"]) == 0
    listed = _json(capsys)
    assert [a["name"] for a in listed] == ["Zoë Ångström"]
    assert listed[0]["status"] == "active"

    rc = main(
        ["keys", "revoke", made["fingerprint"], "--reason", "laptop lost", "--actor", "Lab Manager"]
    )
    assert rc == 0
    assert "revoked" in capsys.readouterr().out
    assert main(["keys", "list"]) == 0
    assert "laptop lost" in capsys.readouterr().out


def test_create_never_overwrites(env, capsys):
    assert main(["keys", "create", "--name", "zoe", "--out", str(env / "k")]) == 0
    capsys.readouterr()
    before = (env / "k" / "zoe.key.pem").read_bytes()
    assert main(["keys", "create", "--name", "zoe", "--out", str(env / "k")]) == 4  # SigningError
    assert "already exists" in capsys.readouterr().err
    assert (env / "k" / "zoe.key.pem").read_bytes() == before


def test_passphrase_file_and_short_passphrase(env, capsys, monkeypatch):
    monkeypatch.delenv("WORKBENCH_PASSPHRASE")
    (env / "pp").write_text("short\n")
    rc = main(
        [
            "keys",
            "create",
            "--name",
            "a",
            "--out",
            str(env / "k"),
            "--passphrase-file",
            str(env / "pp"),
        ]
    )
    assert rc == 4 and "fewer than 8" in capsys.readouterr().err
    (env / "pp").write_text("long enough passphrase\n")
    rc = main(
        [
            "keys",
            "create",
            "--name",
            "a",
            "--out",
            str(env / "k"),
            "--passphrase-file",
            str(env / "pp"),
        ]
    )
    assert rc == 0


def test_no_passphrase_source(env, capsys, monkeypatch):
    monkeypatch.delenv("WORKBENCH_PASSPHRASE")
    monkeypatch.setattr("sys.stdin", io.StringIO(""))  # not a terminal
    rc = main(["keys", "create", "--name", "a", "--out", str(env / "k")])
    assert rc == 4
    assert "no passphrase given" in capsys.readouterr().err
    assert not (env / "k").exists() or not list((env / "k").iterdir())


def test_passphrase_is_not_an_option(env, capsys):
    # argparse exits with status 2 on an unknown option (Python argparse docs).
    with pytest.raises(SystemExit, match="2"):
        main(["keys", "create", "--name", "a", "--out", str(env / "k"), "--passphrase", "x"])


def test_register_bad_files(env, capsys):
    (env / "junk.pem").write_bytes(b"not a key")
    assert main(["keys", "register", str(env / "junk.pem"), "--name", "x", "--role", "y"]) == 4
    assert "not a PEM key" in capsys.readouterr().err
    assert main(["keys", "register", str(env / "missing.pem"), "--name", "x", "--role", "y"]) == 2
    assert "cannot read" in capsys.readouterr().err


def test_revoke_unknown(env, capsys):
    assert main(["keys", "revoke", "SHA256:" + "0" * 64, "--reason", "r", "--actor", "a"]) == 6
    assert "register" in capsys.readouterr().err  # NotFoundError from the store


@pytest.mark.parametrize("form", [["--passphrase", "s3cret-Horse"], ["--passphrase=s3cret-Horse"]])
@pytest.mark.parametrize("command", ["keys", "findings"])
def test_passphrase_value_is_never_echoed(env, capsys, form, command):
    """Issue 11 item 12: argparse echoed 'unrecognized arguments: --passphrase SECRET'."""
    argv = (
        ["keys", "create", "--name", "a", "--out", str(env / "k")]
        if command == "keys"
        else ["findings", "issue", "1", "--key", "k", "--lab-name", "L", "--out", str(env)]
    )
    with pytest.raises(SystemExit) as exc:
        main([*argv, *form])
    err = capsys.readouterr().err
    assert exc.value.code == 2
    assert "s3cret-Horse" not in err and "--passphrase-file" in err


def test_trust_and_list_show_provenance(env, capsys, tmp_path):
    from tests.casefile.hostile import rich_store
    from workbench.casefile import CaseStore, export_bundle

    src = rich_store(tmp_path / "src")
    with CaseStore.open(src) as s:
        bundle = export_bundle(s, "HLX-2026-0007", tmp_path / "b.zip")
    assert main(["bundle", "import", str(bundle)]) == 0
    assert "untrusted" in capsys.readouterr().out
    with CaseStore.open(env / "store") as d:
        sheet = d.list_findings_sheets()[0]
        for suffix, sha in ((".pdf", sheet.pdf_sha256), (".json", sheet.json_sha256),
                            (".sig.json", sheet.record_sha256)):  # fmt: skip
            (tmp_path / f"sheet{suffix}").write_bytes(d.file_bytes(sha))
    # findings verify against this store: intact signature, but the key is untrusted
    assert main(["findings", "verify", str(tmp_path / "sheet.pdf")]) == 4
    assert "untrusted key" in capsys.readouterr().out
    assert main(["keys", "list"]) == 0
    assert "provenance: imported, untrusted" in capsys.readouterr().out
    assert main(["keys", "list", "--json"]) == 0
    # the bundle carries the signer's key and (format 3) the returned review's reviewer's
    listed = json.loads(capsys.readouterr().out)
    assert len(listed) == 2 and all(not k["trusted"] for k in listed)
    (a,) = [k for k in listed if k["fingerprint"] == sheet.analyst_fingerprint]
    rc = main(["keys", "trust", a["fingerprint"], "--by", "Ines Calder", "--reason", "by phone"])
    assert rc == 0
    assert "trusted by Ines Calder" in capsys.readouterr().out
    assert main(["findings", "verify", str(tmp_path / "sheet.pdf")]) == 0
    assert "key trusted in this store (imported, trusted by Ines Calder" in capsys.readouterr().out
    # trusting twice is refused (exit 5, a store rule)
    assert main(["keys", "trust", a["fingerprint"], "--by", "X", "--reason", "y"]) == 5
    assert main(["keys", "log", "--json"]) == 0
    kinds = [e["kind"] for e in json.loads(capsys.readouterr().out)]
    assert kinds == ["imported", "imported", "trusted"]  # signer and reviewer, then the act
    assert main(["custody", "verify"]) == 0
