"""Count fuzz outcomes of the readers on this code or on an older commit.

Prints, asserts nothing. Run::

    uv run --extra test python benchmarks/fuzz_counts.py            # this branch
    uv run --extra test python benchmarks/fuzz_counts.py --base 598942b

The seeded generators of ``tests/fuzz/generators.py`` (the same inputs as
the fuzz tests, seed 20261202) go through ``read_any``, ``read_peak_list``
and ``read_spectrum`` in turn, and 200 of them through ``workbench peaks``
in-process. With ``--base`` the old commit is checked out into a temporary
worktree and run in a child process with its code first on ``sys.path``;
each input gets 20 s (a longer run is counted as a hang) and the child's
address space is capped at 4 GiB (a bigger claim is counted as a traceback).
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import resource
import signal
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def _count(n_each: int) -> None:
    import numpy as np
    from generators import delimited_case, jcamp_case, mutate, parquet_case

    from workbench.cli import main
    from workbench.errors import InputError, WorkbenchError
    from workbench.io import read_any, read_peak_list, read_spectrum

    def alarm(signum, frame):
        raise TimeoutError

    signal.signal(signal.SIGALRM, alarm)
    readers = (read_any, read_peak_list, read_spectrum)
    total = {"inputs": 0, "read": 0, "refused": 0, "traceback": 0, "hang": 0}
    kinds: dict[str, int] = {}
    cli_rc: dict[str, int] = {}
    tmp = Path(tempfile.mkdtemp())
    for label, make, n in (
        ("delimited", delimited_case, 2 * n_each),
        ("jcamp", jcamp_case, n_each),
        ("parquet", parquet_case, n_each // 5),
    ):
        rng = np.random.default_rng(20261202)
        for i in range(n):
            data = make(rng)
            if i % 2:
                data = mutate(data, rng)
            total["inputs"] += 1
            signal.alarm(20)
            try:
                readers[i % 3](data)
                total["read"] += 1
            except InputError:
                total["refused"] += 1
            except TimeoutError:
                total["hang"] += 1
            except BaseException as exc:
                if isinstance(exc, KeyboardInterrupt):
                    raise
                total["traceback"] += 1
                key = f"{label}: {type(exc).__name__}"
                kinds[key] = kinds.get(key, 0) + 1
            finally:
                signal.alarm(0)
            if i < 70:  # the CLI face on the first inputs of each kind
                f = tmp / f"in{i}"
                f.write_bytes(data)
                out = io.StringIO()
                signal.alarm(20)
                try:
                    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(out):
                        rc = str(main(["peaks", str(f)]))
                except TimeoutError:
                    rc = "hang"
                except WorkbenchError:
                    rc = "uncaught WorkbenchError"
                except BaseException as exc:
                    if isinstance(exc, KeyboardInterrupt):
                        raise
                    rc = f"traceback {type(exc).__name__}"
                finally:
                    signal.alarm(0)
                cli_rc[rc] = cli_rc.get(rc, 0) + 1
    print("reader inputs:", total)
    for k, v in sorted(kinds.items()):
        print(f"  traceback kind {k}: {v}")
    print("workbench peaks exit codes:", dict(sorted(cli_rc.items())))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--base", help="commit to run instead of this checkout")
    ap.add_argument("--n", type=int, default=1000, help="inputs per generator (delimited: 2x)")
    ap.add_argument("--child", help=argparse.SUPPRESS)
    opts = ap.parse_args()
    if opts.child:
        # The old code first; the generators of this checkout by their folder.
        sys.path[:0] = [opts.child, str(REPO / "tests" / "fuzz")]
        resource.setrlimit(resource.RLIMIT_AS, (4 * 2**30, 4 * 2**30))
        _count(opts.n)
        return
    if not opts.base:
        sys.path[:0] = [str(REPO), str(REPO / "tests" / "fuzz")]
        _count(opts.n)
        return
    where = Path(tempfile.mkdtemp()) / "base"
    subprocess.run(
        ["git", "-C", str(REPO), "worktree", "add", "--detach", str(where), opts.base],
        check=True,
        capture_output=True,
    )
    try:
        print(f"code of commit {opts.base}")
        env = os.environ | {"PYTHONWARNINGS": "ignore"}
        subprocess.run(
            [sys.executable, __file__, "--child", str(where), "--n", str(opts.n)], env=env
        )
    finally:
        subprocess.run(
            ["git", "-C", str(REPO), "worktree", "remove", "--force", str(where)],
            capture_output=True,
        )


if __name__ == "__main__":
    main()
