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

On an energy axis (X-ray families, whose relative line intensities are
known to about 0.2 dex) a chain is also split where its predicted profile
is resolved (``strength`` given): the lines' Gaussians at the resolution,
summed with their strengths, dip between two maxima below
:data:`RESOLVED_DIP` of the lower one (Rayleigh's criterion, a dip to about
81 % for two equal lines). Chaining alone joins lines through weak ones:
Ba Lβ1 (4828 eV) and Lβ2 (5154 eV), two peaks 1.9 FWHM apart at a 175 eV
detector, were chained by the 1 % Lβ6 (4994 eV) into one group that then
picked whichever of its two peaks lay nearer a line and left the other to
be taken as the sole line of an absent family (Ce Lα at 4839 eV). Optical
chains are not split: a lamp's or plasma's relative intensities scatter by
0.3–1.3 dex, so a dip in the predicted profile need not be one in the
spectrum.

So Kα1 + Kα2 at XRF resolution are one group, a fine-structure doublet below
the resolution is one group, and cross-source duplicates or unmerged
hyperfine/isotope components of one transition (same species, within the
window) collapse into one group at match time, whatever the hygiene of the
reference set.
"""

from __future__ import annotations

import numpy as np

__all__ = ["RESOLVED_DIP", "resolvable_groups"]

#: A chain's predicted profile is resolved where it dips below this part of
#: the lower of two neighbouring maxima (Rayleigh's criterion gives 8/π² ≈
#: 0.81 for two equal lines; common practice).
RESOLVED_DIP: float = 0.81
_GAUSS = 2.0 * np.sqrt(2.0 * np.log(2.0))  # FWHM / σ of a Gaussian


def resolvable_groups(
    species: np.ndarray,
    position: np.ndarray,
    resolution: np.ndarray,
    strength: np.ndarray | None = None,
) -> np.ndarray:
    """Group id per line for lines already sorted by (species, position).

    Parameters
    ----------
    species : numpy.ndarray of int
        Species code per line (sorted, ascending).
    position : numpy.ndarray
        Line position (ascending within each species).
    resolution : numpy.ndarray
        Resolution element (≈ FWHM) at each line's position (axis unit).
    strength : numpy.ndarray, optional
        Predicted strength per line (NaN or 0 where unknown); when given,
        chains are split where their predicted profile is resolved
        (module docstring).

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
        close = np.diff(position) <= np.maximum(resolution[1:], resolution[:-1])
        new[1:] = ~(same_species & close)
    if strength is not None and n > 1:
        _split_resolved(new, position, resolution, strength)
    return np.cumsum(new) - 1


def _split_resolved(
    new: np.ndarray, position: np.ndarray, fwhm: np.ndarray, strength: np.ndarray
) -> None:
    """Mark (in ``new``) where a chain's predicted profile is resolved."""
    first = np.flatnonzero(new)
    last = np.append(first[1:], new.size)
    e = np.nan_to_num(np.asarray(strength, dtype=np.float64))
    for a, b in zip(first.tolist(), last.tolist(), strict=True):
        if b - a < 2 or position[b - 1] - position[a] <= 0.5 * float(np.min(fwhm[a:b])):
            continue  # one line, or all within half a resolution element
        x, w, f = position[a:b], e[a:b], fwhm[a:b]
        if np.count_nonzero(w > 0) < 2:
            continue
        step = float(np.min(f)) / 20.0
        grid = np.arange(x[0] - f[0], x[-1] + f[-1] + step, step)
        sig = f / _GAUSS
        prof = (w[None, :] * np.exp(-0.5 * ((grid[:, None] - x[None, :]) / sig[None, :]) ** 2)).sum(
            axis=1
        )
        d = np.diff(prof)
        peaks = np.flatnonzero((np.append(d, -1.0) < 0) & (np.insert(d, 0, 1.0) > 0))
        if peaks.size < 2:
            continue
        for p, q in zip(peaks[:-1].tolist(), peaks[1:].tolist(), strict=True):
            m = p + int(np.argmin(prof[p : q + 1]))
            if prof[m] < RESOLVED_DIP * min(prof[p], prof[q]):
                # Lines above the dip start a new group.
                cut = a + int(np.searchsorted(x, grid[m]))
                if a < cut < b:
                    new[cut] = True
