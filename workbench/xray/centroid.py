"""Peak centres of an XRF spectrum from a fit of the detector's line shape.

The peak finder places a peak at its highest channels (a parabola through
the top three). On an energy-dispersive spectrum that is a poor estimator of
where the line is: near its top a Gaussian changes by one channel's counting
noise over about σ·√(2/SNR) (SNR the height over one channel's noise), so
the maximum of a weak peak wanders by a good fraction of the FWHM. Soil Zn
Kα of the forward-model cases (130 eV FWHM, about 50 net counts a channel
over about 85 of background) was placed 32 eV below its lines for that
reason, while the counts over its whole width put it within a few eV.

The detector's line shape is known (a Gaussian of width
:func:`workbench.xray.detector.fwhm_eV` at each energy), so the centre is
measured the way an XRF analyst would: a weighted least-squares fit of a
Gaussian (amplitude, centre and width free, started at the detector's
width) to the raw counts above the peak finder's baseline, with Poisson
weights 1/max(counts, 1). Where the fitted width is that of one line (not
more than :data:`WIDTH_EXCESS` plus 2σ above the detector's) the centre and
its standard error (from the fit's covariance, inflated by √(χ²/dof) when
the shape does not fit) replace the peak finder's centre and the wander of
the maximum in the evidence's position uncertainty
(:func:`workbench.matching.xray_evidence.xray_terms`). A wider peak is a blend
of lines of different families (Pb Mα with S Kα, Ba Lα with Ti Kα): its
centroid lies between them and is no family's line, while its maximum sits
nearer the stronger one, which the evidence's blend model expects; it
keeps the peak finder's centre.

Window: channels within :data:`FIT_HALF_WIDTH_FWHM` × FWHM of the centre.
Peaks closer than :data:`CLUSTER_GAP_FWHM` FWHM are fitted together, one
Gaussian each, so a neighbour's flank is its own line's. For a peak on
a background much higher than itself the information about its centre is
∝ (x − μ)² g(x)², most of it within 1.8σ: ±0.75 FWHM (±1.77σ) holds about
86 % of it (derivation, no source), while keeping the low-energy tail of a
real detector's response out.

A fit that does not converge, puts the amplitude at or below zero, or moves
the centre by more than half a FWHM keeps the peak finder's centre (the
peak is then not a single line shape), and the uncertainty is not given.
"""

from __future__ import annotations

import numpy as np

from workbench.datamodel import PeakList

__all__ = [
    "CLUSTER_GAP_FWHM",
    "FIT_HALF_WIDTH_FWHM",
    "WIDTH_EXCESS",
    "fit_centres",
    "fitted_peak_centres",
]

#: Half-width of the fit window in units of the detector FWHM (module
#: docstring; derivation, no source).
FIT_HALF_WIDTH_FWHM: float = 0.75
#: Peaks closer than this many FWHM (mean of the pair's) are fitted together:
#: beyond it the fit windows (±0.75 FWHM each) leave half a FWHM between
#: them and a neighbour's flank is about 1 % of its height there (Gaussian;
#: derivation, no source).
CLUSTER_GAP_FWHM: float = 2.0
#: A fitted width more than this fraction (plus 2σ) above the detector's is
#: taken for a blend of lines. 2 %: a Kα1/Kα2 doublet up to Zn widens its
#: peak by 1–2 % at 130–180 eV FWHM, S Kα beside Pb Mα (1 : 3, 33 eV apart
#: at 93 eV) by 6 % (derivation, no source). A resolution model a few per
#: cent off only sends more peaks back to the peak finder's centre.
WIDTH_EXCESS: float = 0.02
#: Fewest channels a fit window must hold: three parameters a peak and a
#: residual to judge the fit by (common practice, no source).
_MIN_CHANNELS: int = 6
_GAUSS = 2.0 * np.sqrt(2.0 * np.log(2.0))  # FWHM / σ of a Gaussian


def _fit_cluster(
    x: np.ndarray, counts: np.ndarray, base: np.ndarray, mu0: np.ndarray, s0: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """Gauss–Newton fit of Σ A_k·exp(−(x − μ_k)²/2s_k²) + base.

    Returns (μ, σ_μ, single): ``single`` where the fitted width is that of
    one line at the detector resolution (module docstring), or None.
    """
    w = 1.0 / np.maximum(counts, 1.0)
    net = counts - base
    mu = mu0.astype(np.float64, copy=True)
    s = s0.astype(np.float64, copy=True)
    k = mu.size

    def jacobian(amp: np.ndarray, mu: np.ndarray, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        u = (x[:, None] - mu[None, :]) / s[None, :]
        g = np.exp(-0.5 * u**2)
        ga = g * amp[None, :]
        return g, np.hstack([g, ga * u / s[None, :], ga * u**2 / s[None, :]])

    g = np.exp(-0.5 * ((x[:, None] - mu[None, :]) / s[None, :]) ** 2)
    try:
        amp = np.linalg.solve(g.T @ (g * w[:, None]), g.T @ (w * net))
    except np.linalg.LinAlgError:
        return None
    for _ in range(40):
        g, jac = jacobian(amp, mu, s)
        jw = jac * w[:, None]
        try:
            step = np.linalg.solve(jac.T @ jw, jw.T @ (net - g @ amp))
        except np.linalg.LinAlgError:
            return None
        amp, mu, s = amp + step[:k], mu + step[k : 2 * k], s + step[2 * k :]
        if not np.all(np.isfinite(step)) or np.any(amp <= 0.0) or np.any(s <= 0.2 * s0):
            return None
        if np.all(np.abs(step[k:]) < 1e-3 * s0[np.arange(2 * k) % k]):
            break
    else:
        return None
    g, jac = jacobian(amp, mu, s)
    try:
        cov = np.linalg.inv(jac.T @ (jac * w[:, None]))
    except np.linalg.LinAlgError:
        return None
    dof = x.size - 3 * k
    if dof < 1:
        return None
    chi2 = float(np.sum(w * (net - g @ amp) ** 2))
    inflate = max(1.0, chi2 / dof)
    var = np.maximum(np.diag(cov), 0.0) * inflate
    sigma_mu, sigma_s = np.sqrt(var[k : 2 * k]), np.sqrt(var[2 * k :])
    single = s <= (1.0 + WIDTH_EXCESS) * s0 + 2.0 * sigma_s
    return mu, sigma_mu, single


def fit_centres(
    channel_eV: np.ndarray,
    counts: np.ndarray,
    baseline: np.ndarray,
    centre_eV: np.ndarray,
    fwhm_eV: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Centres of peaks from a Gaussian fit to the raw counts (module docstring).

    Peaks closer than :data:`CLUSTER_GAP_FWHM` FWHM are fitted together
    (one Gaussian each), so a neighbour's flank is explained by its own line
    and does not pull the centre.

    Parameters
    ----------
    channel_eV, counts, baseline : numpy.ndarray
        The spectrum's channel energies (increasing), raw counts and the
        peak finder's baseline (counts), one value per channel.
    centre_eV : numpy.ndarray
        Centres from the peak finder (the fit's starting points).
    fwhm_eV : numpy.ndarray
        Detector FWHM at each centre.

    Returns
    -------
    (centre_eV, sigma_eV) : numpy.ndarray, numpy.ndarray
        Fitted centres (the peak finder's where the fit is not usable) and
        their standard errors (NaN where not fitted).
    """
    xs = np.asarray(channel_eV, dtype=np.float64)
    ys = np.asarray(counts, dtype=np.float64)
    bs = np.asarray(baseline, dtype=np.float64)
    c0 = np.asarray(centre_eV, dtype=np.float64)
    fw = np.asarray(fwhm_eV, dtype=np.float64)
    out = c0.copy()
    sig = np.full(c0.size, np.nan)
    ok = np.isfinite(c0) & np.isfinite(fw) & (fw > 0)
    idx = np.flatnonzero(ok)
    idx = idx[np.argsort(c0[idx], kind="stable")]
    if idx.size == 0:
        return out, sig
    # Clusters: runs of peaks whose gaps are below CLUSTER_GAP_FWHM × FWHM.
    gaps = np.diff(c0[idx]) > CLUSTER_GAP_FWHM * 0.5 * (fw[idx][1:] + fw[idx][:-1])
    for members in np.split(idx, np.flatnonzero(gaps) + 1):
        c, w = c0[members], fw[members]
        mu, fit = c, None
        for _ in range(2):  # the second fit re-centres the windows on the first's centres
            near = np.any(
                np.abs(xs[:, None] - mu[None, :]) <= FIT_HALF_WIDTH_FWHM * w[None, :], axis=1
            )
            sel = np.flatnonzero(near)
            if sel.size < _MIN_CHANNELS + 3 * (members.size - 1):
                fit = None
                break
            fit = _fit_cluster(xs[sel], ys[sel], bs[sel], mu, w / _GAUSS)
            if fit is None or np.any(np.abs(fit[0] - c) > 0.5 * w):
                fit = None
                break
            mu = fit[0]
        if fit is not None:
            # Only peaks as narrow as one line: a wider one is a blend of
            # lines whose centre is not one line's (module docstring).
            one = fit[2]
            out[members[one]], sig[members[one]] = fit[0][one], fit[1][one]
    return out, sig


def fitted_peak_centres(
    peaks: PeakList, x: np.ndarray, fwhm: np.ndarray, weak: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Peak centres and their σ from :func:`fit_centres`.

    Needs the raw spectrum and its baseline (``extra["spectrum"]`` and
    ``extra["baseline"]``, as :mod:`workbench.matching.analyse` passes
    them); without them the peak finder's centres stand and σ is NaN.
    Noise maxima (``weak``) are not fitted, nor fitted beside other peaks.
    """
    extra = peaks.extra if isinstance(peaks.extra, dict) else {}
    sp, base = extra.get("spectrum"), extra.get("baseline")
    sigma = np.full(x.size, np.nan)
    if sp is None or base is None or np.size(base) != np.size(sp[1]) or not np.any(~weak):
        return x, sigma
    fitted, s = fit_centres(
        np.asarray(sp[0], dtype=np.float64),
        np.asarray(sp[1], dtype=np.float64),
        np.asarray(base, dtype=np.float64),
        x[~weak],
        fwhm[~weak],
    )
    out = np.array(x, dtype=np.float64, copy=True)
    out[~weak] = fitted
    sigma[~weak] = s
    return out, sigma
