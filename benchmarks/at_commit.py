"""Run a benchmark script against the code of another commit, for a same-run baseline.

The comparison scripts (``check_identity.py``, ``xrf_confusion.py``,
``absorption_confusion.py``) print the working copy's figures beside those of
``--ref``: :func:`run_at_commit` extracts that commit's code and data with
``git archive`` into a temporary folder, copies the working copy's scripts
into ``bench/`` there (the same measurement on both sides), and runs the
first with ``cwd`` and ``PYTHONPATH`` at the extracted tree and the
reference sets read from it. ``BENCH_REF_ROOT`` tells the script where that
tree is, so that it can check it imported the right code.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
from pathlib import Path

__all__ = ["ROOT", "run_at_commit"]

ROOT = Path(__file__).resolve().parents[1]


def run_at_commit(
    ref: str,
    paths: list[str],
    scripts: list[str],
    args: list[str],
    *,
    working_files: tuple[str, ...] = (),
) -> str:
    """The last line the first of ``scripts`` prints when run on the code of ``ref``.

    Parameters
    ----------
    ref : str
        Commit or branch.
    paths : list of str
        Repository paths to extract from ``ref`` (``workbench`` and
        ``reference_sets`` at least).
    scripts : list of str
        File names in ``benchmarks/`` copied from the working copy; the first
        is run with ``args``.
    working_files : tuple of str
        Repository paths taken from the working copy instead of ``ref``
        (invented test inputs that must be the same on both sides).
    """
    here = Path(__file__).resolve().parent
    with tempfile.TemporaryDirectory() as d:
        tar = subprocess.run(
            ["git", "-C", str(ROOT), "archive", ref, *paths], capture_output=True, check=True
        )
        subprocess.run(["tar", "-x", "-C", d], input=tar.stdout, check=True)
        for f in working_files:
            (Path(d) / f).parent.mkdir(parents=True, exist_ok=True)
            (Path(d) / f).write_bytes((ROOT / f).read_bytes())
        bench = Path(d) / "bench"
        bench.mkdir()
        for f in scripts:
            (bench / f).write_bytes((here / f).read_bytes())
        res = subprocess.run(
            [sys.executable, str(bench / scripts[0]), *args],
            capture_output=True,
            text=True,
            cwd=d,
            env=os.environ
            | {
                "PYTHONPATH": d,
                "PYTHONWARNINGS": "ignore",
                "WORKBENCH_REFERENCE_SETS": str(Path(d) / "reference_sets"),
                "BENCH_REF_ROOT": d,
            },
            check=False,
        )
        if res.returncode:
            sys.exit(f"the {ref} run failed:\n{res.stderr}")
    return res.stdout.strip().splitlines()[-1]
