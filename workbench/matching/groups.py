"""Resolvable groups: lines of one species that the instrument cannot tell apart count once.

Lines of a species are sorted by position; consecutive lines closer than the
resolution element at that position (the FWHM the tolerance in force stands
for: the measured FWHM for ``fwhm`` windows, x/R for ``resolving_power``,
the half-window itself for ``fixed``, twice the given half-window for
per-peak tolerances) fall into one group, and chains of such lines join.
A chain is easier to hit by chance, so the chance probability uses its span
plus the window (:mod:`workbench.matching.scoring`). A group is one piece
of evidence:

* found when any of its lines has an observed peak in its window;
* its predicted strength is the sum of its lines' strengths (an unresolved
  blend adds up); where some lines have no strength, the known ones are
  summed, and a group with none known is "strength unknown";
* its position is the strength-weighted mean of its lines.

So Kα1 + Kα2 at XRF resolution are one group, a fine-structure doublet below
the resolution is one group, and cross-source duplicates or unmerged
hyperfine/isotope components of one transition (same species, within the
window) collapse into one group at match time, whatever the hygiene of the
reference set.
"""

from __future__ import annotations

import numpy as np

__all__ = ["resolvable_groups"]


def resolvable_groups(
    species: np.ndarray, position: np.ndarray, half_window: np.ndarray
) -> np.ndarray:
    """Group id per line for lines already sorted by (species, position).

    Parameters
    ----------
    species : numpy.ndarray of int
        Species code per line (sorted, ascending).
    position : numpy.ndarray
        Line position (ascending within each species).
    half_window : numpy.ndarray
        Resolution element at each line's position (axis unit).

    Returns
    -------
    numpy.ndarray of int
        Group ids 0..n_groups-1, consecutive, in the order of the lines.
    """
    n = species.size
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    new = np.ones(n, dtype=bool)
    if n > 1:
        same_species = species[1:] == species[:-1]
        close = np.diff(position) <= np.maximum(half_window[1:], half_window[:-1])
        new[1:] = ~(same_species & close)
    return np.cumsum(new) - 1
