"""Matching benchmarks: prints figures, asserts nothing.

Run: ``uv run --extra test python benchmarks/bench_match.py``

1. Candidate search, 10,000 peaks against the whole optical set, beside a
   pure-Python loop (bisect per peak) and pandas ``merge_asof`` (nearest only).
2. The full engine (evidence passes, temperature, warnings) on the same peaks,
   and on a 5,000-line dense absorption spectrum, each beside the PREVIOUS
   engine (the code and reference data of commit ``BASELINE_COMMIT``, before
   issue 9, extracted with ``git archive`` into a temporary folder and run in
   a subprocess on the same peaks).
3. ``workbench match`` end to end on a 20,000-point spectrum (a subprocess),
   and whether the web front end was imported.
"""

from __future__ import annotations

import bisect
import os
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
best = min(
    (lambda t0: (match_peaks(peaks, [optical], params), time.perf_counter() - t0)[1])(
        time.perf_counter()) for _ in range(3))
print("SECONDS", best)
"""


def old_engine_seconds(x, inten, mode: str, R: float) -> float | None:
    """Time the previous engine on the same peaks (None when git is unavailable)."""
    with tempfile.TemporaryDirectory() as d:
        tar = subprocess.run(
            ["git", "-C", str(ROOT), "archive", BASELINE_COMMIT, "workbench", "reference_sets"],
            capture_output=True,
            check=False,
        )
        if tar.returncode:
            return None
        subprocess.run(["tar", "-x", "-C", d], input=tar.stdout, check=True)
        data = Path(d) / "in.npz"
        np.savez(data, x=x, i=inten, mode=mode, R=R)
        # cwd = the extracted tree, so that "import workbench" finds the old
        # code and not the working copy; the old engine reads the reference
        # data of its own commit (the current sets have a column it predates).
        out = subprocess.run(
            [sys.executable, "-c", _TIMER, str(data), str(ROOT)],
            capture_output=True,
            text=True,
            cwd=d,
            env=os.environ
            | {
                "PYTHONPATH": d,
                "PYTHONWARNINGS": "ignore",
                "WORKBENCH_REFERENCE_SETS": str(Path(d) / "reference_sets"),
            },
            check=True,
        ).stdout
    return float(next(ln for ln in out.splitlines() if ln.startswith("SECONDS")).split()[1])


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


def main() -> None:
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
    t_full, res = best_of(lambda: match_peaks(peaks, [optical], params), repeat=3)
    t_rep, _ = best_of(lambda: res.report(), repeat=3)
    t_old = old_engine_seconds(obs, peaks.intensities, "emission", 20_000.0)
    old_txt = f"{t_old * 1e3:.0f} ms" if t_old is not None else "n/a (no git)"
    print(
        f"full engine on 10,000 peaks: {t_full * 1e3:.0f} ms (+ report {t_rep * 1e3:.0f} ms); "
        f"previous engine ({BASELINE_COMMIT}) {old_txt}"
    )

    dense = dense_absorption_peaks(optical)
    p_abs = MatchParameters(mode="absorption")
    match_peaks(dense, [optical], p_abs)
    t_abs, _ = best_of(lambda: match_peaks(dense, [optical], p_abs), repeat=3)
    # The old engine gets the same peak table (positions, depths); FWHM left out
    # so both use the same R = 20,000 window.
    p_abs_r = MatchParameters(
        mode="absorption", tolerance=ToleranceSpec("resolving_power", 20_000.0)
    )
    t_abs_r, _ = best_of(lambda: match_peaks(dense, [optical], p_abs_r), repeat=3)
    t_abs_old = old_engine_seconds(dense.positions, dense.intensities, "absorption", 20_000.0)
    old_txt = f"{t_abs_old * 1e3:.0f} ms" if t_abs_old is not None else "n/a (no git)"
    print(
        f"dense absorption spectrum ({dense.table.height} dips from 5,000 lines): "
        f"{t_abs * 1e3:.0f} ms (auto window from widths), {t_abs_r * 1e3:.0f} ms (λ/20000); "
        f"previous engine ({BASELINE_COMMIT}, λ/20000) {old_txt}"
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
        code = (
            "import sys, time; t=time.perf_counter(); from workbench.cli import main; "
            f"rc = main(['match', {str(f)!r}, '--json', {str(Path(d) / 'r.json')!r}]); "
            "print('ELAPSED', time.perf_counter()-t); "
            "print('STREAMLIT_IMPORTED', 'streamlit' in sys.modules)"
        )
        t0 = time.perf_counter()
        out = subprocess.run(
            [sys.executable, "-c", code],
            capture_output=True,
            text=True,
            env=os.environ | {"PYTHONWARNINGS": "ignore"},
            check=True,
        ).stdout
        wall = time.perf_counter() - t0
    inner = next(ln for ln in out.splitlines() if ln.startswith("ELAPSED")).split()[1]
    imported = next(ln for ln in out.splitlines() if ln.startswith("STREAMLIT")).split()[1]
    print(
        f"workbench match, 20,000-point spectrum: {wall:.2f} s wall incl. interpreter start "
        f"({float(inner):.2f} s inside main); streamlit imported: {imported}"
    )


if __name__ == "__main__":
    main()
