"""How crowded a spectrum is near a line: the peak density behind the chance of a hit.

The chance test (:mod:`workbench.matching.scoring`) asks how likely an absent
species' groups would have a peak in their windows by coincidence. That
chance is set by the density of the *other* sources' peaks near each group,
and a spectrum is rarely crowded evenly: a Th-Ar lamp's thorium lines crowd
in the blue, an iron lamp's in the near UV, a photosphere's dips in the
blue. The spectrum's average density then understates the chance of a hit
where a line-rich absent species' lines lie (Ce, Gd, Nd, Pr: their lines lie
in the same crowded stretches).

* :func:`nearest_neighbour_density` — the density at a point from the
  distance r_m to its m-th nearest peak, (m − 1) / (2 r_m), unbiased for a
  Poisson scatter (m = :data:`LOCAL_DENSITY_NEIGHBOURS`);
* :func:`density_outside_own_peaks` — the same, from the peaks that lie in
  no window of the species under test (emission): under "absent" every peak
  is another source's, and the peaks outside the species' windows measure
  that density without the species' own lines raising it if it is present
  (an iron lamp's Fe I lines *are* the crowd around Fe I's windows; counted,
  they cost Fe its top class in a real Fe-He-Ar lamp, measured at stop 25).
  Peaks in disjoint stretches are independent under a Poisson scatter, so
  leaving the windows out biases nothing.

Both are used only to raise the average density (max(local, average)), so
the estimate's noise (about 1/√(m − 1) ≈ 33 % relative) can only make the
chance test more cautious.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "LOCAL_DENSITY_NEIGHBOURS",
    "NEIGHBOURS_SEARCHED",
    "OWN_TABLE_CELLS",
    "density_outside_own_peaks",
    "nearest_neighbour_density",
]

#: Neighbours of the nearest-neighbour density estimate: a relative error of
#: about 1/√9 ≈ 33 % (common practice, no source).
LOCAL_DENSITY_NEIGHBOURS: int = 10
#: :func:`density_outside_own_peaks` looks for the m-th nearest outside
#: peak among this many nearest peaks on either side (2 m: a stretch where
#: the species' own windows hold half the peaks still measures; where they
#: hold more, the average density is kept, as before stop 25; common
#: practice, no source).
NEIGHBOURS_SEARCHED: int = 2 * LOCAL_DENSITY_NEIGHBOURS
#: :func:`density_outside_own_peaks` builds its peaks × species table in
#: chunks of at most this many cells (20 MB of booleans).
OWN_TABLE_CELLS: int = 20_000_000


def nearest_neighbour_density(positions: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Density of ``positions`` (sorted) around each of ``x``, per axis unit.

    (m − 1) / (2 r_m) with r_m the distance from x to its m-th nearest
    position, m = :data:`LOCAL_DENSITY_NEIGHBOURS`; zero where fewer than m
    positions exist (callers keep the average then).
    """
    m = LOCAL_DENSITY_NEIGHBOURS
    if positions.size < m or x.size == 0:
        return np.zeros(x.shape)
    # The m nearest lie among the m positions on either side of x.
    _, d = _neighbour_distances(positions, x, m)
    return _density_from_distances(d)


def _neighbour_distances(
    positions: np.ndarray, x: np.ndarray, k: int
) -> tuple[np.ndarray, np.ndarray]:
    """Indices of the k positions on either side of each x, and their distances.

    Columns beyond either end repeat an end position; their distance is
    infinite, so that a repeated position is never counted twice.
    """
    offsets = np.searchsorted(positions, x)[:, None] + np.arange(-k, k)[None, :]
    cols = np.clip(offsets, 0, positions.size - 1)
    d = np.abs(positions[cols] - x[:, None])
    d[(offsets < 0) | (offsets >= positions.size)] = np.inf
    return cols, d


def _density_from_distances(d: np.ndarray) -> np.ndarray:
    """(m − 1) / (2 r_m) per row, r_m its m-th smallest distance; zero where there is none."""
    m = LOCAL_DENSITY_NEIGHBOURS
    r_m = np.partition(d, m - 1, axis=1)[:, m - 1]
    with np.errstate(divide="ignore"):
        return np.where(np.isfinite(r_m) & (r_m > 0), (m - 1) / (2.0 * r_m), 0.0)


def density_outside_own_peaks(
    positions: np.ndarray,
    usable: np.ndarray,
    x: np.ndarray,
    owner: np.ndarray,
    own_peak: np.ndarray,
    own_owner: np.ndarray,
    want: np.ndarray,
) -> np.ndarray:
    """Density around each group from the usable peaks that lie in no window of its owner.

    For many species at once: group ``g`` (centre ``x[g]``) belongs to
    species ``owner[g]``; the peaks in that species' windows are given as
    pairs (``own_peak``, ``own_owner``) — the candidate pairs of the
    species' lines, which are exactly the peaks within a window of one of
    them. The density is the nearest-neighbour estimate over the other
    usable peaks, computed only where ``want`` (zero elsewhere).

    The m-th nearest such peak is sought among the
    :data:`NEIGHBOURS_SEARCHED` nearest peaks on either side; where fewer
    than m of them qualify (a stretch the species' own windows cover), the
    result is zero and the caller keeps the average density — the local
    estimate has nothing to measure there. Which peaks a species owns is a
    boolean table of peaks × species, built for at most
    :data:`OWN_TABLE_CELLS` cells at a time (species in chunks).

    Parameters
    ----------
    positions : numpy.ndarray
        Sorted peak positions (all peaks).
    usable : numpy.ndarray
        Per peak: may be counted (not excluded).
    x, owner : numpy.ndarray
        Per group: centre, and a non-negative integer naming its species.
    own_peak, own_owner : numpy.ndarray
        Pairs: peak index, species (same integers as ``owner``).
    want : numpy.ndarray
        Per group: compute the density here.

    Returns
    -------
    numpy.ndarray
        Density per group (per axis unit), zero where not computed.
    """
    m = LOCAL_DENSITY_NEIGHBOURS
    out = np.zeros(x.shape)
    n = positions.size
    sel_all = np.flatnonzero(want)
    if np.count_nonzero(usable) < m or sel_all.size == 0:
        return out
    owners = np.unique(owner[sel_all])
    chunk = max(1, OWN_TABLE_CELLS // max(n, 1))
    for c0 in range(0, owners.size, chunk):
        these = owners[c0 : c0 + chunk]
        sel = sel_all[np.isin(owner[sel_all], these)]
        in_chunk = np.isin(own_owner, these)
        table = np.zeros((n, these.size), dtype=bool)
        table[own_peak[in_chunk], np.searchsorted(these, own_owner[in_chunk])] = True
        cols, d = _neighbour_distances(positions, x[sel], NEIGHBOURS_SEARCHED)
        col_rank = np.searchsorted(these, owner[sel])
        d[~usable[cols] | table[cols, col_rank[:, None]]] = np.inf
        out[sel] = _density_from_distances(d)
    return out
