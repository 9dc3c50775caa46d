"""Matching benchmarks: prints figures, asserts nothing.

Run: ``uv run --extra test python benchmarks/bench_match.py``

1. Candidate search, 10,000 peaks against the whole optical set, beside a
   pure-Python loop (bisect per peak) and pandas ``merge_asof`` (nearest only).
2. The full engine (evidence passes, temperature, warnings) on the same peaks.
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

from workbench.datamodel import PeakList
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
from workbench.matching.candidates import find_candidates
from workbench.matching.engine import build_index
from workbench.physics.synth import synthetic_spectrum
from workbench.refdata import load_set


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
    print(f"full engine on 10,000 peaks: {t_full * 1e3:.0f} ms (+ report {t_rep * 1e3:.0f} ms)")

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
