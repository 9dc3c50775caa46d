"""What each group carries for the X-ray agreement terms: per-group quantities on an energy axis.

With the ``x-ray`` source model on an energy axis,
:func:`workbench.matching.evidence.gather_evidence` adds to each group of a
species what the X-ray terms of :mod:`workbench.matching.xray_scoring` need:
where the group's blend peaks at the detector resolution and how surely
(:func:`group_blend_maxima`), and the peak's offset from it, the position
uncertainty, the window and log-intensity range a chance peak could fall in,
and the peak's counting significance (:func:`xray_terms`).

Apart from :mod:`workbench.matching.evidence` because none of it concerns
emission or absorption: the evidence pass calls these two functions only
when ``xray`` is true. The scale check after matching
(:mod:`workbench.matching.xray_scale`) takes the position σ made here
without its calibration allowance :data:`XRAY_CALIBRATION_SIGMA_EV`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from workbench.matching.reference import ReferenceIndex
from workbench.xray.detector import blend_maxima

if TYPE_CHECKING:
    from workbench.matching.evidence import ObservedLines

__all__ = [
    "XRAY_CALIBRATION_SIGMA_EV",
    "XRAY_LINE_SIGMA_EV",
    "group_blend_maxima",
    "xray_terms",
]

#: Residual energy-scale error on an energy axis (eV, 1σ): the scale check
#: applies a correction only beyond 20 eV (``workbench.xray.energy_scale.
#: MIN_SIGNIFICANT_EV``), so an unapplied offset lies within about ±20 eV,
#: taken as 2σ (common practice, no source).
XRAY_CALIBRATION_SIGMA_EV: float = 10.0
#: Uncertainty of tabulated X-ray line energies (eV, 1σ): Deslattes et al.,
#: Rev. Mod. Phys. 75 (2003) 35 give K and L diagram lines to well under
#: 1 eV; 2 eV allows for the Elam compilation's rounding (from memory).
XRAY_LINE_SIGMA_EV: float = 2.0


def xray_terms(
    obs: ObservedLines,
    index: ReferenceIndex,
    g: dict,
    tol: np.ndarray,
    span: np.ndarray,
    dl: np.ndarray | None,
) -> dict[str, np.ndarray]:
    """Per-group quantities for the X-ray agreement terms (``scoring``).

    * ``delta``: observed peak − where the group's blend peaks at the
      detector resolution (``blend_max``, :func:`group_blend_maxima`; the
      strongest line when not given). The peak finder reports the blend's
      maximum, not its strongest line: in 30 forward-model spectra of the
      soil case (130 eV) the Rb, Sr and Zr Kα peaks sat 19–22 eV below Kα1
      and within 5 eV of the blend's maximum, so measuring from Kα1 cost a
      true line a systematic 0.6–0.9σ.
    * ``sigma_pos``: √(calibration² + line² + blend² + peak²), blend the
      shift of the blend's maximum under the model's intensity-ratio
      uncertainty (``blend_sigma``; the distance from the strongest line to
      the group's mean when not given), the peak
      term (FWHM/2.355)/√SNR with SNR the peak's height over one channel's
      counting noise, h/√(h + b) (``obs.height_snr``; 3·I/DL, height over
      the median noise of the peaks, where that is not known): the top of a
      noisy Gaussian peak wanders where the peak is within about one noise
      unit of its maximum,
      |x| ≲ σ·√(2/SNR) (derivation, no source), which for weak peaks is far
      more than the centroid's counting error. Where the peak's centre was
      fitted with the detector's line shape (``obs.position_sigma``,
      :mod:`workbench.xray.centroid`), that fit's standard error replaces
      the wander term.
    * ``significance``: the peak's counting significance N/√(N + 2B)
      (``obs.significance``, from :mod:`workbench.xray.prepare`; ``snr``
      where that is not known), for the sole-explanation rule.
    * ``window``: width over which a chance peak would have been accepted
      (2·tolerance + group span).
    * ``log_range``: decades over which a chance peak's height may lie:
      from 30 % of the prediction (or the detection limit) to the highest
      observed peak, at least 0.5.
    """
    found = g["found"]
    pk = np.where(found, g["peak"], 0)
    x_obs = obs.position[pk]
    rep_pos = index.position[g["rep"]]
    centre = g.get("blend_max", rep_pos)
    res = obs.resolution if obs.resolution is not None else 2.0 * obs.half_window
    inten = obs.intensity[pk]
    if dl is not None:
        snr = np.where(np.isfinite(inten) & (inten > 0), 3.0 * inten / dl, 1.0)
    else:
        snr = np.ones(found.size)
    snr_top = snr
    if obs.height_snr is not None:
        own = obs.height_snr[pk]
        snr_top = np.where(np.isfinite(own) & (own > 0), own, snr)
    sig_c = (res[pk] / 2.355) / np.sqrt(np.maximum(snr_top, 1.0))
    if obs.position_sigma is not None:
        # A fitted centre's own standard error where the line shape was fitted.
        fitted = obs.position_sigma[pk]
        sig_c = np.where(np.isfinite(fitted), fitted, sig_c)
    blend = g.get("blend_sigma", g["position"] - rep_pos)
    sigma_pos = np.sqrt(XRAY_CALIBRATION_SIGMA_EV**2 + XRAY_LINE_SIGMA_EV**2 + blend**2 + sig_c**2)
    if obs.significance is not None:
        signif = np.where(found, np.nan_to_num(obs.significance[pk]), 0.0)
    else:
        signif = np.where(found, snr, 0.0)
    i_max = float(np.nanmax(obs.intensity)) if np.any(np.isfinite(obs.intensity)) else np.nan
    floor = np.maximum(0.3 * g["predicted"], dl if dl is not None else 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_range = np.log10(i_max / floor)
    log_range = np.where(np.isfinite(log_range), np.maximum(log_range, 0.5), 0.5)
    return {
        "delta": np.where(found, x_obs - centre, np.nan),
        "sigma_pos": sigma_pos,
        "window": 2.0 * tol + span,
        "log_range": log_range,
        "obs_intensity": np.where(found, inten, np.nan),
        "saturated": np.where(found, obs.saturated[pk], False),
        "snr": np.where(found, snr, 0.0),
        "significance": signif,
    }


def group_blend_maxima(
    u_pos: np.ndarray,
    u_e: np.ndarray,
    gid: np.ndarray,
    rep_pos: np.ndarray,
    fwhm_eV: np.ndarray,
    sigma_dex: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Where each group's blend peaks at the detector resolution, and how surely (eV).

    A group's lines, each a Gaussian of the detector FWHM weighted by its
    predicted strength, add up to one peak whose maximum the peak finder
    reports (a Kα1/Kα2 doublet 23–84 eV apart under a 150–200 eV FWHM peaks
    between them, nearer Kα1). The maximum is found by mean shift from the
    strongest line (:func:`workbench.xray.detector.blend_maxima`, the same
    as the energy-scale check's). Its uncertainty is what the model's own uncertainty of
    the intensity ratios does to it: the maximum is found again with every
    line but the strongest made 10^±σ (σ the model's uncertainty in
    decades), and half the difference is the 1σ shift. A K doublet (ratio
    near 2:1, σ 0.2 dex) moves by a few eV; a blend of lines of comparable
    strength far apart moves by tens of eV, as its maximum truly is less
    certain. Groups without known strengths keep the strongest line.

    Parameters
    ----------
    u_pos, u_e, gid : numpy.ndarray
        Position, predicted strength (0 when unknown) and group of each usable line.
    rep_pos : numpy.ndarray
        Position of each group's strongest line.
    fwhm_eV : numpy.ndarray
        Detector FWHM at each group.
    sigma_dex : numpy.ndarray
        Model uncertainty of each group's intensities (decades).

    Returns
    -------
    (maximum, sigma) : numpy.ndarray, numpy.ndarray
        Per group, in eV.
    """
    if rep_pos.size == 0:
        return np.zeros(0), np.zeros(0)
    sg = np.maximum(fwhm_eV, 1e-9) / 2.3548
    is_rep = u_pos == rep_pos[gid]

    def peak_at(w: np.ndarray) -> np.ndarray:
        return blend_maxima(u_pos, w, gid, rep_pos, sg, 20)

    f = 10.0 ** sigma_dex[gid]
    best = peak_at(u_e)
    up = peak_at(np.where(is_rep, u_e, u_e * f))
    down = peak_at(np.where(is_rep, u_e, u_e / f))
    return best, 0.5 * np.abs(up - down)
