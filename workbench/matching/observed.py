"""Step 1 of the engine: the peak list checked and made into the observed lines.

Before anything is matched, :func:`workbench.matching.engine.match_peaks`
merges identical rows (:func:`dedupe_peaks`), marks absorption dips wider than
a band (:func:`broad_dips`), turns the peak list into
:class:`~workbench.matching.evidence.ObservedLines` — half-window and
resolution element per peak, saturation, detection limit, excluded
peaks and, on a prepared energy axis, each peak's counting figures from
:mod:`workbench.xray.prepare` (:func:`observed_lines`) — and refuses at once a
search that would compare more than
:data:`~workbench.matching.params.MAX_CANDIDATE_PAIRS` pairs
(:func:`check_pair_budget`).

Apart from :mod:`workbench.matching.engine` because these functions only
check and convert the input and decide nothing: the engine keeps the flow
of a match (passes, temperature and scale re-runs, assignment).
"""

from __future__ import annotations

import numpy as np
import polars as pl

from workbench.datamodel import FWHM_COLUMN, PeakList
from workbench.errors import ValueRangeError
from workbench.matching.evidence import ObservedLines
from workbench.matching.params import BAND_WIDTH_FACTOR, MAX_CANDIDATE_PAIRS, MatchParameters
from workbench.matching.reference import ReferenceIndex

__all__ = [
    "broad_dips",
    "check_pair_budget",
    "dedupe_peaks",
    "observed_lines",
]


def dedupe_peaks(peaks: PeakList) -> tuple[PeakList, int]:
    """Merge rows with identical positions (the most intense kept); return the count merged."""
    x = peaks.positions
    if x.size < 2 or not np.any(x[1:] == x[:-1]):
        return peaks, 0
    inten = np.where(np.isfinite(peaks.intensities), peaks.intensities, -np.inf)
    order = np.lexsort((-inten, x))
    first = np.unique(x[order], return_index=True)[1]
    keep = np.sort(order[first])
    table = peaks.table[keep]
    return (
        PeakList(table, peaks.axis, peaks.medium, peaks.source, peaks.mode, dict(peaks.extra)),
        int(x.size - keep.size),
    )


def observed_lines(
    peaks: PeakList,
    params: MatchParameters,
    tolerance_per_peak: np.ndarray | None = None,
    excluded_peaks: np.ndarray | None = None,
) -> ObservedLines:
    """The peak list as the engine's observed lines: positions, heights, windows, limits.

    Parameters
    ----------
    peaks : PeakList
        The peaks to match (positions checked here: finite and positive).
    params : MatchParameters
        Its tolerance rule gives each peak's half-window and resolution element.
    tolerance_per_peak : numpy.ndarray, optional
        One half-window per peak in the axis unit, instead of the rule's.
    excluded_peaks : numpy.ndarray of int or bool, optional
        Peaks kept in the list but never matched (artefacts: escape, sum,
        diffraction peaks), as indices or a mask.

    Returns
    -------
    ObservedLines
        Raises :class:`ValueRangeError` for an empty list, a bad position, a
        bad per-peak tolerance or a bad exclusion, naming the row or the fix.
    """
    x = peaks.positions
    if x.size == 0:
        raise ValueRangeError("the peak list is empty", "give at least one observed line")
    if not np.all(np.isfinite(x)) or np.any(x <= 0):
        bad = int(np.flatnonzero(~np.isfinite(x) | (x <= 0))[0]) + 1
        raise ValueRangeError(
            f"peak {bad} has a non-positive or non-finite position",
            "remove or correct that row",
        )
    inten = peaks.intensities
    t = peaks.table
    fwhm_col = FWHM_COLUMN[peaks.axis]
    fwhm = (
        t[fwhm_col].cast(pl.Float64).fill_null(np.nan).to_numpy() if fwhm_col in t.columns else None
    )
    spacing = peaks.extra.get("sample_spacing") if isinstance(peaks.extra, dict) else None
    if fwhm is not None and spacing is not None and np.shape(spacing) == fwhm.shape:
        # A line is at least two samples wide: undersampled widths are floored.
        fwhm = np.where(np.isfinite(fwhm), np.maximum(fwhm, 2.0 * np.asarray(spacing)), fwhm)
    spec = params.tolerance.resolve(peaks.axis, fwhm)
    if tolerance_per_peak is not None:
        tol = np.asarray(tolerance_per_peak, dtype=np.float64)
        if tol.shape != x.shape or not np.all(np.isfinite(tol) & (tol > 0)):
            raise ValueRangeError(
                "tolerance_per_peak must give one positive half-window per peak",
                "pass an array as long as the peak list, in the axis unit",
            )
        resolution = 2.0 * tol
    else:
        tol = spec.half_window(x, fwhm)
        # The resolution element (≈ FWHM) the window stands for: lines closer
        # than this are one resolvable group (workbench.matching.groups).
        if spec.kind == "fwhm":
            resolution = tol / spec.value
        elif spec.kind == "resolving_power":
            resolution = tol / spec.factor
        else:
            resolution = tol
    sat = (
        t["saturated"].fill_null(False).to_numpy().astype(bool)
        if "saturated" in t.columns
        else np.zeros(x.size, dtype=bool)
    )
    split = None
    if "split_top" in t.columns:
        # A split top's height is not a measure of strength either
        # (self-reversed or over-exposed core; workbench.peaks.split).
        # A split top that is also clipped counts as clipped (its height is
        # then no bound at all: workbench.matching.masking).
        split = t["split_top"].fill_null(False).to_numpy().astype(bool) & ~sat
        sat = sat | split
    dl: float | None = None
    if np.any(np.isfinite(inten)):
        if "snr" in t.columns:
            snr = t["snr"].cast(pl.Float64).fill_null(np.nan).to_numpy()
            with np.errstate(divide="ignore", invalid="ignore"):
                noise = inten / snr
            noise = noise[np.isfinite(noise) & (noise > 0)]
            if noise.size:
                dl = params.detection_snr * float(np.median(noise))
        if dl is None:
            pos_i = inten[np.isfinite(inten) & (inten > 0)]
            dl = float(pos_i.min()) if pos_i.size else None
    order_ok = np.all(np.diff(x) >= 0)
    if not order_ok:
        raise ValueRangeError(
            "peak positions are not sorted",
            "sort the peak list by position (readers do this; a hand-built list must too)",
        )
    excl = None
    if excluded_peaks is not None:
        excl = np.zeros(x.size, dtype=bool)
        idx = np.asarray(excluded_peaks)
        if idx.dtype == bool:
            if idx.shape != x.shape:
                raise ValueRangeError(
                    "excluded_peaks as a mask must have one entry per peak",
                    "pass a boolean array as long as the peak list, or peak indices",
                )
            excl = idx.copy()
        else:
            if idx.size and (idx.min() < 0 or idx.max() >= x.size):
                raise ValueRangeError(
                    "excluded_peaks holds an index outside the peak list",
                    "give 0-based indices of peaks in the list",
                )
            excl[idx.astype(np.int64)] = True
    curve = None
    nc = peaks.extra.get("noise_curve") if isinstance(peaks.extra, dict) else None
    if dl is not None and nc is not None:
        curve = (np.asarray(nc[0], dtype=float), params.detection_snr * np.asarray(nc[1]))
    signif = height_snr = pos_sigma = None
    if isinstance(peaks.extra, dict) and peaks.extra.get("xray_prepared") and "snr" in t.columns:
        # X-ray: the prepared "snr" is each peak's counting significance and
        # "snr_channel" its height over one channel's counting noise
        # (workbench.xray.prepare): the X-ray evidence terms ask for them.
        signif = t["snr"].cast(pl.Float64).fill_null(np.nan).to_numpy()
        if "snr_channel" in t.columns:
            height_snr = t["snr_channel"].cast(pl.Float64).fill_null(np.nan).to_numpy()
        if "position_sigma_eV" in t.columns:
            pos_sigma = t["position_sigma_eV"].cast(pl.Float64).fill_null(np.nan).to_numpy()
    return ObservedLines(
        significance=signif,
        height_snr=height_snr,
        position_sigma=pos_sigma,
        detection_curve=curve,
        position=x,
        intensity=inten,
        half_window=tol,
        saturated=sat,
        split_top=split,
        detection_limit=dl,
        tolerance=spec,
        excluded=excl,
        resolution=resolution,
    )


def broad_dips(peaks: PeakList, params: MatchParameters) -> np.ndarray | None:
    """Absorption dips wider than BAND_WIDTH_FACTOR × the median FWHM (bands, not lines)."""
    col = FWHM_COLUMN[peaks.axis]
    if params.mode != "absorption" or col not in peaks.table.columns or peaks.table.height < 5:
        return None
    w = peaks.table[col].cast(pl.Float64).fill_null(np.nan).to_numpy()
    ok = np.isfinite(w) & (w > 0)
    if np.sum(ok) < 5:
        return None
    broad = ok & (w > BAND_WIDTH_FACTOR * float(np.median(w[ok])))
    return broad if np.any(broad) else None


def check_pair_budget(obs: ObservedLines, index: ReferenceIndex, in_range: np.ndarray) -> None:
    """Refuse at once a search that would compare more than MAX_CANDIDATE_PAIRS pairs."""
    ref = index.position[in_range]
    lo = np.searchsorted(ref, obs.position - obs.half_window, side="left")
    hi = np.searchsorted(ref, obs.position + obs.half_window, side="right")
    n_pairs = int(np.sum(hi - lo))
    if n_pairs > MAX_CANDIDATE_PAIRS:
        raise ValueRangeError(
            f"the match window is so wide that {n_pairs:,} (peak, reference line) pairs would "
            f"be compared (at most {MAX_CANDIDATE_PAIRS:,})",
            "give a narrower tolerance (e.g. --resolving-power 5000 or --tolerance-nm 0.05), "
            "fewer peaks, or restrict --elements",
        )
