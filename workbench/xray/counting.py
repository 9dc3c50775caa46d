"""Counting statistics of XRF peaks: which maxima the counts support, and how surely.

An XRF spectrum is counts, so whether a maximum is a line and how far its
top may wander are questions of its own counts, not of its height over the
median noise of all peaks. :func:`workbench.xray.prepare.prepare_energy_peaks`
asks three things here of the peak list (and, when it came with them, of the
spectrum's baseline and channels):

* :func:`not_significant`: the maxima counting statistics or the detector
  resolution cannot support, and each peak's counting significance
  N/√(N + 2B) from its own net and baseline counts (below
  :data:`MIN_COUNTING_SIGMA` dropped); a maximum much narrower than the
  detector response (:data:`SPIKE_WIDTH_FRACTION`) is a counting spike
  unless the spectrum's counts around it show a line
  (:func:`window_significance`);
* :func:`channel_snr`: each peak's height over one channel's counting
  noise, h/√(h + b), which sets how far a noisy peak's maximum wanders;
* :func:`channel_width`: the channel width that turns heights into counts.

Apart from :mod:`workbench.xray.prepare` because none of it depends on the
artefact model, the excitation or the energy scale: it is the statistics of
single peaks, which preparation then uses.
"""

from __future__ import annotations

import numpy as np
import polars as pl

from workbench.datamodel import FWHM_COLUMN, PeakList

__all__ = [
    "MIN_COUNTING_SIGMA",
    "SPIKE_WIDTH_FRACTION",
    "channel_snr",
    "channel_width",
    "not_significant",
    "window_significance",
]

_DEFAULT_CHANNEL_EV = 10.0  # 4096 channels over 40 keV (common practice, no source)


def channel_width(peaks: PeakList) -> float:
    """Width of one channel of the peak list's spectrum (eV).

    From the baseline's length over the energy range when the peak finder
    stored them; else 10 eV, a common 4096-channel, 40 keV unit.
    """
    extra = peaks.extra if isinstance(peaks.extra, dict) else {}
    base, xr = extra.get("baseline"), extra.get("x_range")
    if base is not None and xr is not None and np.size(base) > 1:
        return float((float(xr[1]) - float(xr[0])) / (np.size(base) - 1))
    return _DEFAULT_CHANNEL_EV


#: Peaks below this significance under counting statistics are dropped
#: (the usual 3σ detection limit of XRF; common practice, no source).
MIN_COUNTING_SIGMA: float = 3.0
#: A maximum narrower than this part of the detector FWHM is a counting spike
#: (see :func:`not_significant`; derivation above, no source).
SPIKE_WIDTH_FRACTION: float = 0.25


def window_significance(extra: dict, x: np.ndarray, fwhm: np.ndarray) -> np.ndarray | None:
    """Counting significance of a line at each position from the spectrum's raw counts.

    A top-hat comparison of the counts C within half a detector FWHM of the
    position with the counts F in the two flanks from half a FWHM to one
    FWHM on either side (together as wide as the centre): T = C − F. Any
    background that is linear over the window (the continuum, the wing of a
    neighbouring line) puts the same counts in both and cancels; a Gaussian
    line of N counts puts 76.1 % of them in the centre and 22.0 % in the
    flanks (±1.177σ and ±2.355σ: normal-distribution integrals), so
    T = 0.541·N; a counting spike adds the counts of a channel or two; a
    noise maximum in the valley between two lines sits where the counts
    curve upwards, so T ≤ 0 there. C and F are Poisson counts, so
    Var(T) = C + F and the significance is T/√(C + F), from the spectrum
    alone (no baseline). On the channel grid the flanks are scaled by
    r = n_C/n_F, the ratio of their channel counts, so that a flat
    background cancels exactly: T = C − r·F, Var(T) = C + r²·F. Needs the
    spectrum's channels (``extra["spectrum"]``, counts); None without them.
    """
    sp = extra.get("spectrum")
    if sp is None or np.size(sp[0]) < 2 or np.size(sp[0]) != np.size(sp[1]):
        return None
    xs = np.asarray(sp[0], dtype=np.float64)
    y = np.asarray(sp[1], dtype=np.float64)
    if np.min(y) < 0:
        return None  # not a spectrum of counts
    cum = np.concatenate(([0.0], np.cumsum(y)))
    half = 0.5 * fwhm
    c_lo = np.searchsorted(xs, x - half, side="left")
    c_hi = np.searchsorted(xs, x + half, side="right")
    w_lo = np.searchsorted(xs, x - fwhm, side="left")
    w_hi = np.searchsorted(xs, x + fwhm, side="right")
    centre = cum[c_hi] - cum[c_lo]
    flanks = cum[w_hi] - cum[w_lo] - centre
    # Channel counts of centre and flanks differ by one or two on a discrete
    # grid: the flanks are scaled to the centre's width so that a flat
    # background cancels exactly.
    n_c = (c_hi - c_lo).astype(np.float64)
    n_f = (w_hi - w_lo).astype(np.float64) - n_c
    r = np.where(n_f > 0, n_c / np.maximum(n_f, 1.0), 0.0)
    var = centre + r * r * flanks
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where((var > 0) & (n_f > 0), (centre - r * flanks) / np.sqrt(var), 0.0)


def not_significant(
    peaks: PeakList, x: np.ndarray, inten: np.ndarray, fwhm: np.ndarray, channel: float
) -> tuple[np.ndarray, np.ndarray]:
    """Peaks that counting statistics or the detector resolution cannot support.

    XRF spectra are counts: a peak's significance is N/√(N + 2B), with N its
    net counts within ±FWHM (Gaussian: 0.98 · 1.0645 · height · FWHM per
    channel width) and B the baseline counts under it (counted twice: it is
    itself estimated). Used only when the peak finder's baseline is at hand
    and non-negative (a raw spectrum of counts). Independently, a maximum
    within 0.85 FWHM of a stronger one is a noise split: two Gaussians of
    equal width give two maxima only when more than 2σ = 0.85 FWHM apart.

    Returns
    -------
    (drop, significance) : bool array and float array (NaN where not computed)
    """
    sig = np.full(x.size, np.nan)
    drop = np.zeros(x.size, dtype=bool)
    extra = peaks.extra if isinstance(peaks.extra, dict) else {}
    w_obs = (
        peaks.table[FWHM_COLUMN["energy"]].cast(pl.Float64).fill_null(np.nan).to_numpy()
        if FWHM_COLUMN["energy"] in peaks.table.columns
        else np.full(x.size, np.nan)
    )
    # No real peak is narrower than the detector response, but the width of
    # a weak peak measured at half its prominence scatters widely (noise moves
    # the half-maximum crossings; a real Pb Lℓ peak at SNR 12 measured 98 eV
    # against a 240 eV response): only a maximum under a quarter of the
    # detector FWHM (a few channels, the width of a counting spike) is taken
    # for a noise spike, and, when the spectrum is at hand, only if the
    # counts around it do not show a line (:func:`window_significance`): a
    # 10σ Zr Kβ on 64 counts per channel measured 31 eV against 212 eV.
    narrow = np.isfinite(w_obs) & (w_obs < SPIKE_WIDTH_FRACTION * fwhm)
    if np.any(narrow):
        s_win = window_significance(extra, x[narrow], fwhm[narrow])
        if s_win is not None:
            narrow[narrow] = s_win < MIN_COUNTING_SIGMA
    drop |= narrow
    # A line's counts are spread over the detector response whatever width
    # noise made the peak finder measure, so the counts are taken over the
    # detector FWHM (up to the measured width for a broadened peak).
    width = np.where(np.isfinite(w_obs) & (w_obs > fwhm), np.minimum(w_obs, 2.0 * fwhm), fwhm)
    base, xr = extra.get("baseline"), extra.get("x_range")
    if base is not None and xr is not None and np.size(base) > 1 and np.min(base) >= 0:
        grid = np.linspace(float(xr[0]), float(xr[1]), np.size(base))
        b = np.interp(x, grid, np.asarray(base, dtype=np.float64))
        n = 0.98 * 1.0645 * np.clip(np.nan_to_num(inten), 0.0, None) * width / channel
        bg = b * 2.0 * width / channel
        with np.errstate(divide="ignore", invalid="ignore"):
            sig = np.where(n + bg > 0, n / np.sqrt(n + 2.0 * bg), 0.0)
        drop |= sig < MIN_COUNTING_SIGMA
    order = np.argsort(-np.nan_to_num(inten, nan=0.0), kind="stable")
    kept: list[int] = []
    for p in order:
        if drop[p]:
            continue
        if any(abs(x[p] - x[q]) < 0.85 * fwhm[p] for q in kept):
            drop[p] = True
            continue
        kept.append(int(p))
    return drop, sig


def channel_snr(peaks: PeakList, x: np.ndarray, height: np.ndarray) -> np.ndarray:
    """Height over its own counting noise in one channel, h/√(h + b); NaN without a baseline.

    h is the peak's height above the baseline b (counts per channel, as the
    peak finder measures both on a raw spectrum of counts). This, not the
    counting significance of the whole peak, sets how far the maximum of a
    noisy peak wanders (:func:`workbench.matching.xray_evidence.xray_terms`):
    the peak finder places a peak at its highest channels, and near the top
    a Gaussian changes by one channel's noise over ≈ σ·√(2/SNR). A strong
    peak's height over the median noise of all peaks overstates it: Pb Lα
    of the GSR case (34,000 counts, 180 eV) has h/√(h + b) ≈ 40, not 200,
    and its maximum sat 21 eV above the line.
    """
    extra = peaks.extra if isinstance(peaks.extra, dict) else {}
    base, xr = extra.get("baseline"), extra.get("x_range")
    out = np.full(x.size, np.nan)
    if base is None or xr is None or np.size(base) < 2 or np.min(base) < 0:
        return out
    grid = np.linspace(float(xr[0]), float(xr[1]), np.size(base))
    b = np.interp(x, grid, np.asarray(base, dtype=np.float64))
    h = np.nan_to_num(np.asarray(height, dtype=np.float64))
    ok = h > 0
    out[ok] = h[ok] / np.sqrt(h[ok] + b[ok])
    return out
