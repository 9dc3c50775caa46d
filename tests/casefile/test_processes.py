"""Real processes: concurrent writers and writers killed with SIGKILL mid-write."""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from workbench.casefile import CaseStore

WRITER = Path(__file__).with_name("writer_proc.py")
ROOT_DIR = Path(__file__).resolve().parents[2]


def _setup(root: Path) -> None:
    with CaseStore.open(root) as s:
        s.create_case("C-1", "concurrency", "Testing")
        s.add_item("C-1", "1", "shared item", received_by="Ann", received_from="Courier")


def _spawn(root: Path, tag: str, count: int, seed: int | None = None) -> subprocess.Popen:
    args = [sys.executable, str(WRITER), str(root), "C-1/1", tag, str(count)]
    if seed is not None:
        args.append(str(seed))
    env = {**os.environ, "PYTHONPATH": str(ROOT_DIR)}
    return subprocess.Popen(
        args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=ROOT_DIR, env=env
    )


def _notes(root: Path) -> list[str]:
    with CaseStore.open(root) as s:
        return [e.note or "" for e in s.custody_events("C-1/1")]


@pytest.mark.slow
def test_four_concurrent_writers_lose_nothing(tmp_path):
    root = tmp_path / "store"
    _setup(root)
    procs = [_spawn(root, f"w{k}", 250) for k in range(4)]
    for p in procs:
        _out, err = p.communicate(timeout=120)
        assert p.returncode == 0, err
    with CaseStore.open(root) as s:
        events = s.custody_events("C-1/1")
        report = s.verify()
    written = [e.note for e in events if e.note and e.note[0] == "w"]
    expected = {f"w{k}-{i}" for k in range(4) for i in range(250)}
    print(
        f"concurrent writers: 4 x 250 = {len(expected)} events written, "
        f"{len(set(written))} found, chain length {len(events)}, verify ok={report.ok}"
    )
    # 4 processes x 250 events each, set by this test
    assert len(written) == 1000 and set(written) == expected
    assert report.ok, report.first_break
    # each writer's own events keep their order in the shared chain
    for k in range(4):
        mine = [int(n.split("-")[1]) for n in written if n.startswith(f"w{k}-")]
        assert mine == sorted(mine)


@pytest.mark.slow
def test_sigkill_mid_write_leaves_valid_store(tmp_path):
    root = tmp_path / "store"
    _setup(root)
    rng = random.Random(20261202)
    trials = 24
    confirmed_total = found_total = 0
    for trial in range(trials):
        p = _spawn(root, f"k{trial}", 10_000, seed=trial)
        assert p.stdout.readline().strip() == "ready"
        time.sleep(rng.uniform(0.0, 0.25))
        p.send_signal(signal.SIGKILL)
        out, _ = p.communicate(timeout=30)
        confirmed = [ln.split()[1] for ln in out.splitlines() if ln.startswith("ok ")]
        notes = _notes(root)
        mine = [n for n in notes if n.startswith(f"k{trial}-") and "measurement" not in n]
        measured = [n for n in notes if "measurement recorded" in n and f"k{trial}-" in n]
        found = {n for n in mine} | {n.split(": ")[1].split(".bin")[0] for n in measured}
        # every write reported as committed is present (durability of a commit)
        assert set(confirmed) <= found
        # what is present is a gap-free prefix of the writer's sequence
        idx = sorted(int(n.split("-")[1]) for n in found)
        assert idx == list(range(len(idx)))
        confirmed_total += len(confirmed)
        found_total += len(found)
    with CaseStore.open(root) as s:
        report = s.verify()
    print(
        f"SIGKILL trials: {trials}, writes confirmed before kill: {confirmed_total}, "
        f"present afterwards: {found_total}, verify ok={report.ok}"
    )
    assert report.ok, report.first_break
