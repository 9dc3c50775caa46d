"""Peak finding on a 1,000,000-point spectrum with ~500 lines.

Prints the time of the full pipeline (baseline + noise + detection +
refinement) for SNIP and ALS, beside a straightforward alternative in the
same run: a pure-Python loop local-maximum search over the same
baseline-subtracted array with the same k·σ height threshold. Run with
``uv run python benchmarks/bench_peaks.py``.
"""

from __future__ import annotations

import time

import numpy as np

from workbench.datamodel import Spectrum
from workbench.peaks import find_peaks, noise_sigma
from workbench.peaks.baseline import estimate_baseline


def make_spectrum(n: int = 1_000_000, n_lines: int = 500, seed: int = 20261202) -> Spectrum:
    rng = np.random.default_rng(seed)
    x = np.linspace(200.0, 900.0, n)
    dx = x[1] - x[0]
    y = 100.0 + 0.05 * (x - 200.0) + 1e-4 * (x - 550.0) ** 2
    centres = np.sort(rng.uniform(201.0, 899.0, n_lines))
    amps = rng.uniform(50.0, 5000.0, n_lines)
    width = 2.0 * dx
    for c, a in zip(centres, amps, strict=True):
        i = int((c - 200.0) / dx)
        sl = slice(max(i - 30, 0), i + 30)
        y[sl] += a * np.exp(-0.5 * ((x[sl] - c) / width) ** 2)
    y += rng.normal(0.0, 3.0, n)
    return Spectrum(x, y, "wavelength", "air")


def python_loop_maxima(s: list[float], threshold: float) -> list[int]:
    out = []
    for i in range(1, len(s) - 1):
        v = s[i]
        if v > s[i - 1] and v >= s[i + 1] and v >= threshold:
            out.append(i)
    return out


def best_of(fn, repeat: int = 3) -> tuple[float, object]:
    best, result = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - t0)
    return best, result


def main() -> None:
    spec = make_spectrum()
    print(f"spectrum: {spec.x.size:,} points, 500 synthetic lines")
    for method in ("snip", "als"):
        t, peaks = best_of(lambda m=method: find_peaks(spec, baseline=m))
        print(f"find_peaks baseline={method}: {t:.3f} s, {peaks.table.height} peaks")
    t_snip, _ = best_of(lambda: find_peaks(spec, baseline="snip"))
    base = estimate_baseline(spec.y, "snip")
    s = spec.y - base
    thr = 5.0 * noise_sigma(s)
    s_list = s.tolist()
    from scipy.signal import find_peaks as scipy_find_peaks

    t_vec, (idx, _) = best_of(lambda: scipy_find_peaks(s, height=thr, prominence=thr, wlen=201))
    print(f"vectorised detection only (scipy find_peaks, same array): {t_vec:.4f} s, {idx.size}")
    from workbench.peaks.extrema import select_peaks

    t_own, own = best_of(lambda: select_peaks(s, thr, thr, 201))
    print(
        f"workbench.peaks.extrema.select_peaks (same array): {t_own:.4f} s, "
        f"{own['peaks'].size} ({t_own / t_vec:.2f}x scipy)"
    )
    t_loop, found = best_of(lambda: python_loop_maxima(s_list, thr), repeat=1)
    print(
        f"pure-Python local-maximum loop (detection only, no baseline/refinement): "
        f"{t_loop:.3f} s, {len(found)} maxima"
    )
    print(f"ratio loop / vectorised detection: {t_loop / t_vec:.1f}x")
    print(f"ratio loop / full vectorised pipeline (snip): {t_loop / t_snip:.2f}x")
    print(f"target: full pipeline under 0.5 s -> {'met' if t_snip < 0.5 else 'NOT met'}")


if __name__ == "__main__":
    main()
