"""Groups that may hide in another peak: *masked* when missing, *crowded* when found.

A group that should be seen (:mod:`workbench.matching.evidence`) but has no
peak in its window counts against its species, unless a peak at least as
strong as its prediction lies close enough for the line to hide in it:

* **X-ray**: any peak within three half-windows of the group (its own window
  included: an artefact set aside there is such a peak) masks a missing
  group.
* **Optical**: a peak within three half-windows but *outside* the group's
  own window makes the group *crowded* when found and *masked* when missing;
  both are left out of the chance test alike. Masking only the unfound ones
  left the chance test with the hits alone: in a dense spectrum nearly
  every unfound group is masked (10,000 random peaks gave 43 species
  "established").
* **Optical, set-aside peaks**: a peak set aside (a band wider than
  ``BAND_WIDTH_FACTOR`` × the median width, an artefact, one the analyst
  excluded) is never matched, so a line inside its own window could never
  be found there; where that peak is at least as strong as the prediction,
  the missing group is masked too. Before stop 30 it counted as missing.
* **Optical, the ends of the axis**: a missing group whose nearest line lies
  within one resolution element (the peaks' ≈ FWHM at its position) of an
  end of the axis searched (the spectrum's range; for a bare peak list the
  outermost peaks' windows) is masked: the end cuts its profile, and a peak
  needs samples on both sides of its maximum. Real cases: Hg I 819.56 nm
  0.05 nm inside the end of the Goodman 1200M6 HgAr lamps, Ar II 422.99 nm
  in 1200M2 FeHeAr, Ne I 537.49 nm in the Kast arc (none changes a class).
* **Optical, gaps in the sampling**: the same inside a part of the axis the
  spectrum's sampling skips (:mod:`workbench.peaks.sampling`: a chip gap,
  samples removed), and within one resolution element of its edges; the
  report says where (warning ``sampling_gaps``). None of the real spectra
  has a gap; with 5 nm of the Goodman 1200M4 Ne lamp removed, three Ne I
  lines there counted missing before.
* **Saturated peaks**: a flat-topped peak's recorded height is only a lower
  bound, so in any of the rules above it may hide a line of any predicted
  height. (No class changes on the real spectra or the invented saturated
  lamps; only the held-out LRIS arc has saturated peaks, and none of them
  changes a result there.)

Masked groups are counted neither way (:mod:`workbench.matching.scoring`).
Constants: three half-windows (common practice for a line's wing at the
instrument's resolution, no source; unchanged since the engine's first
version).
"""

from __future__ import annotations

import numpy as np

from workbench.peaks.extrema import range_max

__all__ = ["WING_HALF_WINDOWS", "hidden_groups", "wing_max"]

#: How far (in half-windows) a stronger peak's wing may hide a line.
WING_HALF_WINDOWS: float = 3.0


def wing_max(
    peak_position: np.ndarray,
    intensity_padded: np.ndarray,
    centre: np.ndarray,
    tolerance: np.ndarray,
    half_span: np.ndarray | float = 0.0,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The strongest peak in each line's wing, outside its own window (optical rule).

    The wing reaches :data:`WING_HALF_WINDOWS` half-windows beyond the
    group's lines; the own window is ``centre ± (tolerance + half_span)``.

    Returns
    -------
    side : numpy.ndarray
        The wing's strongest peak per group (−inf where the wing is empty).
    own_lo, own_hi : numpy.ndarray of int
        The own window's bounds in ``peak_position`` (``hi`` exclusive).
    """
    reach = WING_HALF_WINDOWS * tolerance + half_span
    own = tolerance + half_span
    own_lo = np.searchsorted(peak_position, centre - own, side="left")
    own_hi = np.searchsorted(peak_position, centre + own, side="right")
    lo = np.searchsorted(peak_position, centre - reach, side="left")
    hi = np.searchsorted(peak_position, centre + reach, side="right")
    side = np.maximum(
        range_max(intensity_padded, lo, own_lo), range_max(intensity_padded, own_hi, hi)
    )
    return side, own_lo, own_hi


def hidden_groups(
    peak_position: np.ndarray,
    excluded: np.ndarray | None,
    intensity_padded: np.ndarray,
    candidate: np.ndarray,
    found: np.ndarray,
    predicted: np.ndarray,
    position: np.ndarray,
    tolerance: np.ndarray,
    span: np.ndarray,
    *,
    xray: bool,
    axis_range: tuple[float, float] | None = None,
    gaps: tuple[tuple[float, float], ...] = (),
    peak_resolution: np.ndarray | None = None,
    saturated: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """The masked (missing) and crowded (found) groups of a pass.

    Parameters
    ----------
    peak_position : numpy.ndarray
        The observed peaks' positions, sorted.
    excluded : numpy.ndarray of bool, optional
        Peaks set aside (never matched).
    intensity_padded : numpy.ndarray
        Peak intensities (−inf where unknown) with a −inf sentinel appended.
    candidate : numpy.ndarray of bool
        Groups with a prediction on the peaks' scale that should be seen.
    found : numpy.ndarray of bool
        Groups with a peak in their window.
    predicted : numpy.ndarray
        Predicted peak height per group.
    position, tolerance, span : numpy.ndarray
        Per group: centre, half-window and span of its lines (axis units).
    xray : bool
        Energy axis (any peak within the wing masks) or optical.
    axis_range : tuple of float, optional
        Ends of the axis searched (optical: missing groups within one
        resolution element of an end are masked).
    gaps : tuple of (float, float)
        Parts of the axis the sampling skips (optical: missing groups inside
        one, or within one resolution element of its edges, are masked).
    peak_resolution : numpy.ndarray, optional
        Resolution element (≈ FWHM) at each peak, interpolated to the groups;
        without it the ends mask nothing.
    saturated : numpy.ndarray of bool, optional
        Peaks flagged saturated: their recorded height is only a lower bound,
        so they may hide a line of any predicted height.

    Returns
    -------
    masked, crowded : numpy.ndarray of bool
        One entry per group.
    """
    n = found.size
    if saturated is not None and np.any(saturated):
        intensity_padded = np.where(np.append(saturated, False), np.inf, intensity_padded)
    masked = np.zeros(n, dtype=bool)
    crowded = np.zeros(n, dtype=bool)
    x_obs = peak_position
    if xray:
        cand = candidate & ~found
        if np.any(cand):
            xc = position[cand]
            w = WING_HALF_WINDOWS * tolerance[cand]
            lo = np.searchsorted(x_obs, xc - w, side="left")
            hi = np.searchsorted(x_obs, xc + w, side="right")
            masked[cand] = range_max(intensity_padded, lo, hi) >= predicted[cand]
        return masked, crowded
    cand = candidate
    if not np.any(cand):
        return masked, crowded
    side, own_lo, own_hi = wing_max(
        x_obs, intensity_padded, position[cand], tolerance[cand], span[cand] / 2.0
    )
    near = np.zeros(n, dtype=bool)
    near[cand] = side >= predicted[cand]
    if excluded is not None and np.any(excluded):
        set_aside = np.where(np.append(excluded, False), intensity_padded, -np.inf)
        hidden = np.zeros(n, dtype=bool)
        hidden[cand] = range_max(set_aside, own_lo, own_hi) >= predicted[cand]
        masked |= hidden & ~found
    masked |= near & ~found
    crowded = near & found
    if axis_range is not None and peak_resolution is not None and peak_resolution.size:
        # Within one resolution element of an end of the axis a line's
        # profile is cut: its peak may not be found (a peak needs samples on
        # both sides of its maximum). The resolution at each group is looked
        # up only for the missing groups the largest one could reach: the
        # look-up over every group cost milliseconds a pass.
        first, last = position - span / 2.0, position + span / 2.0
        reach = float(np.max(peak_resolution))
        idx = np.flatnonzero(candidate & ~found & _at_edge(first, last, reach, axis_range, gaps))
        if idx.size:
            res = np.interp(position[idx], x_obs, peak_resolution)
            masked[idx[_at_edge(first[idx], last[idx], res, axis_range, gaps)]] = True
    return masked, crowded


def _at_edge(
    first: np.ndarray,
    last: np.ndarray,
    resolution: np.ndarray | float,
    axis_range: tuple[float, float],
    gaps: tuple[tuple[float, float], ...],
) -> np.ndarray:
    """Groups within ``resolution`` of an end of the axis, or inside or beside a gap."""
    lo, hi = axis_range
    edge = (first - lo < resolution) | (hi - last < resolution)
    for a, b in gaps:
        # Inside a gap, or cut by one of its edges (an inner end of the axis).
        edge |= (last > a - resolution) & (first < b + resolution)
    return edge
