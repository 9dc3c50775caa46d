"""CLI tests for the custody command group (invented case data)."""

from __future__ import annotations

import json
import sqlite3

from tests.cli.test_case_cli import _setup, run


def test_custody_add_show_and_rules(capsys, tmp_path):
    s = _setup(capsys, tmp_path / "st")
    code, out, _ = run(
        capsys,
        "custody",
        "add",
        "FEN-2026-031/1",
        "transferred",
        "--actor",
        "Rhea Solberg",
        "--to",
        "Joss Amari",
        "--at",
        "2026-03-01T09:30:00Z",
        "--json",
        *s,
    )
    assert code == 0 and json.loads(out)["seq"] == 2
    code, _, err = run(
        capsys,
        "custody",
        "add",
        "FEN-2026-031/1",
        "transferred",
        "--actor",
        "Rhea Solberg",
        "--to",
        "Kim Pell",
        *s,
    )
    # exit 5 = refused by a case-store rule (workbench.cli docstring)
    assert code == 5 and "'holder'" in err and "FEN-2026-031/1" in err
    code, _, err = run(
        capsys, "custody", "add", "FEN-2026-031/1", "sealed", "--actor", "Joss Amari", *s
    )
    assert code == 5 and "'seal-number'" in err
    code, out, _ = run(capsys, "custody", "show", "FEN-2026-031/1", *s)
    assert code == 0 and "Rhea Solberg -> Joss Amari" in out
    code, _, err = run(
        capsys,
        "custody",
        "add",
        "FEN-2026-031/1",
        "note",
        "--actor",
        "x",
        "--at",
        "last tuesday",
        *s,
    )
    assert code == 2 and "ISO 8601" in err


def test_custody_verify_exit_codes(capsys, tmp_path):
    s = _setup(capsys, tmp_path / "st")
    code, out, _ = run(capsys, "custody", "verify", *s)
    assert code == 0 and out.startswith("OK")
    conn = sqlite3.connect(tmp_path / "st" / "cases.sqlite", isolation_level=None)
    conn.execute("DROP TRIGGER custody_events_no_update")
    conn.execute("UPDATE custody_events SET actor='Someone' WHERE seq=1")
    conn.close()
    code, out, _ = run(capsys, "custody", "verify", "FEN-2026-031", "--json", *s)
    # exit 4 = verification failed (workbench.cli docstring)
    assert code == 4
    report = json.loads(out)
    assert report["ok"] is False
    fb = report["first_break"]
    assert (fb["kind"], fb["item_number"], fb["seq"]) == ("altered-event", "1", 1)
    code, out, _ = run(capsys, "custody", "verify", *s)
    assert code == 4 and "BROKEN" in out and "altered-event" in out
