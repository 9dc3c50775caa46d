"""Vectorised candidate search: every (observed line, reference line) pair within tolerance.

Both arrays are sorted, so the window of each observed line is found with two
``searchsorted`` calls and the pairs are laid out with ``repeat``: the cost is
O((n_obs + n_pairs) · log n_ref) with no Python loop over lines.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["CandidatePairs", "find_candidates"]


@dataclass(frozen=True)
class CandidatePairs:
    """Pairs of observed and reference lines within tolerance.

    Attributes
    ----------
    obs : numpy.ndarray
        Index into the observed lines, ascending.
    ref : numpy.ndarray
        Index into the reference lines.
    delta : numpy.ndarray
        Observed minus reference position (axis unit).
    """

    obs: np.ndarray
    ref: np.ndarray
    delta: np.ndarray

    @property
    def size(self) -> int:
        """Number of pairs."""
        return int(self.obs.size)


def find_candidates(
    observed: np.ndarray, half_window: np.ndarray, reference: np.ndarray
) -> CandidatePairs:
    """Find all reference lines within each observed line's window.

    Parameters
    ----------
    observed : numpy.ndarray
        Observed positions (any order).
    half_window : numpy.ndarray
        Half-window per observed position (same unit).
    reference : numpy.ndarray
        Reference positions, ascending.

    Returns
    -------
    CandidatePairs
        All pairs with ``|observed - reference| <= half_window``.
    """
    obs = np.asarray(observed, dtype=np.float64)
    tol = np.asarray(half_window, dtype=np.float64)
    ref = np.asarray(reference, dtype=np.float64)
    lo = np.searchsorted(ref, obs - tol, side="left")
    hi = np.searchsorted(ref, obs + tol, side="right")
    counts = hi - lo
    total = int(counts.sum())
    obs_idx = np.repeat(np.arange(obs.size), counts)
    starts = np.repeat(lo, counts)
    offsets = np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)
    ref_idx = starts + offsets
    return CandidatePairs(obs=obs_idx, ref=ref_idx, delta=obs[obs_idx] - ref[ref_idx])
