"""Baseline (continuum) estimation: asymmetric least squares and SNIP.

ALS
    Eilers & Boelens (2005), "Baseline correction with asymmetric least
    squares smoothing": minimise Σ wᵢ(yᵢ−zᵢ)² + λ Σ(Δ²zᵢ)² with weights
    p above the baseline and 1−p below, re-weighting ``n_iter`` times. The
    system (W + λDᵀD) z = W y is pentadiagonal and is solved with
    :func:`scipy.sparse.linalg.spsolve`. Long spectra (more than
    ``max_points``) are fitted on a decimated copy (block means) and the
    baseline is interpolated back, because the sparse solve over a million
    points takes seconds; ``lam`` is rescaled so the smoothness per unit of x
    stays the same (λ scales with the fourth power of the sample spacing).
SNIP
    Ryan et al. (1988), Nucl. Instrum. Methods B 34, 396: iterated clipping
    vᵢ ← min(vᵢ, (vᵢ₋ₚ + vᵢ₊ₚ)/2) for p = 1 … m, optionally on the
    log-log-sqrt (LLS) transformed signal v = ln(ln(√(y+1)+1)+1), which
    compresses the dynamic range of counting spectra. Each pass is one
    vectorised numpy operation over a block of 64 Ki points (with a halo
    that makes the result identical to passes over the whole array; long
    spectra share their blocks among a few threads); the Python loop runs
    over the blocks and the m window sizes only. The default for long
    spectra.

SNIP clips to the *lower envelope* of the noise, so its baseline sits a
little below the noise centre. :func:`estimate_baseline` therefore runs SNIP
on a 5-point boxcar-smoothed copy (a less ragged envelope) and then adds the
median residual of the points that are not part of peaks (within ±3σ of the
noise centre, iterated), so that the subtracted signal is centred on zero in
line-free regions (our own correction; common practice, no source).
"""

from __future__ import annotations

import contextvars
import math
import os
import struct

import numpy as np
from numpy.typing import ArrayLike

from workbench.errors import ValueRangeError

__all__ = ["als_baseline", "estimate_baseline", "snip_baseline"]


def als_baseline(
    y: ArrayLike,
    *,
    lam: float = 1e5,
    p: float = 0.01,
    n_iter: int = 10,
    max_points: int = 50_000,
) -> np.ndarray:
    """Asymmetric least-squares baseline (Eilers & Boelens 2005).

    Parameters
    ----------
    y : array_like
        Signal on a uniform (or nearly uniform) grid.
    lam : float
        Smoothness λ (larger is stiffer); 1e2–1e9 in practice.
    p : float
        Asymmetry, 0 < p < 1 (weight of points above the baseline); 0.001–0.1.
    n_iter : int
        Re-weighting iterations.
    max_points : int
        Spectra longer than this are fitted on a block-mean decimated copy
        and the baseline interpolated back.

    Returns
    -------
    numpy.ndarray
        The baseline, same length as ``y``.
    """
    from scipy import sparse
    from scipy.sparse.linalg import spsolve

    arr = np.asarray(y, dtype=np.float64)
    if not 0.0 < p < 1.0:
        raise ValueRangeError(f"ALS asymmetry p={p} is outside (0, 1)", "use e.g. p=0.01")
    if lam <= 0 or n_iter < 1:
        raise ValueRangeError(
            f"ALS needs lam > 0 and n_iter >= 1 (got {lam}, {n_iter})", "use lam=1e5, n_iter=10"
        )
    n = arr.size
    if n < 5:
        return arr.copy()
    if n > max_points:
        factor = int(np.ceil(n / max_points))
        m = n // factor
        coarse = arr[: m * factor].reshape(m, factor).mean(axis=1)
        centres = (np.arange(m) * factor) + (factor - 1) / 2.0
        # λ penalises second differences: at spacing h they scale with h², their squares
        # with h⁴, so the same smoothness in x units needs λ / factor⁴.
        z = als_baseline(coarse, lam=lam / factor**4, p=p, n_iter=n_iter, max_points=max_points)
        return np.interp(np.arange(n, dtype=np.float64), centres, z)
    d = sparse.diags([1.0, -2.0, 1.0], [0, 1, 2], shape=(n - 2, n), format="csc")
    penalty = (lam * (d.T @ d)).tocsc()
    w = np.ones(n)
    z = arr
    for _ in range(n_iter):
        weights = sparse.diags(w, 0, format="csc")
        z = spsolve(weights + penalty, w * arr)
        w_new = np.where(arr > z, p, 1.0 - p)
        if np.array_equal(w_new, w):
            break
        w = w_new
    return np.asarray(z, dtype=np.float64)


def _lls(y: np.ndarray) -> np.ndarray:
    """ln(ln(√(y+1)+1)+1) into a new array (the same operations as the formula, in place)."""
    v = y + 1.0
    np.sqrt(v, out=v)
    v += 1.0
    np.log(v, out=v)
    v += 1.0
    np.log(v, out=v)
    return v


def _lls_inverse(v: np.ndarray) -> np.ndarray:
    """(exp(exp(v)−1)−1)² − 1, overwriting ``v``."""
    np.exp(v, out=v)
    v -= 1.0
    np.exp(v, out=v)
    v -= 1.0
    np.square(v, out=v)
    v -= 1.0
    return v


#: Points per block of the blocked SNIP passes: 64 Ki doubles (512 KiB, with the
#: scratch row 1 MiB) stay in a core's L2 cache through all the passes.
_SNIP_BLOCK = 1 << 16
#: Most threads sharing the SNIP blocks (never more than the machine's cores).
_SNIP_THREADS = 4


def _clip_passes(v: np.ndarray, windows: list[int], buf: np.ndarray) -> None:
    """Ryan's clipping vᵢ ← min(vᵢ, (vᵢ₋ₚ + vᵢ₊ₚ)/2) for each p in turn, in place."""
    n = v.size
    for p in windows:
        mid = buf[: n - 2 * p]
        np.add(v[: -2 * p], v[2 * p :], out=mid)
        mid *= 0.5
        np.minimum(v[p:-p], mid, out=v[p:-p])


def _snip_blocks(arr: np.ndarray, windows: list[int], lls: bool, offset: float) -> np.ndarray:
    """Transform, clip and transform back block by block, with identical results.

    After the passes with windows p₁ … pₖ a point depends only on the points
    within Σp of it, so a block extended by that halo on each side (or up to
    an end of the array, where the ends behave as in the whole array) gives
    exactly the whole-array values for the block's own points; the LLS
    transform and its inverse act point by point. Each block stays in cache
    through all the passes instead of the whole array streaming from memory
    once per pass, and the blocks, being independent, are shared among up to
    :data:`_SNIP_THREADS` threads (numpy releases the GIL inside each pass).
    """
    n = arr.size
    halo = sum(windows)
    spans = [
        (
            start,
            min(start + _SNIP_BLOCK, n),
            max(0, start - halo),
            min(n, start + _SNIP_BLOCK + halo),
        )
        for start in range(0, n, _SNIP_BLOCK)
    ]
    out = np.empty(n)

    def run(span: tuple[int, int, int, int]) -> None:
        start, stop, lo, hi = span
        seg = arr[lo:hi]
        # arr − 0.0 is arr exactly, so the subtraction (a copy) is needed only for an offset.
        v = (_lls(seg - offset if offset else seg)) if lls else seg.copy()
        _clip_passes(v, windows, np.empty(v.size))
        own = v[start - lo : stop - lo]
        if lls:
            _lls_inverse(own)
            own += offset
        out[start:stop] = own

    workers = min(len(spans), os.cpu_count() or 1, _SNIP_THREADS)
    if workers < 2:
        for span in spans:
            run(span)
        return out
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=workers) as pool:
        # Each task runs in a copy of the caller's context, so np.errstate applies there too.
        futures = [pool.submit(contextvars.copy_context().run, run, span) for span in spans]
        for f in futures:
            f.result()  # re-raises a worker's exception here
    return out


def snip_baseline(
    y: ArrayLike, *, iterations: int = 40, lls: bool = True, decreasing: bool = False
) -> np.ndarray:
    """SNIP baseline (Ryan et al. 1988) with optional LLS transform.

    Parameters
    ----------
    y : array_like
        Signal.
    iterations : int
        Largest clipping half-window m in points; it should exceed the
        half-width at the base of the widest line (2–3 × its FWHM in points).
    lls : bool
        Clip on the log-log-sqrt transformed signal (Ryan et al.). Negative
        values are shifted up by the minimum first and back afterwards.
    decreasing : bool
        Run the window from m down to 1 instead of 1 up to m (Morháč's
        variant, which keeps peak tails better).

    Returns
    -------
    numpy.ndarray
        The baseline, same length as ``y``.
    """
    arr = np.asarray(y, dtype=np.float64)
    if iterations < 1:
        raise ValueRangeError(f"SNIP iterations={iterations} < 1", "use e.g. iterations=40")
    n = arr.size
    m = min(int(iterations), (n - 1) // 2)
    if m < 1:
        return arr.copy()
    offset = min(0.0, float(arr.min())) if lls else 0.0
    windows = list(range(m, 0, -1) if decreasing else range(1, m + 1))
    return _snip_blocks(arr, windows, lls, offset)


def _boxcar5(y: np.ndarray) -> np.ndarray:
    """Five-point moving mean, ends padded with the end values.

    What ``scipy.ndimage.uniform_filter1d(y, 5, mode="nearest")`` computes,
    summed directly (no running sum), without importing scipy.ndimage.
    """
    p = np.pad(y, 2, mode="edge")
    n = y.size
    out = p[0:n] + p[1 : n + 1]  # summed left to right in place, as the formula would
    out += p[2 : n + 2]
    out += p[3 : n + 3]
    out += p[4 : n + 4]
    out /= 5.0
    return out


def estimate_baseline(
    y: np.ndarray,
    method: str | None,
    *,
    snip_iterations: int = 40,
    snip_lls: bool = True,
    als_lam: float = 1e5,
    als_p: float = 0.01,
    als_n_iter: int = 10,
    sigma: float | None = None,
) -> np.ndarray:
    """Baseline by the named method, recentred on the noise in line-free regions.

    Parameters
    ----------
    y : numpy.ndarray
        Signal.
    method : {"snip", "als"} or None
        Method; ``None`` returns zeros.
    snip_iterations, snip_lls : int, bool
        SNIP parameters (see :func:`snip_baseline`).
    als_lam, als_p, als_n_iter : float, float, int
        ALS parameters (see :func:`als_baseline`).
    sigma : float, optional
        Noise σ used to pick line-free points; estimated when omitted.

    Returns
    -------
    numpy.ndarray
        The baseline.
    """
    from workbench.peaks.noise import noise_sigma

    if method is None or method == "none":
        return np.zeros_like(y, dtype=np.float64)
    if method == "snip":
        # Clipping follows the lower envelope of the noise; a short boxcar first
        # makes that envelope (and so the baseline) far less ragged.
        smooth = _boxcar5(np.asarray(y, dtype=np.float64))
        base = snip_baseline(smooth, iterations=snip_iterations, lls=snip_lls)
    elif method == "als":
        base = als_baseline(y, lam=als_lam, p=als_p, n_iter=als_n_iter)
    else:
        raise ValueRangeError(f"unknown baseline method {method!r}", "use 'snip', 'als' or none")
    s = noise_sigma(y) if sigma is None else sigma
    base += _noise_centre(y - base, s)  # base is a fresh array of ours
    return base


def _noise_centre(resid: np.ndarray, s: float) -> float:
    """Median of the residuals within ±3σ of it, iterated (at most 5 rounds).

    Each round takes the median of the points with ``|resid − shift| <= 3σ``
    and makes it the new shift, so the window ends up centred on the noise,
    not on the clipped envelope; a fixed point ends the rounds early.
    ``resid`` is the caller's scratch array: it is sorted in place (every step
    below depends on its values, not their order).
    """
    from workbench.peaks.noise import median_overwrite

    if not s > 0:  # no usable σ (a noise-free signal): every point counts
        return float(np.median(resid)) if resid.size >= 10 else 0.0
    t = 3.0 * s
    # One sort replaces a mask, a copy and a selection per round: the points with
    # |r − shift| <= t (computed as numpy computes it) are a contiguous run of the
    # sorted residuals, so each round's median is an element of that run.
    resid.sort()  # NaN sorts last and is never inside a (finite) band
    ordered = resid
    shift = 0.0
    for _ in range(5):
        band = _band(shift, t)
        if band is not None:
            i0 = int(np.searchsorted(ordered, band[0], side="left"))
            count = int(np.searchsorted(ordered, band[1], side="right")) - i0
            if count < 10:
                break
            k = i0 + count // 2
            new_shift = (
                float(ordered[k]) if count % 2 else float((ordered[k - 1] + ordered[k]) / 2.0)
            )
        else:  # bounds not found (|shift| or t near overflow): mask the residuals
            quiet = np.abs(resid - shift) <= t
            if np.count_nonzero(quiet) < 10:
                break
            new_shift = median_overwrite(resid[quiet])  # a fresh copy; NaN fails <=
        if new_shift == shift:  # a fixed point: further rounds would repeat it exactly
            break
        shift = new_shift
    return shift


def _band(shift: float, t: float) -> tuple[float, float] | None:
    """Smallest and largest double r with ``|r − shift| <= t`` in floating point.

    The rounded difference r − shift never decreases as r grows, so the
    doubles passing the test form one interval. Its ends are found by
    bisection over the doubles in order (their bit patterns as integers),
    testing with the same arithmetic numpy uses (IEEE double subtraction).
    None when shift ± t is not finite.
    """
    if not (math.isfinite(shift - t) and math.isfinite(shift + t)):
        return None
    hi = _last_true(lambda r: r - shift <= t, shift + t)
    below = _last_true(lambda r: r - shift < -t, shift - t)
    if hi is None or below is None:
        return None
    return _from_order(_order(below) + 1), hi


_MAX_ORDER = 0x7FEFFFFFFFFFFFFF  # order of the largest finite double


def _order(x: float) -> int:
    """Position of a double among all doubles (−0.0 and 0.0 share position 0)."""
    (bits,) = struct.unpack("<q", struct.pack("<d", x))
    return bits if bits >= 0 else -(bits & 0x7FFFFFFFFFFFFFFF)


def _from_order(k: int) -> float:
    bits = k if k >= 0 else (-k) | -0x8000000000000000
    return struct.unpack("<d", struct.pack("<q", bits))[0]


def _last_true(pred, start: float) -> float | None:
    """Largest finite double r with pred(r), for pred true up to a point and false above."""
    k = _order(start)
    step = 1
    if pred(start):  # bracket upwards: good = last known true, bad = first known false
        good = k
        while True:
            bad = good + step
            if bad > _MAX_ORDER:
                return None
            if not pred(_from_order(bad)):
                break
            good, step = bad, step * 2
    else:
        bad = k
        while True:
            good = bad - step
            if good < -_MAX_ORDER:
                return None
            if pred(_from_order(good)):
                break
            bad, step = good, step * 2
    while bad - good > 1:
        mid = (good + bad) // 2
        if pred(_from_order(mid)):
            good = mid
        else:
            bad = mid
    return _from_order(good)
