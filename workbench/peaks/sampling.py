"""Gaps in a spectrum's sampling: where no line could have been seen.

A reduced spectrum may skip part of its axis: the gap between two detector
chips, masked bad columns or cosmic rays removed as NaN (the reader refuses
NaN; removing those samples leaves a gap), or pieces of spectra joined.
A line inside such a gap, or whose profile a gap's edge cuts, cannot make a
peak, so its absence is no evidence (:mod:`workbench.matching.masking`).

A step between two samples is a gap when it is more than
:data:`GAP_SPACING_FACTOR` times the larger of the median sample spacings
just before and just after it (each over :data:`GAP_CONTEXT` steps). The
larger of the two, so that a change of sampling step is not a gap: the ASTM
G173 sunlight changes from 0.5 nm to 1 nm steps at 400 nm (and from 1 nm to
5 nm at 1700 nm), a ratio of at most 5 on the near side but 1 on the far
side.
"""

from __future__ import annotations

import warnings

import numpy as np

__all__ = ["GAP_CONTEXT", "GAP_SPACING_FACTOR", "sampling_gaps"]

#: A step more than this many times the surrounding spacing is a gap: at the
#: usual two to three samples per resolution element, about one resolution
#: element with no sample, enough to hide a line's peak (common practice, no
#: source).
GAP_SPACING_FACTOR: float = 3.0

#: Steps on each side of a step over which its surrounding spacing is the median.
GAP_CONTEXT: int = 8


def sampling_gaps(x: np.ndarray) -> tuple[tuple[float, float], ...]:
    """The gaps of a sampled axis, as (last sample before, first sample after).

    Parameters
    ----------
    x : numpy.ndarray
        Sample positions, strictly increasing.

    Returns
    -------
    tuple of (float, float)
        One pair per gap, in axis order; empty when the sampling has none.
    """
    x = np.asarray(x, dtype=np.float64)
    if x.size < 3:
        return ()
    dx = np.diff(x)
    k = GAP_CONTEXT
    # Only a step above GAP_SPACING_FACTOR × the smallest step can exceed that
    # factor times a median of steps; the medians are taken for those only.
    suspect = np.flatnonzero(dx > GAP_SPACING_FACTOR * dx.min())
    if suspect.size == 0:
        return ()
    padded = np.concatenate([np.full(k, np.nan), dx, np.full(k, np.nan)])
    windows = np.lib.stride_tricks.sliding_window_view(padded, k)
    # Step i sits at padded[i + k]: the k steps before it start at padded[i],
    # the k after it at padded[i + k + 1].
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # no neighbour on one side
        left = np.nanmedian(windows[suspect], axis=1)
        right = np.nanmedian(windows[suspect + k + 1], axis=1)
    around = np.fmax(left, right)  # NaN only where a side is missing
    gap = np.isfinite(around) & (dx[suspect] > GAP_SPACING_FACTOR * around)
    i = suspect[gap]
    return tuple(zip(x[i].tolist(), x[i + 1].tolist(), strict=True))
