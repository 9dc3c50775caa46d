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


# --- the analyst's decisions and the technical review, through the CLI --------------------


def _decide(*args: str) -> int:
    return main(["findings", "decide", "1", *args, "--analyst", "Zoë Ångström"])


def test_decisions_round_trip_and_reach_the_signed_sheet(tmp_path, monkeypatch, pairs, capsys):
    monkeypatch.setenv("WORKBENCH_PASSPHRASE", PASS)
    store_dir = tmp_path / "store"
    monkeypatch.setenv("WORKBENCH_STORE", str(store_dir))
    key_path = save_key_pair(pairs[0], tmp_path / "keys", "zoe")
    make_store(store_dir, {"Zoë Ångström": pairs[0].public_key_pem}).close()
    # Fixture: Pb I (level 3) with lines "Pb I 405.78" and "Pb I 368.35"; Ba II (level 2).
    assert _decide("reject", "Ba", "--reason", "455.40 nm is explained by Ti here") == 0
    assert _decide("reject", "Pb I|Pb I 368.35", "--reason", "saturated on the bench") == 0
    assert _decide("add", "Sr", "--line", "500.1:Sr I (invented)", "--reason", "by eye") == 0
    assert _decide("reverse", "1", "--reason", "Ti excluded after all") == 0
    assert _decide("accept", "Zz", "--reason", "x") == 2  # InputError exit code
    capsys.readouterr()
    assert main(["findings", "decisions", "1", "--json"]) == 0
    listed = json.loads(capsys.readouterr().out)
    assert [d["action"] for d in listed["decisions"]] == [
        "reject_element",
        "reject_line",
        "add_element",
        "reverse",
    ]
    calls = {c["element"]: c for c in listed["calls"]}
    assert calls["Ba"]["concluded"] and calls["Sr"]["added"]  # rejection reversed; Sr added
    rc = main(
        [
            "findings",
            "issue",
            "1",
            "--key",
            str(key_path),
            "--lab-name",
            "Lab (invented)",
            "--question",
            "Is barium present?",
            "--ask",
            "Ba",
            "--out",
            str(tmp_path / "out"),
            "--json",
        ]
    )
    assert rc == 0
    info = json.loads(capsys.readouterr().out)
    content = json.loads(Path(info["files"]["json"]).read_text())
    assert [d["seq"] for d in content["decisions"]] == [1, 2, 3, 4]
    assert content["decisions"][0]["status"] == "reversed by decision 4"
    from tests.findings.findings_pdftext import pages_text, squash

    text = squash(" ".join(pages_text(Path(info["files"]["pdf"]).read_bytes())))
    assert "saturated on the bench" in text and "struck by analyst" in text
    assert main(["findings", "verify", info["files"]["pdf"]]) == 0
    capsys.readouterr()
    # Tamper with a stored decision behind the store's back: verification fails.
    import sqlite3

    conn = sqlite3.connect(store_dir / "cases.sqlite")
    conn.execute("DROP TRIGGER analysis_decisions_no_update")
    conn.execute("UPDATE analysis_decisions SET reason='edited later' WHERE seq=2")
    conn.commit()
    conn.close()
    assert main(["findings", "verify", info["files"]["pdf"]]) == 4
    assert "decision record altered" in capsys.readouterr().out


@pytest.fixture
def reviewed(issued, capsys, pairs):
    tmp, info = issued
    assert (
        main(
            [
                "keys",
                "register",
                str(tmp / "keys" / "other.pub.pem"),
                "--name",
                "Bjørn Łukasz",
                "--role",
                "reviewer",
            ]
        )
        == 0
    )
    capsys.readouterr()  # drop the registration message
    stem = Path(info["files"]["pdf"]).name[: -len(".pdf")]
    rc = main(
        [
            "findings",
            "review",
            "1",
            "--key",
            str(tmp / "keys" / "other.key.pem"),
            "--approve",
            "--comments",
            "checked",
            "--out",
            str(Path(info["files"]["pdf"]).parent),
            "--stem",
            stem,
            "--json",
        ]
    )
    assert rc == 0
    out = json.loads(capsys.readouterr().out)
    return tmp, info, out


def test_review_sign_and_verify_both(reviewed, capsys):
    tmp, info, out = reviewed
    assert out["outcome"] == "approved" and set(out["files"]) == {"record", "sig"}
    pdf = info["files"]["pdf"]
    assert main(["findings", "verify", pdf]) == 0
    text = capsys.readouterr().out
    assert "reviewed and countersigned by Bjørn Łukasz" in text
    assert "review: raw .review.sig file valid" in text
    rc = main(
        [
            "findings",
            "verify",
            pdf,
            "--pubkey",
            str(tmp / "keys" / "zoe.pub.pem"),
            "--reviewer-pubkey",
            str(tmp / "keys" / "other.pub.pem"),
            "--json",
        ]
    )
    assert rc == 0
    assert json.loads(capsys.readouterr().out)["reviewer"]["signer"] == "Bjørn Łukasz"
    assert main(["custody", "show", "HFC-2026-0042/3", "--json"]) == 0
    shown = json.loads(capsys.readouterr().out)
    events = shown["events"] if isinstance(shown, dict) else shown
    kinds = [e["kind"] for e in events]
    assert kinds[-2:] == ["reported", "reviewed"]


@pytest.mark.parametrize("kind", ["record", "sig"])
def test_altered_review_signature_fails(reviewed, capsys, kind):
    _, info, out = reviewed
    _flip(out["files"][kind], 30)
    assert main(["findings", "verify", info["files"]["pdf"]]) == 4
    assert "INVALID" in capsys.readouterr().out


def test_self_review_refused_by_cli(issued, capsys):
    tmp, _ = issued
    rc = main(["findings", "review", "1", "--key", str(tmp / "keys" / "zoe.key.pem"), "--approve"])
    assert rc == 4 and "cannot review their own analysis" in capsys.readouterr().err


def test_verify_uses_the_review_on_record(reviewed, capsys):
    _, info, out = reviewed
    for kind in ("record", "sig"):
        Path(out["files"][kind]).unlink()  # no review files beside the PDF
    assert main(["findings", "verify", info["files"]["pdf"]]) == 0
    assert "reviewed and countersigned by Bjørn Łukasz" in capsys.readouterr().out
    assert main(["findings", "show", "1", "--json"]) == 0
    assert [r["outcome"] for r in json.loads(capsys.readouterr().out)["reviews"]] == ["approved"]


def test_cli_decision_verbs_are_the_library_verbs():
    # The CLI module imports only argparse at load time, so it spells the verbs out; they
    # must stay the library's (workbench.findings.decisions.DECISION_VERBS), which the app uses.
    from workbench.cli.findings_decisions import _ACTIONS
    from workbench.findings.decisions import DECISION_VERBS

    assert _ACTIONS == DECISION_VERBS
