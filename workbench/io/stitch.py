"""Spectra written as several scans in one file: spectrometer channels, stitched.

Multi-channel spectrometers (a LIBS system with one small spectrometer per
band, a spark or ICP instrument with several detectors) often export one
table in which each channel's samples follow the previous channel's: the
position climbs, steps back at the start of the next channel (which overlaps
the previous one by a few to a few hundred samples), and climbs again. The
channels may also be written in any order.

Such a file is read as its scans (:func:`split_scans`): runs of strictly
increasing positions between strict steps back. They are joined
(:func:`join_scans`) at the middle of each overlap, each scan keeping its own
samples on its side of the join, so that no position appears twice and no
sample is interpolated; the note names the scans and the joins. Intensities
are not rescaled: a channel whose sensitivity differs from its neighbour's
shows a step at the join, which the baseline follows as it follows any slow
change.

What is still refused (the file is more likely damaged than stitched; the
caller names the row): a scan shorter than :data:`MIN_SCAN_POINTS` (a row out
of place, or two rows swapped), fewer than :data:`MIN_OVERLAP_POINTS` of a
scan inside its neighbour's range where the two overlap (two swapped rows
make two long runs that overlap by one sample), a scan inside another's
range, and a repeated position (a step of exactly zero).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

__all__ = ["MIN_OVERLAP_POINTS", "MIN_SCAN_POINTS", "Scans", "join_scans", "split_scans"]

#: Fewest samples of one scan (channel). Spectrometer channels hold hundreds
#: to thousands of pixels; 20 keeps a handful of misplaced rows from passing
#: as a channel (common practice, no source).
MIN_SCAN_POINTS: int = 20
#: Fewest samples of each of two overlapping scans inside the overlap.
MIN_OVERLAP_POINTS: int = 3


@dataclass(frozen=True)
class Scans:
    """Start and end (exclusive) row of each scan, in file order, and the joins.

    ``joins`` holds, in order of position, each scan's index with the position
    from which it is kept (``-inf`` for the first).
    """

    starts: np.ndarray
    ends: np.ndarray
    joins: tuple[tuple[int, float], ...]


def split_scans(x: np.ndarray) -> Scans | None:
    """The file's scans, or None when ``x`` is not a sequence of increasing scans.

    Parameters
    ----------
    x : numpy.ndarray
        Finite positions in file order (an axis already turned to increase).

    Returns
    -------
    Scans or None
        The runs of strictly increasing ``x`` between strict steps back, when
        there are at least two, each holds :data:`MIN_SCAN_POINTS` samples,
        no step is zero, and :func:`join_scans` can join them; else None (the
        caller refuses the file, naming the first bad row).
    """
    d = np.diff(x)
    if np.any(d == 0):
        return None
    breaks = np.flatnonzero(d < 0) + 1
    if breaks.size == 0:
        return None
    starts = np.concatenate(([0], breaks))
    ends = np.concatenate((breaks, [x.size]))
    if np.any(ends - starts < MIN_SCAN_POINTS):
        return None
    joins = _joins(x, starts, ends)
    return Scans(starts, ends, tuple(joins)) if joins is not None else None


def _joins(x: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> list[tuple[int, float]] | None:
    """Scan order by first position and the join below each later scan (None if unjoinable)."""
    order = np.argsort(x[starts], kind="stable")
    joins: list[tuple[int, float]] = [(int(order[0]), -np.inf)]
    for a, b in itertools.pairwise(order):
        xa = x[starts[a] : ends[a]]
        xb = x[starts[b] : ends[b]]
        if xb[-1] <= xa[-1]:
            return None  # b lies inside a's range
        if xb[0] >= xa[-1]:
            joins.append((int(b), float(xb[0])))  # no overlap: b starts past a's end
            continue
        inside_a = np.count_nonzero(xa > xb[0])
        inside_b = np.count_nonzero(xb < xa[-1])
        if min(inside_a, inside_b) < MIN_OVERLAP_POINTS:
            return None
        joins.append((int(b), 0.5 * (xb[0] + xa[-1])))
    return joins


def join_scans(
    x: np.ndarray, y: np.ndarray, scans: Scans, unit: str
) -> tuple[np.ndarray, np.ndarray, str]:
    """Join the scans at the middle of each overlap.

    Parameters
    ----------
    x, y : numpy.ndarray
        Positions (as in :func:`split_scans`) and intensities, file order.
    scans : Scans
        From :func:`split_scans`.
    unit : str
        Unit of ``x``, for the note.

    Returns
    -------
    x, y : numpy.ndarray
        Strictly increasing positions and their intensities.
    note : str
        What was joined where.
    """
    joins = scans.joins
    keep_x, keep_y, where = [], [], []
    for k, (s, lo) in enumerate(joins):
        hi = joins[k + 1][1] if k + 1 < len(joins) else np.inf
        xs = x[scans.starts[s] : scans.ends[s]]
        m = (xs >= lo) & (xs < hi)
        keep_x.append(xs[m])
        keep_y.append(y[scans.starts[s] : scans.ends[s]][m])
        if k:
            where.append(f"{lo:.6g} {unit}")
    n = scans.starts.size
    ranges = ", ".join(
        f"{x[a]:.6g}–{x[b - 1]:.6g} {unit}" for a, b in zip(scans.starts, scans.ends, strict=True)
    )
    note = (
        f"the file holds {n} scans (spectrometer channels) written one after another "
        f"({ranges}); joined at {', '.join(where)}, each scan keeping its own samples on "
        "its side of the join (none interpolated, intensities not rescaled)"
    )
    return np.concatenate(keep_x), np.concatenate(keep_y), note
