"""Split tops: two maxima closer than the instrument can resolve are one line.

A line recorded through an instrument of Gaussian profile (FWHM w, σ =
w / 2√(2 ln 2)) has one maximum. Two lines show two maxima only when they
lie more than 2σ = 0.85 w apart: an equal mixture of two normal
distributions is bimodal exactly when its means differ by more than twice
their common σ, and unequal strengths need more (Robertson & Fryer 1969,
from memory). So two maxima of an emission spectrum closer than
:data:`SPLIT_FRACTION` × the instrument FWHM cannot be two lines; they are
one line whose top is split by a dip:

* **self-reversal**: the cooler outer layer of a LIBS plasma or a lamp
  absorbs the centre of a strong resonance line, which then shows two
  horns around a dip at the line's own wavelength;
* **an over-exposed core in a summed extraction**: pixels of the line's core
  saturate in some detector rows but not in others, and the summed profile
  dips in the middle (the Goodman 1200M4–M7 lamps in
  ``tests/data/realspectra``: Ne I 640.23 nm at 988,000 and 820,000 ADU two
  pixels apart, 0.061 nm, with a dip to 652,000 between, the lines' FWHM
  0.10 nm; measured here);
* noise on a broad, flat top.

Left split, the line was two peaks, neither at its centre, and the second
was taken for another element's line or left unexplained (Er II 579.11 nm
on the Hg I 579.07 nm line, Pr I 614.24 nm on Ne I 614.31 nm in the 1200M4
Hg-Ar-Ne lamp; measured here). Merged, the line is one peak: its centre the
middle of its half-height span (as for a clipped top; the dip of a
self-reversed line lies at the line's own wavelength), its height the higher
maximum, its width the span, flagged ``split_top``. Its height is not a
measure of the line's strength (self-absorbed or over-exposed), so the
matching engine treats it as it treats a saturated peak: found, but left out
of the intensity evidence; unlike a clipped top, whose true height could be
anything, it hides a neighbour's missing line only as far as its measured
height can (:mod:`workbench.matching.masking`).

The instrument FWHM is the median FWHM of the spectrum's peaks (most lines
are narrower than the instrument can show). Optical emission only: an
absorption spectrum's median dip width includes molecular bands, and an
X-ray detector's width grows with energy (its overlaps are settled by the
fit of :mod:`workbench.xray`).
"""

from __future__ import annotations

import numpy as np

from workbench.peaks.extrema import half_height_crossings
from workbench.peaks.noise import median_overwrite

__all__ = ["SPLIT_FRACTION", "merge_split_tops", "split_groups"]

#: Two maxima closer than this × the instrument FWHM are one line: 2σ / FWHM
#: = 2 / (2√(2 ln 2)) (module docstring).
SPLIT_FRACTION: float = float(2.0 / (2.0 * np.sqrt(2.0 * np.log(2.0))))


def split_groups(centre: np.ndarray, fwhm: np.ndarray) -> np.ndarray:
    """Group id per peak (sorted by centre): runs of peaks closer than the split limit share one.

    Parameters
    ----------
    centre : numpy.ndarray
        Peak centres, increasing.
    fwhm : numpy.ndarray
        Their measured FWHM (the instrument's is their median over finite,
        positive values).

    Returns
    -------
    numpy.ndarray
        Non-decreasing int64 group ids, 0-based; equal ids for peaks to merge.
    """
    ok = fwhm[np.isfinite(fwhm) & (fwhm > 0)]
    if centre.size < 3 or ok.size == 0:
        return np.arange(centre.size, dtype=np.int64)
    # ok is a fresh array (boolean indexing): select in it. np.median would
    # load numpy.ma, which `workbench peaks` does not otherwise need.
    limit = SPLIT_FRACTION * median_overwrite(ok)
    new = np.concatenate(([True], np.diff(centre) >= limit))
    return np.cumsum(new) - 1


def merge_split_tops(
    s: np.ndarray,
    x: np.ndarray,
    idx: np.ndarray,
    height: np.ndarray,
    centre: np.ndarray,
    left_ips: np.ndarray,
    right_ips: np.ndarray,
    left_bases: np.ndarray,
    right_bases: np.ndarray,
    grid: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Merge the maxima of each split top into one peak (module docstring).

    Parameters
    ----------
    s : numpy.ndarray
        The signal the heights were measured on (baseline removed).
    x : numpy.ndarray
        The axis.
    idx, height, centre, left_ips, right_ips : numpy.ndarray
        Per peak: sample index, height, centre, half-height crossings
        (fractional indices).
    left_bases, right_bases : numpy.ndarray
        How far each peak's half-height walk may go.
    grid : numpy.ndarray
        The sample indices as floats (``arange(x.size)``), the caller's: a
        million-point spectrum's grid is not made twice.

    Returns
    -------
    tuple of numpy.ndarray
        ``keep`` (index of the peak kept for each line: its highest maximum),
        ``split`` (bool per kept peak), and per kept peak the new ``centre``,
        ``left_ips`` and ``right_ips``.
    """
    gid = split_groups(centre, np.interp(right_ips, grid, x) - np.interp(left_ips, grid, x))
    starts = np.flatnonzero(np.diff(gid, prepend=-1) != 0)
    ends = np.append(starts[1:], gid.size)
    split = ends - starts > 1
    # Single maxima (nearly all) keep what they had; only split tops are redone.
    keep = starts.copy()
    new_centre = centre[starts].copy()
    new_left = left_ips[starts].copy()
    new_right = right_ips[starts].copy()
    for k in np.flatnonzero(split).tolist():
        a, b = int(starts[k]), int(ends[k])
        top = a + int(np.argmax(height[a:b]))
        keep[k] = top
        # The line's half height, measured outwards from its maxima that
        # reach above it (a walk from below the level finds no crossing).
        m = np.arange(a, b)
        half = 0.5 * height[top]
        m = m[s[idx[m]] > half]
        if m.size == 0:
            m = np.array([top])
        level = np.full(m.size, half)
        lo, hi = half_height_crossings(s, idx[m], level, left_bases[m], right_bases[m])
        lo, hi = lo[np.isfinite(lo)], hi[np.isfinite(hi)]
        new_left[k] = float(lo.min()) if lo.size else float(left_ips[top])
        new_right[k] = float(hi.max()) if hi.size else float(right_ips[top])
        # The middle of the half-height span (a clipped top is centred alike).
        ends_x = np.interp([new_left[k], new_right[k]], grid, x)
        new_centre[k] = 0.5 * float(ends_x[0] + ends_x[1])
    return keep, split, new_centre, new_left, new_right
