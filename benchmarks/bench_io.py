"""Whole-process timings of reading, start-up and result writing (issue 14).

Prints figures, asserts nothing. Run::

    uv run --extra test python benchmarks/bench_io.py [--runs 5] [--quick]
        [--peaks-only] [--base-commit 598942b]

Every figure is the median of ``--runs`` whole processes (a fresh Python each
time, so imports count), with its peak resident memory (``ru_maxrss`` of
that one child, from ``os.wait4``), beside its baselines in the same run:

* ``polars``: a bare ``python -c "import polars; polars.read_csv(F)"``;
* ``base``: the same command run on the code of ``--base-commit`` (default:
  the last commit before the polars readers), checked out with
  ``git worktree add --detach`` into a temporary folder and put first on
  ``PYTHONPATH`` (the installed dependencies are shared).

Inputs (invented, generated here with a fixed seed, deleted afterwards): a
1,000,000-point two-column CSV (~21 MB), a 2,000,000-point CSV for the app
reader, a 100,000-point absorption spectrum with ~5,000 dips, and the demo
LIBS spectrum (:func:`workbench.demo.demo_file`).

Bytecode: the children write and read their ``.pyc`` files in a temporary
``PYTHONPYCACHEPREFIX`` (``PYTHONDONTWRITEBYTECODE`` is dropped for them) and
each command runs once unmeasured first, so every measured process loads
compiled modules as an installed package does, instead of compiling the
workbench's sources afresh each time (about 45 ms). ``--peaks-only`` runs
section 1 alone, alternating the bare-polars and ``workbench peaks`` runs so
that a change of machine load falls on both, and prints the load average.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
DEFAULT_BASE = "598942b"


# A tiny launcher spawns the measured command: a child forked straight from this
# (large) process would report this process's memory as its own peak, because
# Linux carries the high-water mark across exec.
_LAUNCHER = (
    "import os, sys, time\n"
    "t = time.perf_counter()\n"
    "fa = [(os.POSIX_SPAWN_OPEN, 1, os.devnull, os.O_WRONLY, 0)]\n"
    "pid = os.posix_spawn(sys.argv[1], sys.argv[1:], os.environ, file_actions=fa)\n"
    "_, status, usage = os.wait4(pid, 0)\n"
    "print(time.perf_counter() - t, usage.ru_maxrss, os.waitstatus_to_exitcode(status),\n"
    "      usage.ru_utime + usage.ru_stime)\n"
)


def run_process(cmd: list[str], env: dict[str, str]) -> tuple[float, float, int, float]:
    """Run one process; return (seconds, peak RSS in MB, exit code, CPU seconds)."""
    # cwd: a neutral folder, since "python -c" puts the working directory first on
    # sys.path, which would shadow PYTHONPATH (and so the baseline's code).
    r = subprocess.run(
        [sys.executable, "-S", "-c", _LAUNCHER, *cmd],
        env=env,
        capture_output=True,
        text=True,
        cwd=tempfile.gettempdir(),
    )
    elapsed, maxrss_kb, code, cpu = r.stdout.split()
    if int(code) != 0:
        print(f"    (exit {code}: {r.stderr.strip()[-300:]})")
    return float(elapsed), int(maxrss_kb) / 1024.0, int(code), float(cpu)


def measure(label: str, cmd: list[str], env: dict[str, str], runs: int) -> float:
    """Print and return the median wall time of ``runs`` processes (after one warm-up)."""
    run_process(cmd, env)  # writes the .pyc files and warms the page cache
    times, mems = [], []
    for _ in range(runs):
        t, m, _, _ = run_process(cmd, env)
        times.append(t)
        mems.append(m)
    med = statistics.median(times)
    print(f"  {label:<46} {med:7.2f} s  (min {min(times):.2f})  peak RSS {max(mems):7.0f} MB")
    return med


def measure_alternating(
    commands: list[tuple[str, list[str], dict[str, str]]], runs: int
) -> list[tuple[float, list[float], float]]:
    """Run the commands in turn ``runs`` times; per command (median, times, peak MB)."""
    for _, cmd, env in commands:
        run_process(cmd, env)  # warm-up: .pyc files and page cache
    times: list[list[float]] = [[] for _ in commands]
    cpus: list[list[float]] = [[] for _ in commands]
    mems: list[float] = [0.0 for _ in commands]
    for _ in range(runs):
        for k, (_, cmd, env) in enumerate(commands):
            t, m, _, c = run_process(cmd, env)
            times[k].append(t)
            cpus[k].append(c)
            mems[k] = max(mems[k], m)
    out = []
    for (label, _, _), ts, cs, mem in zip(commands, times, cpus, mems, strict=True):
        med = statistics.median(ts)
        # CPU time (user + system, all threads) suffers less from a busy machine than
        # wall time; polars' parallel parse makes it exceed wall time when quiet.
        cpu = statistics.median(cs)
        print(
            f"  {label:<46} {med:7.3f} s  (min {min(ts):.3f})  cpu {cpu:.3f} s  "
            f"peak RSS {mem:5.0f} MB"
        )
        out.append((med, ts, mem))
    return out


def load_average() -> str:
    """The 1-minute load average (``os.getloadavg``), for the record."""
    return f"{os.getloadavg()[0]:.2f}"


# Phases of `workbench match` inside one process; the old encoder (commit 598942b's
# recursive converter + json.dumps) runs on the same report as the baseline.
_PHASES = """
import sys, time, json, math
t0 = time.perf_counter()
import numpy as np
from workbench.io import read_any
from workbench.peaks import find_peaks
from workbench.matching import MatchParameters
from workbench.matching.analyse import analyse_peaks
from workbench.matching.report import result_json
t1 = time.perf_counter()
data = read_any(sys.argv[1])
t2 = time.perf_counter()
peaks = find_peaks(data, mode=sys.argv[2])
peaks.extra.setdefault("x_range", (float(data.x[0]), float(data.x[-1])))
t3 = time.perf_counter()
out = analyse_peaks(peaks, None, MatchParameters(mode=sys.argv[2]))
t4 = time.perf_counter()
b = result_json(out.report)
t5 = time.perf_counter()
def old(o):
    if isinstance(o, dict):
        return {str(k): old(v) for k, v in o.items()}
    if isinstance(o, list | tuple):
        return [old(v) for v in o]
    if isinstance(o, np.ndarray):
        return [old(v) for v in o.tolist()]
    if isinstance(o, bool | np.bool_):
        return bool(o)
    if isinstance(o, int | np.integer):
        return int(o)
    if isinstance(o, float | np.floating):
        v = float(o)
        return None if not math.isfinite(v) else float(f"{v:.10g}")
    return o
json.dumps(old(out.report), sort_keys=True, separators=(",", ":"), ensure_ascii=False,
           allow_nan=False).encode()
t6 = time.perf_counter()
print(t1 - t0, t2 - t1, t3 - t2, t4 - t3 - (t5 - t4), t5 - t4, t6 - t5, len(b) / 1e6)
"""


def write_spectrum_csv(path: Path, n: int, seed: int, absorption: bool = False) -> None:
    """Write an invented n-point spectrum (wavelength nm, intensity) as CSV."""
    rng = np.random.default_rng(seed)
    x = np.linspace(200.0, 900.0, n)
    n_lines = 5_000 if absorption else 500
    centres = rng.uniform(201.0, 899.0, n_lines)
    width = 2.5 * (x[1] - x[0])
    idx = np.searchsorted(x, centres)
    if absorption:
        y = np.full(n, 1000.0)
        depth = rng.uniform(0.05, 0.6, n_lines) * 1000.0
        for i, c, a in zip(idx, centres, depth, strict=True):
            sl = slice(max(i - 15, 0), i + 15)
            y[sl] -= a * np.exp(-0.5 * ((x[sl] - c) / width) ** 2)
        y += rng.normal(0.0, 2.0, n)
    else:
        y = 100.0 + 0.05 * (x - 200.0) + rng.normal(0.0, 3.0, n)
        amps = rng.uniform(50.0, 5000.0, n_lines)
        for i, c, a in zip(idx, centres, amps, strict=True):
            sl = slice(max(i - 30, 0), i + 30)
            y[sl] += a * np.exp(-0.5 * ((x[sl] - c) / width) ** 2)
    body = np.char.add(np.char.add(np.char.mod("%.6f", x), ","), np.char.mod("%.4f", y))
    path.write_text("# medium: air\nwavelength (nm),intensity\n" + "\n".join(body) + "\n")


def base_worktree(commit: str, where: Path) -> Path | None:
    """Check out ``commit`` into ``where`` (detached); None when git cannot."""
    r = subprocess.run(
        ["git", "-C", str(REPO), "worktree", "add", "--detach", str(where), commit],
        capture_output=True,
        text=True,
    )
    if r.returncode != 0:
        print(f"(no baseline checkout of {commit}: {r.stderr.strip()})")
        return None
    return where


def peaks_only(
    big: Path, tmp: Path, env_new: dict[str, str], env_old: dict[str, str] | None, runs: int
) -> None:
    """Section 1 alone: bare polars, this branch and the base, in alternation."""
    py = sys.executable
    cli = [py, "-c", "from workbench.cli import main; raise SystemExit(main())"]
    peaks = [*cli, "peaks", str(big), "--json", str(tmp / "p.json")]
    bare = [py, "-c", f"import polars; polars.read_csv({str(big)!r}, comment_prefix='#')"]
    commands = [
        ("python -c 'polars.read_csv(F)' [polars]", bare, env_new),
        ("workbench peaks F --json OUT [this branch]", peaks, env_new),
    ]
    if env_old is not None:
        commands.append(("workbench peaks F --json OUT [base]", peaks, env_old))
    print(
        "\n1. workbench peaks on the 1,000,000-point CSV, runs alternating "
        f"(load average {load_average()})"
    )
    res = measure_alternating(commands, runs)
    (bare_med, bare_ts, _), (new_med, new_ts, _) = res[0], res[1]
    paired = statistics.median(n / b for n, b in zip(new_ts, bare_ts, strict=True))
    line = f"  ratio to bare polars: {new_med / bare_med:.2f}x (paired runs: median {paired:.2f}x)"
    if len(res) > 2:
        line += f"; base: {res[2][0] / bare_med:.2f}x"
    print(line)
    print(f"  load average at the end: {load_average()}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--base-commit", default=DEFAULT_BASE)
    ap.add_argument("--quick", action="store_true", help="skip the old code on large files")
    ap.add_argument(
        "--base-runs", type=int, default=3, help="runs of the (slow) old code on large files"
    )
    ap.add_argument("--peaks-only", action="store_true", help="section 1 alone, runs alternating")
    opts = ap.parse_args()
    runs, base_runs = opts.runs, (0 if opts.quick else opts.base_runs)
    py = sys.executable
    tmp = Path(tempfile.mkdtemp(prefix="bench_io_"))
    env_new = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env_new |= {
        "PYTHONPATH": str(REPO),
        "PYTHONWARNINGS": "ignore",
        "PYTHONPYCACHEPREFIX": str(tmp / "pycache"),
    }
    base = base_worktree(opts.base_commit, tmp / "base")
    env_old = env_new | {"PYTHONPATH": str(base)} if base else None
    try:
        print(f"machine: {os.cpu_count()} cores, python {sys.version.split()[0]}, {runs} runs each")
        print(f"baseline code: {opts.base_commit if base else 'unavailable'}")
        big = tmp / "spectrum_1M.csv"
        write_spectrum_csv(big, 1_000_000, 20261202)
        if opts.peaks_only:
            os.sync()  # see below
            peaks_only(big, tmp, env_new, env_old, runs)
            return
        huge = tmp / "spectrum_2M.csv"
        write_spectrum_csv(huge, 2_000_000, 20261203)
        absorb = tmp / "absorption_100k.csv"
        write_spectrum_csv(absorb, 100_000, 20261204, absorption=True)
        libs = tmp / "demo_libs.csv"
        sys.path.insert(0, str(REPO))
        from workbench.demo import demo_file

        libs.write_bytes(demo_file("paint_chip"))
        # Write the generated inputs out now: otherwise the fsync with which
        # `workbench ... --json OUT` writes its result waits for ~60 MB of them.
        os.sync()
        print(
            f"inputs: 1M-point CSV {big.stat().st_size / 1e6:.1f} MB; 2M-point CSV "
            f"{huge.stat().st_size / 1e6:.1f} MB; 100k absorption CSV "
            f"{absorb.stat().st_size / 1e6:.1f} MB; demo LIBS {libs.stat().st_size / 1e3:.0f} kB"
        )

        def both(label: str, args: list[str], heavy: bool = False) -> tuple[float, float]:
            cmd = [py, "-c", "from workbench.cli import main; raise SystemExit(main())", *args]
            new = measure(f"{label} [this branch]", cmd, env_new, runs)
            old = float("nan")
            if env_old is not None and (runs if not heavy else base_runs):
                old = measure(f"{label} [base]", cmd, env_old, base_runs if heavy else runs)
            return new, old

        print("\n1. workbench peaks on the 1,000,000-point CSV (target <= 2x polars, <= 400 MB)")
        bare = measure(
            "python -c 'polars.read_csv(F)' [polars]",
            [py, "-c", f"import polars; polars.read_csv({str(big)!r}, comment_prefix='#')"],
            env_new,
            runs,
        )
        new, old = both(
            "workbench peaks F --json OUT", ["peaks", str(big), "--json", str(tmp / "p.json")], True
        )
        print(f"  ratio to bare polars: {new / bare:.2f}x (base: {old / bare:.2f}x)")

        print("\n2. start-up (target <= 0.3 s)")
        measure("python -c pass", [py, "-c", "pass"], env_new, runs)
        both("workbench --version", ["--version"])
        both("workbench match --help", ["match", "--help"])

        print("\n3. workbench match (targets: demo LIBS <= 1.0 s; 100k absorption <= 2.0 s)")
        both("match demo LIBS --json OUT", ["match", str(libs), "--json", str(tmp / "m.json")])
        both(
            "match 100k absorption --json OUT",
            ["match", str(absorb), "--mode", "absorption", "--json", str(tmp / "a.json")],
        )

        print("\n4. library reader for the app on the 2,000,000-point CSV (target <= 3 s)")
        code = "import sys; from workbench.io import read_spectrum; read_spectrum(sys.argv[1])"
        measure(
            "python -c 'polars.read_csv(F)' [polars]",
            [py, "-c", f"import polars; polars.read_csv({str(huge)!r}, comment_prefix='#')"],
            env_new,
            runs,
        )
        measure("read_spectrum(F) [this branch]", [py, "-c", code, str(huge)], env_new, runs)
        if env_old is not None and base_runs:
            measure("read_spectrum(F) [base]", [py, "-c", code, str(huge)], env_old, base_runs)
        print("\n5. where a match's time goes (one process each; median of the runs)")
        for label, f, mode in (
            ("demo LIBS", libs, "emission"),
            ("100k absorption", absorb, "absorption"),
        ):
            rows = [
                subprocess.run(
                    [py, "-c", _PHASES, str(f), mode],
                    env=env_new,
                    capture_output=True,
                    text=True,
                    cwd=tempfile.gettempdir(),
                ).stdout.split()
                for _ in range(runs)
            ]
            cols = list(zip(*[[float(v) for v in r] for r in rows if len(r) == 7], strict=True))
            names = ("imports", "read", "find peaks", "engine+report", "JSON", "JSON old", "MB")
            med = {n: statistics.median(c) for n, c in zip(names, cols, strict=True)}
            print(
                f"  {label}: imports {med['imports']:.2f} s, read {med['read']:.3f} s, "
                f"find peaks {med['find peaks']:.3f} s, "
                f"engine+report {med['engine+report']:.2f} s, "
                f"canonical JSON {med['JSON']:.3f} s (old encoder {med['JSON old']:.3f} s) "
                f"for {med['MB']:.1f} MB"
            )
    finally:
        if base is not None:
            subprocess.run(
                ["git", "-C", str(REPO), "worktree", "remove", "--force", str(base)],
                capture_output=True,
            )
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
