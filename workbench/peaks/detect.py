"""Peak detection with sub-pixel centres, widths, areas and saturation flags.

Pipeline (all vectorised over the spectrum and over the peaks):

1. Baseline (emission) or continuum (absorption) by SNIP or ALS
   (:mod:`workbench.peaks.baseline`). Absorption dips are detected on the
   inverted signal continuum − y (uniform noise) and measured on the
   continuum-normalised depth 1 − y / continuum (when the continuum is
   positive), so their intensity is a fraction of the continuum and their
   area an equivalent width.
2. Noise σ by the robust first-difference MAD (:mod:`workbench.peaks.noise`);
   emission: a part more than 3× quieter than the whole keeps its own σ for
   steps 3 and 5 (:func:`~workbench.peaks.noise.quiet_segment_sigma`).
3. Local maxima with height ≥ k·σ *and* prominence ≥ k·σ (k = ``min_snr``),
   by :mod:`workbench.peaks.extrema` (the definitions of
   :func:`scipy.signal.find_peaks`, without importing ``scipy.signal``).
   Prominence alone would accept the largest noise excursions, whose
   prominence over a long stretch of noise exceeds 5σ.
4. Sub-pixel centre by the three-point Gaussian (log-parabola) interpolation
   of Caruana et al. (1986): δ = ½(ln a − ln c)/(ln a − 2 ln b + ln c); a
   plain parabola on (a, b, c) when any of them is ≤ 0.
5. FWHM from interpolated half-maximum crossings
   (:func:`~workbench.peaks.extrema.half_height_crossings` at half the
   interpolated height, bounded by the peak's bases), area as the integral of the
   baseline-subtracted signal over centre ± FWHM, SNR = height / σ, and a
   saturation flag (top flat at the spectrum's maximum for ≥ 2 points, tops
   at a ceiling shared by three or more flat-topped peaks, or reaching
   ``saturation_level``).
6. Optical emission: maxima closer than 0.85 × the median FWHM are one line
   with a split top (self-reversal, an over-exposed core) and are merged
   before steps 4–5 measure them (:mod:`workbench.peaks.split`).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
import polars as pl

from workbench.datamodel import AXIS_COLUMN, FWHM_COLUMN, PeakList, Spectrum
from workbench.errors import InsufficientDataError, ValueRangeError
from workbench.peaks.baseline import estimate_baseline
from workbench.peaks.extrema import half_height_crossings, select_peaks
from workbench.peaks.noise import noise_sigma, quiet_segment_sigma
from workbench.peaks.split import merge_split_tops

__all__ = ["PeakFindingParameters", "find_peaks", "refine_centres"]


@dataclass(frozen=True)
class PeakFindingParameters:
    """Every setting of :func:`find_peaks`, recorded with its results.

    Attributes
    ----------
    mode : {"emission", "absorption"}
        Maxima (emission lines) or dips on a continuum (absorption lines).
    min_snr : float
        k: a peak needs height and prominence of at least k·σ.
    baseline : {"snip", "als"} or None
        Baseline/continuum method; ``None`` uses the signal as it is.
    snip_iterations : int
        SNIP half-window m in points (2–3 × the widest FWHM in points).
    snip_lls : bool
        Use the log-log-sqrt transform in SNIP.
    als_lam, als_p, als_n_iter : float, float, int
        ALS smoothness, asymmetry and iterations.
    prominence_window_px : int
        Window (points, odd) over which prominence is evaluated.
    saturation_level : float or None
        Raw signal level at or above which a peak is flagged saturated
        (emission); ``None`` flags tops flat at the spectrum's maximum.
    """

    mode: str = "emission"
    min_snr: float = 5.0
    baseline: str | None = "snip"
    snip_iterations: int = 40
    snip_lls: bool = True
    als_lam: float = 1e5
    als_p: float = 0.01
    als_n_iter: int = 10
    prominence_window_px: int = 201
    saturation_level: float | None = None

    def __post_init__(self) -> None:
        if self.mode not in ("emission", "absorption"):
            raise ValueRangeError(f"unknown mode {self.mode!r}", "use 'emission' or 'absorption'")
        if self.baseline not in ("snip", "als", None):
            raise ValueRangeError(
                f"unknown baseline method {self.baseline!r}", "use 'snip', 'als' or None"
            )
        if not np.isfinite(self.min_snr) or self.min_snr <= 0:
            raise ValueRangeError(f"min_snr must be positive, got {self.min_snr}", "use e.g. 5")
        if self.prominence_window_px < 3:
            raise ValueRangeError(
                f"prominence_window_px={self.prominence_window_px} is below 3", "use e.g. 201"
            )

    def to_dict(self) -> dict[str, object]:
        """Return a JSON-friendly dictionary of the parameters."""
        return asdict(self)


def refine_centres(s: np.ndarray, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sub-pixel centres and heights by three-point Gaussian interpolation.

    Parameters
    ----------
    s : numpy.ndarray
        Baseline-subtracted signal.
    idx : numpy.ndarray
        Indices of local maxima (not at the ends of ``s``).

    Returns
    -------
    tuple of numpy.ndarray
        Fractional indices of the centres and interpolated heights. The
        log-parabola (Caruana) is used where the three values are positive,
        else a parabola through them.
    """
    idx = np.asarray(idx, dtype=np.int64)
    a, b, c = s[idx - 1], s[idx], s[idx + 1]
    positive = (a > 0) & (b > 0) & (c > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        la = np.log(np.where(positive, a, 1.0))
        lb = np.log(np.where(positive, b, 1.0))
        lc = np.log(np.where(positive, c, 1.0))
        den_log = la - 2.0 * lb + lc
        den_lin = a - 2.0 * b + c
        d_log = np.where(den_log < 0, 0.5 * (la - lc) / den_log, 0.0)
        d_lin = np.where(den_lin < 0, 0.5 * (a - c) / den_lin, 0.0)
    delta = np.clip(np.where(positive, d_log, d_lin), -1.0, 1.0)
    h_log = np.exp(lb - 0.25 * (la - lc) * delta)
    h_lin = b - 0.25 * (a - c) * delta
    height = np.where(positive, h_log, h_lin)
    return idx + delta, height


def find_peaks(
    spectrum: Spectrum,
    *,
    mode: str = "emission",
    min_snr: float = 5.0,
    baseline: str | None = "snip",
    snip_iterations: int = 40,
    snip_lls: bool = True,
    als_lam: float = 1e5,
    als_p: float = 0.01,
    als_n_iter: int = 10,
    prominence_window_px: int = 201,
    saturation_level: float | None = None,
    parameters: PeakFindingParameters | None = None,
) -> PeakList:
    """Find emission peaks or absorption dips in a spectrum.

    Parameters
    ----------
    spectrum : Spectrum
        The spectrum (x strictly increasing, in nm or eV).
    mode : {"emission", "absorption"}
        Maxima or dips.
    min_snr : float
        k in "height and prominence ≥ k·σ" (default 5).
    baseline : {"snip", "als"} or None
        Baseline/continuum method (``"none"`` is accepted for None).
    snip_iterations, snip_lls, als_lam, als_p, als_n_iter, prominence_window_px
        See :class:`PeakFindingParameters`.
    saturation_level : float, optional
        Raw level at which the detector saturates.
    parameters : PeakFindingParameters, optional
        All settings at once; when given, the keyword settings are ignored.

    Returns
    -------
    PeakList
        Table with the position column (``wavelength_nm``/``energy_eV``),
        ``intensity`` (interpolated height above the baseline; for absorption
        the depth as a fraction of the continuum), ``fwhm_nm``/``fwhm_eV``,
        ``area``, ``snr``, ``saturated`` and ``split_top`` (emission: the
        merged maxima of one line whose top a dip splits,
        :mod:`workbench.peaks.split`). ``extra`` holds
        ``"peak_finding"`` (the parameters), ``"noise_sigma"``,
        ``"intensity_unit"`` and, for display only (not JSON),
        ``"baseline"`` (the baseline or continuum array).

    Raises
    ------
    InsufficientDataError
        If the spectrum has fewer than 5 points.
    """
    if parameters is None:
        parameters = PeakFindingParameters(
            mode=mode,
            min_snr=min_snr,
            baseline=None if baseline == "none" else baseline,
            snip_iterations=snip_iterations,
            snip_lls=snip_lls,
            als_lam=als_lam,
            als_p=als_p,
            als_n_iter=als_n_iter,
            prominence_window_px=prominence_window_px,
            saturation_level=saturation_level,
        )
    prm = parameters
    x = np.asarray(spectrum.x, dtype=np.float64)
    y = np.asarray(spectrum.y, dtype=np.float64)
    n = y.size
    if n < 5:
        raise InsufficientDataError(
            f"the spectrum has {n} points; peak finding needs at least 5",
            "give a sampled spectrum, or a peak list if you have one",
        )
    if not np.all(np.isfinite(y)):
        bad = int(np.count_nonzero(~np.isfinite(y)))
        raise ValueRangeError(
            f"the spectrum contains {bad} NaN or infinite value(s) (masked or bad samples)",
            "remove those samples (rows); the gap they leave is handled: a line inside it "
            "is not counted missing",
        )
    kw = {
        "snip_iterations": prm.snip_iterations,
        "snip_lls": prm.snip_lls,
        "als_lam": prm.als_lam,
        "als_p": prm.als_p,
        "als_n_iter": prm.als_n_iter,
    }
    sigma_raw = noise_sigma(y)
    if prm.mode == "emission":
        base = estimate_baseline(y, prm.baseline, sigma=sigma_raw, **kw)
        s = y - base
        intensity_unit = spectrum.y_label
    else:
        base = -estimate_baseline(-y, prm.baseline, sigma=sigma_raw, **kw)  # continuum
        s = base - y
        intensity_unit = spectrum.y_label
    sigma = noise_sigma(s)
    # Parts much quieter than the whole keep their own σ (noise.quiet_segment_sigma).
    local = quiet_segment_sigma(s, sigma) if prm.mode == "emission" and sigma > 0 else None
    # Dips are *detected* on continuum − y, whose noise is uniform; dividing by the
    # continuum would scale the noise by 1/continuum and make a k·σ threshold vary
    # along the spectrum. Heights, widths and areas are then measured on the
    # continuum-normalised depth 1 − y/continuum (area = equivalent width).
    s_measure = s
    if prm.mode == "absorption" and prm.baseline is not None and np.all(base > 0):
        s_measure = 1.0 - y / base
        intensity_unit = "fraction of continuum"
    axis = spectrum.axis
    pos_col, fwhm_col = AXIS_COLUMN[axis], FWHM_COLUMN[axis]
    extra: dict[str, object] = {
        "peak_finding": prm.to_dict(),
        "noise_sigma": sigma,
        "intensity_unit": intensity_unit,
        "baseline": base,
    }
    if sigma == 0.0:
        idx = np.empty(0, dtype=np.int64)
        props: dict[str, np.ndarray] = {}
    else:
        wlen = prm.prominence_window_px | 1
        if local is None:
            threshold = prm.min_snr * sigma
            props = select_peaks(s, threshold, threshold, wlen)
        else:
            # A part of the spectrum much quieter than the whole (noise.py):
            # each sample's height and prominence in units of its own σ.
            props = select_peaks(s / local, prm.min_snr, prm.min_snr, wlen)
        idx = props["peaks"]
    if idx.size == 0:
        table = pl.DataFrame(
            {
                pos_col: pl.Series([], dtype=pl.Float64),
                "intensity": pl.Series([], dtype=pl.Float64),
                fwhm_col: pl.Series([], dtype=pl.Float64),
                "area": pl.Series([], dtype=pl.Float64),
                "snr": pl.Series([], dtype=pl.Float64),
                "saturated": pl.Series([], dtype=pl.Boolean),
                "split_top": pl.Series([], dtype=pl.Boolean),
            }
        )
        return PeakList(table, axis, spectrum.medium, spectrum.source, prm.mode, extra)  # type: ignore[arg-type]
    _, height_detect = refine_centres(s, idx)
    fidx, height = refine_centres(s_measure, idx)
    grid = np.arange(n, dtype=np.float64)
    centre = np.interp(fidx, grid, x)
    # Widths at h/2, the interpolated half maximum (the level scipy's peak_widths
    # would use with rel_height 0.5 and "prominence" max(2·s[peak] − h, 1e-300)).
    prom = np.maximum(2.0 * s_measure[idx] - height, 1e-300)
    left_ips, right_ips = half_height_crossings(
        s_measure, idx, s_measure[idx] - 0.5 * prom, props["left_bases"], props["right_bases"]
    )
    split = np.zeros(idx.size, dtype=bool)
    if prm.mode == "emission" and spectrum.axis == "wavelength" and idx.size >= 3:
        # Maxima closer than the instrument resolves are one line (workbench.peaks.split;
        # optical: an X-ray detector's widths grow with energy and its overlaps
        # are settled by the fit of workbench.xray).
        keep, split, centre, left_ips, right_ips = merge_split_tops(
            s_measure,
            x,
            idx,
            height,
            centre,
            left_ips,
            right_ips,
            props["left_bases"],
            props["right_bases"],
            grid,
        )
        idx, height, height_detect = idx[keep], height[keep], height_detect[keep]
    x_left = np.interp(left_ips, grid, x)
    x_right = np.interp(right_ips, grid, x)
    fwhm = x_right - x_left
    hits = _saturated_indices(y, prm)
    saturated = _saturation(hits, y.size, left_ips, right_ips)
    if saturated.any():
        centre = _plateau_centres(hits, x, left_ips, right_ips, saturated, centre)
    # Cumulative trapezoid integral (the same sums as
    # concatenate(([0], cumsum(0.5 * (s[1:] + s[:-1]) * diff(x))))), built in the
    # index grid's array, no longer needed: fresh arrays of a million values cost
    # page faults as well as arithmetic.
    trap = s_measure[1:] + s_measure[:-1]
    trap *= 0.5
    trap *= np.subtract(x[1:], x[:-1], out=grid[:-1])  # diff(x)
    cum = grid
    cum[0] = 0.0
    np.cumsum(trap, out=cum[1:])
    del trap
    area = np.interp(centre + fwhm, x, cum) - np.interp(centre - fwhm, x, cum)
    # A σ at the floating-point floor (subnormal) makes height/σ overflow: such
    # an SNR is "as large as a double can say", not infinity.
    sigma_at = sigma if local is None else local[idx]
    with np.errstate(over="ignore"):
        snr = np.minimum(height_detect / sigma_at, np.finfo(np.float64).max)
    # Columns go to polars as Python lists (the same doubles): polars' numpy path
    # imports numpy.ma (about 6 ms of a command's start-up) to look for masks.
    table = pl.DataFrame(
        {
            pos_col: pl.Series(pos_col, centre.tolist(), dtype=pl.Float64),
            "intensity": pl.Series("intensity", height.tolist(), dtype=pl.Float64),
            fwhm_col: pl.Series(fwhm_col, fwhm.tolist(), dtype=pl.Float64),
            "area": pl.Series("area", area.tolist(), dtype=pl.Float64),
            "snr": pl.Series("snr", snr.tolist(), dtype=pl.Float64),
            "saturated": pl.Series("saturated", saturated.tolist(), dtype=pl.Boolean),
            "split_top": pl.Series("split_top", split.tolist(), dtype=pl.Boolean),
        }
    )
    return PeakList(table, axis, spectrum.medium, spectrum.source, prm.mode, extra)  # type: ignore[arg-type]


# A detector's ceiling after bias subtraction or flat-fielding is not one
# number: the clipped tops of the Keck LRIS arc in the pypeit archive lie
# between 63,932 and 64,296 counts (0.57 % of the maximum; measured here).
# Samples within CEILING_TOL of the spectrum's range (maximum − median) below
# its maximum are "at the ceiling"; the ceiling is taken as real only when at
# least CEILING_MIN_RUNS separate flat tops (two or more adjacent samples;
# separate when the signal between them falls below half the range) reach
# it: an unsaturated spectrum's three strongest peaks are rarely within 1 %
# of each other, a clipped one shows every saturated line at the same level.
# Both numbers are common practice, no source.
CEILING_TOL = 0.01
CEILING_MIN_RUNS = 3


def _saturated_indices(y: np.ndarray, prm: PeakFindingParameters) -> np.ndarray:
    """Sorted indices of the saturated samples.

    With ``saturation_level``, every sample at or above it. Otherwise (1) the
    samples of flat tops exactly at the spectrum's maximum (minimum for
    absorption): a sample at the extreme with a neighbour also at it; and,
    for emission, (2) every sample at a shared ceiling: within
    ``CEILING_TOL`` × (maximum − median) of the maximum, when at least
    ``CEILING_MIN_RUNS`` separate tops reach it with runs of two or more
    adjacent samples (tops are separate where the signal between them falls
    below half the range: noise splits one broad top into runs of one peak).
    """
    if prm.mode != "absorption" and prm.saturation_level is not None:
        return np.flatnonzero(y >= prm.saturation_level)
    extreme = np.flatnonzero(y == (y.min() if prm.mode == "absorption" else y.max()))
    # Sorted indices: a neighbour shares the extreme when the next or previous index is ±1.
    adjacent = np.diff(extreme) == 1
    keep = np.zeros(extreme.size, dtype=bool)
    keep[:-1] |= adjacent
    keep[1:] |= adjacent
    exact = extreme[keep]
    if prm.mode == "absorption" or y.size < 3:
        return exact
    top = float(y.max())
    # The median by partition: np.median would load numpy.ma, which the
    # peaks command does not otherwise need (tests/peaks/test_import_chain.py).
    span = top - float(np.partition(y, y.size // 2)[y.size // 2])
    if not np.isfinite(span) or span <= 0:
        return exact
    near = np.flatnonzero(y >= top - CEILING_TOL * span)
    starts = np.flatnonzero(np.diff(near, prepend=near[0] - 2) != 1)
    lengths = np.diff(np.append(starts, near.size))
    if np.sum(lengths >= 2) < CEILING_MIN_RUNS:
        return exact
    # Runs count as separate tops only when the signal between them falls
    # below half the range: noise on one broad top (a Stark-broadened line,
    # a band) splits it into runs that are one peak.
    ends = near[np.append(starts[1:] - 1, near.size - 1)]
    first = near[starts]
    gap_min = np.array(
        [float(y[a + 1 : b].min()) for a, b in zip(ends[:-1], first[1:], strict=True)]
    )
    new_top = np.concatenate(([True], gap_min < top - 0.5 * span))
    top_id = np.cumsum(new_top) - 1
    flat_tops = np.unique(top_id[lengths >= 2]).size
    if flat_tops < CEILING_MIN_RUNS:
        return exact
    return np.union1d(exact, near)


def _saturation(hits, n, left_ips, right_ips) -> np.ndarray:
    # hits: the sorted saturated sample indices (_saturated_indices) of n samples.
    lo = np.clip(np.floor(left_ips).astype(np.int64), 0, n - 1)
    hi = np.clip(np.ceil(right_ips).astype(np.int64), 0, n - 1)
    # Saturated samples within [lo, hi], counted on the sorted indices.
    return np.searchsorted(hits, hi, side="right") - np.searchsorted(hits, lo, side="left") > 0


def _plateau_centres(hits, x, left_ips, right_ips, saturated, centre) -> np.ndarray:
    # A clipped top carries no shape: take the middle of the flat run instead.
    out = centre.copy()
    for k in np.flatnonzero(saturated):
        lo = max(int(np.floor(left_ips[k])), 0)
        hi = min(int(np.ceil(right_ips[k])), x.size - 1)
        run = hits[(hits >= lo) & (hits <= hi)]
        out[k] = 0.5 * (x[run[0]] + x[run[-1]])
    return out
