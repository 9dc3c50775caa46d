"""Matching benchmarks: prints figures, asserts nothing.

Run: ``uv run --extra test python benchmarks/bench_match.py [--before REF]``

1. Candidate search, 10,000 peaks against the whole optical set, beside a
   pure-Python loop (bisect per peak) and pandas ``merge_asof`` (nearest only).
2. The full engine (evidence passes, temperature, warnings) on the same peaks,
   and on a 5,000-line dense absorption spectrum, each beside the PREVIOUS
   engine (the code and reference data of commit ``BASELINE_COMMIT``, before
   issue 9, extracted with ``git archive`` into a temporary folder and run in
   a subprocess on the same peaks).
3. ``workbench match`` end to end on a 20,000-point spectrum (a subprocess),
   and whether the web front end was imported; then on the invented demo
   LIBS spectrum (``paint_chip``).

``--before REF`` (a commit or branch, e.g. the main branch before a speed-up)
adds, beside every figure of 2 and 3, the same measurement with the code of
REF, extracted the same way, so that before and after come from one run on
one (possibly shared, busy) machine. Engine figures are the best of 5 runs,
wall time and CPU time (``time.process_time``, less disturbed by other work
on the machine); the load average is printed at start and end.
"""

from __future__ import annotations

import argparse
import bisect
import contextlib
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
import polars as pl

from workbench.datamodel import PeakList, Spectrum
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
from workbench.matching.candidates import find_candidates
from workbench.matching.engine import build_index
from workbench.physics.synth import synthetic_spectrum
from workbench.refdata import load_set

#: The engine before issue 9 (the baseline printed beside the current one).
BASELINE_COMMIT = "598942b"
ROOT = Path(__file__).resolve().parents[1]

_TIMER = """
import sys, time, numpy as np, polars as pl
import workbench
assert not workbench.__file__.startswith(sys.argv[2]), workbench.__file__
from workbench.datamodel import PeakList, Spectrum
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
from workbench.refdata import load_set
d = np.load(sys.argv[1])
optical = load_set("optical")
peaks = PeakList(pl.DataFrame({"wavelength_nm": d["x"], "intensity": d["i"]}),
                 "wavelength", "air", mode=str(d["mode"]))
kw = {"mode": str(d["mode"])}
if float(d["R"]) > 0:
    kw["tolerance"] = ToleranceSpec("resolving_power", float(d["R"]))
params = MatchParameters(**kw)
match_peaks(peaks, [optical], params)
walls, cpus = [], []
for _ in range(5):
    t0, c0 = time.perf_counter(), time.process_time()
    match_peaks(peaks, [optical], params)
    walls.append(time.perf_counter() - t0)
    cpus.append(time.process_time() - c0)
print("SECONDS", min(walls))
print("CPU", min(cpus))
res = match_peaks(peaks, [optical], params)
best = min(
    (lambda t0: (res.report(), time.perf_counter() - t0)[1])(time.perf_counter())
    for _ in range(3))
print("REPORT", best)
"""


@contextlib.contextmanager
def extracted(commit: str):
    """The code and reference data of ``commit`` in a temporary folder (None without git)."""
    with tempfile.TemporaryDirectory() as d:
        tar = subprocess.run(
            ["git", "-C", str(ROOT), "archive", commit, "workbench", "reference_sets"],
            capture_output=True,
            check=False,
        )
        if tar.returncode:
            yield None
            return
        subprocess.run(["tar", "-x", "-C", d], input=tar.stdout, check=True)
        yield Path(d)


def _env_for(tree: Path) -> dict[str, str]:
    # cwd = the extracted tree, so that "import workbench" finds that code and
    # not the working copy; it reads the reference data of its own commit
    # (the current sets may have columns an old commit predates).
    return os.environ | {
        "PYTHONPATH": str(tree),
        "PYTHONWARNINGS": "ignore",
        "WORKBENCH_REFERENCE_SETS": str(tree / "reference_sets"),
    }


def old_engine_seconds(
    x, inten, mode: str, R: float, tree: Path | None
) -> tuple[float, float, float] | None:
    """Engine, report and engine CPU seconds of the code in ``tree`` (None without it).

    Best of 5 (engine) and 3 (report) runs on the same peaks; CPU time
    (``time.process_time``) suffers less than wall time from other work on
    a shared machine.
    """
    if tree is None:
        return None
    data = tree / "in.npz"
    np.savez(data, x=x, i=inten, mode=mode, R=R)
    out = subprocess.run(
        [sys.executable, "-c", _TIMER, str(data), str(ROOT)],
        capture_output=True,
        text=True,
        cwd=tree,
        env=_env_for(tree),
        check=True,
    ).stdout
    lines = out.splitlines()
    engine = float(next(ln for ln in lines if ln.startswith("SECONDS")).split()[1])
    report = float(next(ln for ln in lines if ln.startswith("REPORT")).split()[1])
    cpu = float(next(ln for ln in lines if ln.startswith("CPU")).split()[1])
    return engine, report, cpu


def _ms(t: tuple[float, float, float] | None, label: str) -> str:
    if not t:
        return f"{label} n/a"
    return f"{label} {t[0] * 1e3:.0f} ms, CPU {t[2] * 1e3:.0f} ms (+ report {t[1] * 1e3:.0f} ms)"


def cli_seconds(args: list[str], tree: Path | None, cwd: Path) -> tuple[float, float, str]:
    """Wall time of ``workbench match`` in a fresh interpreter, time inside main, streamlit?"""
    code = (
        "import sys, time; t=time.perf_counter(); from workbench.cli import main; "
        f"rc = main({args!r}); "
        "print('ELAPSED', time.perf_counter()-t); "
        "print('STREAMLIT_IMPORTED', 'streamlit' in sys.modules)"
    )
    env = _env_for(tree) if tree else os.environ | {"PYTHONWARNINGS": "ignore"}
    t0 = time.perf_counter()
    out = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        env=env,
        cwd=tree or cwd,
        check=True,
    ).stdout
    wall = time.perf_counter() - t0
    inner = next(ln for ln in out.splitlines() if ln.startswith("ELAPSED")).split()[1]
    imported = next(ln for ln in out.splitlines() if ln.startswith("STREAMLIT")).split()[1]
    return wall, float(inner), imported


def dense_absorption_peaks(optical, n_lines: int = 5000) -> PeakList:
    """A dense absorption spectrum: the 5,000 strongest Fe I/Ti I/Cr I/Ni I lines at 5800 K.

    Synthesised (invented) at R = 20,000 over 380–700 nm, then the product's peak
    finding in absorption mode.
    """
    from workbench.matching.expected import expected_strengths
    from workbench.peaks import find_peaks

    index = build_index([optical], "wavelength", "air")
    rng_nm = (380.0, 700.0)
    in_range = (index.position >= rng_nm[0]) & (index.position <= rng_nm[1])
    e = np.nan_to_num(expected_strengths(index, 5800.0, "absorption", in_range))
    names = np.array(index.species_names, dtype=object)[index.species]
    pick = in_range & np.isin(names, ["Fe I", "Ti I", "Cr I", "Ni I"])
    idx = np.flatnonzero(pick)
    idx = idx[np.argsort(-e[idx])[:n_lines]]
    pos = index.position[idx]
    depth = 0.6 * (e[idx] / e[idx].max()) ** 0.3  # compressed, as saturated lines are
    R = 20_000.0
    lines = synthetic_spectrum(
        pos,
        depth * pos / R * 1.0645,
        medium="air",
        x_range=rng_nm,
        n_points=200_000,
        resolving_power=R,
        noise_sigma=0.002,
        seed=20261202,
    )
    # Absorption: a flat continuum of 1 minus the (invented) line profiles.
    spec = Spectrum(lines.x, 1.0 - lines.y, "wavelength", "air")
    return find_peaks(spec, mode="absorption")


def best_of(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def best_cpu_of(fn, repeat=5) -> tuple[float, float]:
    """Best wall and best CPU seconds of ``fn`` over ``repeat`` runs."""
    walls, cpus = [], []
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        fn()
        walls.append(time.perf_counter() - t0)
        cpus.append(time.process_time() - c0)
    return min(walls), min(cpus)


@contextlib.contextmanager
def working_copy():
    """The working copy's code and reference data in a temporary folder.

    With ``--before``, the current engine is also timed the way REF is (a
    fresh subprocess on that copy): in this process it runs after the
    candidate-search section, and it measured 3 % (engine) and 16 %
    (report) slower there than in a subprocess, the same code both times
    (stop 31, ``--before HEAD``).
    """
    with tempfile.TemporaryDirectory() as d:
        for part in ("workbench", "reference_sets"):
            shutil.copytree(
                ROOT / part, Path(d) / part, ignore=shutil.ignore_patterns("__pycache__")
            )
        yield Path(d)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--before", help="also time the code of this commit or branch")
    args = ap.parse_args()
    with contextlib.ExitStack() as stack:
        base = stack.enter_context(extracted(BASELINE_COMMIT))
        before = stack.enter_context(extracted(args.before)) if args.before else None
        global _CURRENT
        _CURRENT = stack.enter_context(working_copy()) if args.before else None
        run(base, before, args.before)


#: The working copy, extracted like ``--before`` (set by :func:`main`).
_CURRENT: Path | None = None


def run(base: Path | None, before: Path | None, before_ref: str | None) -> None:
    """All measurements (module docstring); ``before`` adds the REF figures."""
    print(f"load average at start: {', '.join(f'{v:.2f}' for v in os.getloadavg())}")
    optical = load_set("optical")
    index = build_index([optical], "wavelength", "air")
    ref = index.position
    rng = np.random.default_rng(20261202)
    obs = np.sort(rng.uniform(200.0, 900.0, 10_000))
    tol = obs / 20_000.0
    print(f"reference lines: {ref.size}; observed peaks: {obs.size}; window λ/20000")

    t_vec, pairs = best_of(lambda: find_candidates(obs, tol, ref))

    ref_list = ref.tolist()

    def python_loop():
        out = []
        for i, (x, w) in enumerate(zip(obs.tolist(), tol.tolist(), strict=True)):
            lo = bisect.bisect_left(ref_list, x - w)
            hi = bisect.bisect_right(ref_list, x + w)
            out.extend((i, j) for j in range(lo, hi))
        return out

    t_py, py_pairs = best_of(python_loop, repeat=3)
    assert len(py_pairs) == pairs.size

    left = pd.DataFrame({"x": obs})
    right = pd.DataFrame({"r": ref, "x": ref})
    t_pd, _ = best_of(
        lambda: pd.merge_asof(left, right, on="x", direction="nearest", tolerance=float(tol.max()))
    )
    print(
        f"candidate search (all pairs, {pairs.size} found): numpy {t_vec * 1e3:.2f} ms; "
        f"pure-Python bisect loop {t_py * 1e3:.1f} ms ({t_py / t_vec:.1f}×); "
        f"pandas merge_asof, nearest only {t_pd * 1e3:.2f} ms ({t_pd / t_vec:.1f}×)"
    )

    peaks = PeakList(
        pl.DataFrame({"wavelength_nm": obs, "intensity": rng.lognormal(3.0, 1.0, obs.size)}),
        "wavelength",
        "air",
    )
    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", 20_000.0))
    match_peaks(peaks, [optical], params)  # warm the index cache
    t_full, c_full = best_cpu_of(lambda: match_peaks(peaks, [optical], params))
    res = match_peaks(peaks, [optical], params)
    t_rep, _ = best_of(lambda: res.report(), repeat=3)
    t_old = old_engine_seconds(obs, peaks.intensities, "emission", 20_000.0, base)
    txt = _ms(t_old, f"previous engine ({BASELINE_COMMIT})")
    if before_ref:
        t_bef = old_engine_seconds(obs, peaks.intensities, "emission", 20_000.0, before)
        t_cur = old_engine_seconds(obs, peaks.intensities, "emission", 20_000.0, _CURRENT)
        txt = (
            _ms(t_cur, "this code in a subprocess like REF")
            + "; "
            + _ms(t_bef, f"before ({before_ref})")
            + "; "
            + txt
        )
    print(
        f"full engine on 10,000 peaks: {t_full * 1e3:.0f} ms, CPU {c_full * 1e3:.0f} ms "
        f"(+ report {t_rep * 1e3:.0f} ms); " + txt
    )

    dense = dense_absorption_peaks(optical)
    p_abs = MatchParameters(mode="absorption")
    match_peaks(dense, [optical], p_abs)
    t_abs, c_abs = best_cpu_of(lambda: match_peaks(dense, [optical], p_abs))
    # The old engine gets the same peak table (positions, depths); FWHM left out
    # so both use the same R = 20,000 window.
    p_abs_r = MatchParameters(
        mode="absorption", tolerance=ToleranceSpec("resolving_power", 20_000.0)
    )
    t_abs_r, c_abs_r = best_cpu_of(lambda: match_peaks(dense, [optical], p_abs_r))
    # The table the older engines get (positions and depths only), for a like
    # for like figure beside theirs.
    bare = PeakList(
        pl.DataFrame({"wavelength_nm": dense.positions, "intensity": dense.intensities}),
        "wavelength",
        "air",
        mode="absorption",
    )
    t_bare, c_bare = best_cpu_of(lambda: match_peaks(bare, [optical], p_abs_r))
    t_abs_old = old_engine_seconds(dense.positions, dense.intensities, "absorption", 20_000.0, base)
    txt = _ms(t_abs_old, f"previous engine ({BASELINE_COMMIT}, λ/20000)")
    if before_ref:
        t_bef = old_engine_seconds(
            dense.positions, dense.intensities, "absorption", 20_000.0, before
        )
        t_cur = old_engine_seconds(
            dense.positions, dense.intensities, "absorption", 20_000.0, _CURRENT
        )
        txt = (
            _ms(t_cur, "this code in a subprocess like REF, λ/20000")
            + "; "
            + _ms(t_bef, f"before ({before_ref}, λ/20000)")
            + "; "
            + txt
        )
    print(
        f"dense absorption spectrum ({dense.table.height} dips from 5,000 lines): "
        f"{t_abs * 1e3:.0f} ms, CPU {c_abs * 1e3:.0f} ms (auto window from widths), "
        f"{t_abs_r * 1e3:.0f} ms, CPU {c_abs_r * 1e3:.0f} ms (λ/20000); "
        f"positions and depths only, λ/20000: {t_bare * 1e3:.0f} ms, CPU {c_bare * 1e3:.0f} ms; "
        + txt
    )

    # CLI end to end on a 20,000-point spectrum (invented lines).
    pos = np.sort(rng.uniform(300.0, 500.0, 150))
    spec = synthetic_spectrum(
        pos,
        rng.uniform(0.5, 5.0, pos.size) * 0.03,
        x_range=(300.0, 500.0),
        n_points=20_000,
        resolving_power=5000,
        noise_sigma=0.01,
        seed=1,
    )
    with tempfile.TemporaryDirectory() as d:
        f = Path(d) / "spectrum.csv"
        f.write_text(
            "# medium: air\nwavelength (nm),intensity\n"
            + "".join(f"{a:.5f},{b:.5f}\n" for a, b in zip(spec.x, spec.y, strict=True))
        )
        jfile = str(Path(d) / "r.json")
        wall, inner, imported = cli_seconds(["match", str(f), "--json", jfile], None, ROOT)
        txt = ""
        if before_ref:
            w_b, i_b, _ = cli_seconds(["match", str(f), "--json", jfile], before, ROOT)
            txt = f"; before ({before_ref}) {w_b:.2f} s wall ({i_b:.2f} s inside main)"
        print(
            f"workbench match, 20,000-point spectrum: {wall:.2f} s wall incl. interpreter start "
            f"({inner:.2f} s inside main); streamlit imported: {imported}{txt}"
        )
        # The invented demo LIBS spectrum (issue 14: the whole command within 1 s).
        from workbench.demo import SCENARIOS, demo_file

        libs = Path(d) / SCENARIOS["paint_chip"].filename
        libs.write_bytes(demo_file("paint_chip"))
        runs = [cli_seconds(["match", str(libs), "--json", jfile], None, ROOT) for _ in range(3)]
        wall, inner = min(r[0] for r in runs), min(r[1] for r in runs)
        txt = ""
        if before_ref:
            runs = [
                cli_seconds(["match", str(libs), "--json", jfile], before, ROOT) for _ in range(3)
            ]
            txt = (
                f"; before ({before_ref}) {min(r[0] for r in runs):.2f} s wall "
                f"({min(r[1] for r in runs):.2f} s inside main)"
            )
        print(
            f"workbench match, demo LIBS spectrum (invented): {wall:.2f} s wall "
            f"({inner:.2f} s inside main), best of 3{txt}"
        )
    print(f"load average at end: {', '.join(f'{v:.2f}' for v in os.getloadavg())}")


if __name__ == "__main__":
    main()
