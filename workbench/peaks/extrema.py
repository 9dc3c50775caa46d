"""Local maxima, topographic prominence and half-height crossings, vectorised.

The definitions are those of :func:`scipy.signal.find_peaks`,
:func:`scipy.signal.peak_prominences` and :func:`scipy.signal.peak_widths`
(SciPy 1.x documentation), reimplemented here because importing
``scipy.signal`` also imports ``scipy.stats`` and costs over a second at
start-up, more than the whole peak search on a million points:

* a local maximum is a sample higher than its left neighbour and higher
  than the first different sample on its right; a flat top of equal
  samples counts once, at its middle (rounded down); the first and last
  samples are never maxima;
* the prominence of a peak within a window of ``wlen`` samples (odd, centred
  on the peak) is its height above the higher of the two minima found by
  walking left and right from the peak until a higher sample or the
  window's edge; the minima's positions are the peak's bases (the minimum
  nearest the peak when several are equal);
* the width at height ``h`` runs between the points where the signal,
  walking out from the peak (at most to the bases), first falls to ``h``,
  linearly interpolated between samples.

Each walk is done for all peaks at once on a matrix of at most ``wlen // 2 + 1``
samples per peak, in chunks so that memory stays under ~16 MB.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "half_height_crossings",
    "local_maxima",
    "local_maxima_at_least",
    "peak_prominences",
    "range_max",
    "select_peaks",
]

_CHUNK_CELLS = 2_000_000  # samples per walk matrix (16 MB of float64)


def local_maxima(x: np.ndarray) -> np.ndarray:
    """Indices of the local maxima of ``x`` (flat tops at their middle).

    Parameters
    ----------
    x : numpy.ndarray
        Finite 1-D signal.

    Returns
    -------
    numpy.ndarray
        Increasing int64 indices.
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.size
    if n < 3:
        return np.empty(0, dtype=np.int64)
    # Runs of equal samples: start and end index and value of each.
    change = np.flatnonzero(x[1:] != x[:-1]) + 1
    starts = np.concatenate(([0], change))
    ends = np.concatenate((change - 1, [n - 1]))
    v = x[starts]
    if v.size < 3:
        return np.empty(0, dtype=np.int64)
    # A run is a peak when both neighbouring runs are lower; the first and the
    # last run touch the ends of the signal and are never peaks.
    inner = (v[1:-1] > v[:-2]) & (v[1:-1] > v[2:])
    k = np.flatnonzero(inner) + 1
    return ((starts[k] + ends[k]) // 2).astype(np.int64)


def local_maxima_at_least(x: np.ndarray, height: float) -> np.ndarray:
    """``local_maxima(x)`` restricted to the maxima with ``x >= height``, found faster.

    A run of equal samples at or above ``height`` consists of samples at or
    above it, so the runs that can be such maxima are found among those
    samples alone (a few thousand of a million on a line spectrum) instead
    of run-length encoding the whole signal. Same result as
    ``p = local_maxima(x); p[x[p] >= height]``.

    Parameters
    ----------
    x : numpy.ndarray
        Finite 1-D signal.
    height : float
        Minimum height.

    Returns
    -------
    numpy.ndarray
        Increasing int64 indices.
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.size
    if n < 3:
        return np.empty(0, dtype=np.int64)
    c = np.flatnonzero(x >= height)
    if c.size == 0:
        return np.empty(0, dtype=np.int64)
    xc = x[c]
    # Runs of equal samples among the candidates: consecutive indices, same value.
    brk = np.flatnonzero((np.diff(c) != 1) | (xc[1:] != xc[:-1])) + 1
    first = np.concatenate(([0], brk))
    last = np.concatenate((brk - 1, [c.size - 1]))
    starts, ends, v = c[first], c[last], xc[first]
    # A run is a peak when both neighbouring samples (the neighbouring runs' values)
    # are lower; runs touching an end of the signal never are.
    inner = (starts > 0) & (ends < n - 1)
    starts, ends, v = starts[inner], ends[inner], v[inner]
    peak = (x[starts - 1] < v) & (x[ends + 1] < v)
    return ((starts[peak] + ends[peak]) // 2).astype(np.int64)


def _walk(
    x: np.ndarray, peaks: np.ndarray, limit: np.ndarray, step: int, stop_above: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """From each peak walk ``step`` (-1 or +1) up to ``limit`` samples while x <= stop_above.

    Returns the minimum met on the way and its index (nearest the peak on ties).
    """
    n = x.size
    mins = np.empty(peaks.size)
    where = np.empty(peaks.size, dtype=np.int64)
    span = int(limit.max(initial=0)) + 1
    rows = max(1, _CHUNK_CELLS // span)
    offsets = np.arange(span, dtype=np.int64)
    for a in range(0, peaks.size, rows):
        p = peaks[a : a + rows]
        lim = limit[a : a + rows]
        idx = p[:, None] + step * offsets[None, :]
        inside = offsets[None, :] <= lim[:, None]
        vals = x[np.clip(idx, 0, n - 1)]
        higher = (vals > stop_above[a : a + rows, None]) & inside
        # Samples from the peak up to (not including) the first higher one.
        first_higher = np.where(higher.any(axis=1), higher.argmax(axis=1), span)
        reach = np.minimum(first_higher - 1, lim)
        usable = offsets[None, :] <= reach[:, None]
        masked = np.where(usable, vals, np.inf)
        j = masked.argmin(axis=1)
        mins[a : a + rows] = masked[np.arange(p.size), j]
        where[a : a + rows] = p + step * j
    return mins, where


def peak_prominences(
    x: np.ndarray, peaks: np.ndarray, wlen: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Prominence of each peak within a centred window of ``wlen`` samples.

    Parameters
    ----------
    x : numpy.ndarray
        Finite 1-D signal.
    peaks : numpy.ndarray
        Indices of local maxima.
    wlen : int
        Window length in samples (>= 3; ``wlen // 2`` samples each side).

    Returns
    -------
    tuple of numpy.ndarray
        Prominences, left bases and right bases.
    """
    x = np.asarray(x, dtype=np.float64)
    peaks = np.asarray(peaks, dtype=np.int64)
    half = int(wlen) // 2
    left_lim = np.minimum(peaks, half)
    right_lim = np.minimum(x.size - 1 - peaks, half)
    top = x[peaks]
    left_min, left_base = _walk(x, peaks, left_lim, -1, top)
    right_min, right_base = _walk(x, peaks, right_lim, +1, top)
    return top - np.maximum(left_min, right_min), left_base, right_base


def select_peaks(x: np.ndarray, height: float, prominence: float, wlen: int) -> dict:
    """Local maxima with ``x >= height`` and prominence ``>= prominence``.

    Parameters
    ----------
    x : numpy.ndarray
        Finite 1-D signal.
    height, prominence : float
        Minimum height and prominence.
    wlen : int
        Prominence window (samples).

    Returns
    -------
    dict
        ``peaks`` (indices) and ``prominences``, ``left_bases``, ``right_bases``.
    """
    peaks = local_maxima_at_least(x, height)
    prom, lb, rb = peak_prominences(x, peaks, wlen)
    keep = prom >= prominence
    return {
        "peaks": peaks[keep],
        "prominences": prom[keep],
        "left_bases": lb[keep],
        "right_bases": rb[keep],
    }


def _crossing(
    x: np.ndarray, peaks: np.ndarray, limit: np.ndarray, step: int, level: np.ndarray
) -> np.ndarray:
    n = x.size
    out = np.empty(peaks.size)
    span = int(limit.max(initial=0)) + 1
    rows = max(1, _CHUNK_CELLS // span)
    offsets = np.arange(span, dtype=np.int64)
    for a in range(0, peaks.size, rows):
        p = peaks[a : a + rows]
        lim = limit[a : a + rows]
        lev = level[a : a + rows]
        vals = x[np.clip(p[:, None] + step * offsets[None, :], 0, n - 1)]
        below = (vals <= lev[:, None]) & (offsets[None, :] <= lim[:, None])
        o = np.where(below.any(axis=1), below.argmax(axis=1), lim)
        o = np.minimum(o, lim)
        i = p + step * o
        xi = x[i]
        pos = i.astype(np.float64)
        interp = xi < lev
        # Linear interpolation back towards the peak, to the sample one step in.
        nb = x[np.clip(i - step, 0, n - 1)]
        with np.errstate(divide="ignore", invalid="ignore"):
            frac = np.where(interp, (lev - xi) / (nb - xi), 0.0)
        out[a : a + rows] = pos - step * frac
    return out


def half_height_crossings(
    x: np.ndarray,
    peaks: np.ndarray,
    level: np.ndarray,
    left_bases: np.ndarray,
    right_bases: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Interpolated positions (fractional indices) where ``x`` falls to ``level``.

    Parameters
    ----------
    x : numpy.ndarray
        Finite 1-D signal.
    peaks : numpy.ndarray
        Peak indices.
    level : numpy.ndarray
        Height at which to measure, per peak.
    left_bases, right_bases : numpy.ndarray
        How far each walk may go.

    Returns
    -------
    tuple of numpy.ndarray
        Left and right crossing positions.
    """
    x = np.asarray(x, dtype=np.float64)
    peaks = np.asarray(peaks, dtype=np.int64)
    level = np.asarray(level, dtype=np.float64)
    left = _crossing(x, peaks, peaks - np.asarray(left_bases), -1, level)
    right = _crossing(x, peaks, np.asarray(right_bases) - peaks, +1, level)
    return left, right


def range_max(padded: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Maximum of ``padded[lo:hi]`` per window (−inf for empty windows), vectorised.

    Parameters
    ----------
    padded : numpy.ndarray
        The values, ending with a −inf sentinel so that ``hi`` may equal the
        data length.
    lo, hi : numpy.ndarray of int
        Window bounds (``hi`` exclusive).

    Returns
    -------
    numpy.ndarray
        One maximum per window.
    """
    if lo.size == 0:
        return np.empty(0)
    idx = np.column_stack([lo, hi]).ravel()
    out = np.maximum.reduceat(padded, idx)[::2]
    return np.where(hi > lo, out, -np.inf)
