"""Contrast of a species' predicted emission strengths: one exponent per species and spectrum.

An emission source model predicts each line's relative strength S (the
species' strongest line in range has 1; :mod:`workbench.matching.sourcemodels`).
For a lamp that is the source's tabulated relative intensity, estimated on
other lamps at other currents and pressures and compiled from several
sources, and a real lamp often shows its weaker lines one or two decades
below their tabulated ratios *together* (measured here on the tune set,
below). That is one departure shared by the species' lines, not the
independent scatter of each line that the model's σ describes, and counted
as independent misses it made a present species pay for every weak line
the lamp does not show.

Per species a contrast b ≥ 1 is fitted and the missing-line penalty
predicts the species' groups at min(S, 1)^(b − 1) times their prediction
(:func:`miss_prediction`): the strongest line keeps its prediction, weaker
lines are lowered, so the contrast can excuse misses and never add any.
Nothing else uses b: which groups should be seen, the chance test and the
species' scale stay those of the source model. b is chosen on a grid
(:data:`GRID`) by the likelihood of what the species' groups show, with the
scale at each b the median of observed / predicted over its found groups:

* a found, unique, unsaturated group of known strength: normal density of
  log10(I / (scale · S^b · R)) with the model's σ (R the instrument
  response);
* a group without a peak: the probability of missing it if present,
  ε + (1 − ε)·Φ(z), z = (log10 DL − log10(scale · S^b · R)) / σ (ε the
  loss probability of :mod:`workbench.matching.scoring`).

b leaves 1 only when

1. the species' found groups are tabulated stronger than its missed ones,
   one-sided Mann-Whitney p ≤ :data:`ORDER_P` (:func:`_found_above_missed`);
2. at least :data:`MIN_FOUND` such found groups measure the fit;
3. the best grid value beats b = 1 by a log-likelihood ratio above
   :data:`LR_THRESHOLD` (the χ² test of one parameter at 5 %; common
   practice, no source).

Condition 1 is what keeps chance hits out. An absent species' misses
always prefer a steeper scale (every miss is then less surprising), and its
found heights, unrelated to S, barely object at σ = 0.8 dex: in the invented
five-gas lamps the likelihood alone gave Nd II b = 3, and when b also chose
which groups should be seen, Nd II reached "probable". Under chance the
found groups are a random draw of the species' groups, so their strengths
lie above the missed ones' no more often than the test's level. A flatter
scale (b < 1: self-absorbed strong lines) is not fitted: it would make more
weak lines "should be seen".

Applied under both emission source models (a lamp whose lines all lack
atomic data is predicted alike by both, and ``auto`` may pick
``lte-plasma`` for it), in the second evidence pass only.

Tune-set example (Goodman 1200M4 Ne lamp, full resolution): the Ne I lines
tabulated at half the strongest are seen 8–160× above their b = 1
prediction, lines tabulated at 0.05–0.075 of it at 0.07–0.8× or not at all;
27 of 59 groups missed cost −4.4 decades as independent misses.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from workbench.matching.species_scale import sorted_segment_medians, species_groups

__all__ = [
    "GRID",
    "LR_THRESHOLD",
    "MIN_FOUND",
    "ORDER_P",
    "contrast_exponents",
    "miss_prediction",
    "species_contrast",
]

#: Contrast exponents tried (1 = the source model as it stands).
GRID: tuple[float, ...] = (1.0, 1.25, 1.5, 2.0, 2.5, 3.0)
#: Log-likelihood gain over b = 1 needed to leave it (χ²₁ 95 % point / 2).
LR_THRESHOLD: float = 3.84 / 2.0
#: Fewest found groups measuring the fit.
MIN_FOUND: int = 4
#: One-sided Mann-Whitney p at which the found groups' strengths lie above
#: the missed groups' (:func:`_found_above_missed`; common practice, no source).
ORDER_P: float = 0.01

_LN10 = float(np.log(10.0))


def contrast_exponents(
    g_start: np.ndarray,
    g_end: np.ndarray,
    log_strength: np.ndarray,
    log_observed: np.ndarray,
    log_limit: np.ndarray,
    sigma_dex: np.ndarray,
    found: np.ndarray,
    missed: np.ndarray,
    loss_probability: float,
) -> np.ndarray:
    """Contrast exponent b per species (groups ``g_start[i]:g_end[i]``), 1 where not fitted.

    Parameters
    ----------
    g_start, g_end : numpy.ndarray of int
        Each species' groups (species after species).
    log_strength : numpy.ndarray
        log10 S per group (the species' strongest line 1).
    log_observed : numpy.ndarray
        log10 of the observed intensity over the instrument response
        (used where ``found``).
    log_limit : numpy.ndarray
        log10 of the detection limit over the instrument response (used
        where ``missed``).
    sigma_dex : numpy.ndarray
        The source model's σ per group (decades).
    found : numpy.ndarray of bool
        Found, unique, unsaturated groups of known strength.
    missed : numpy.ndarray of bool
        Groups of known strength without a peak.
    loss_probability : float
        ε, the chance that a line of a present species is lost regardless.

    Returns
    -------
    numpy.ndarray
        b per species, one of :data:`GRID` (1 where not fitted).
    """
    n_sp = g_start.size
    b_out = np.ones(n_sp)
    counts = g_end - g_start
    if not np.any(counts):
        return b_out
    seg, at = species_groups(g_start, g_end)
    x = log_strength[at]
    ok = np.isfinite(x)
    f = found[at] & ok & np.isfinite(log_observed[at])
    m = missed[at] & ok & np.isfinite(log_limit[at])
    n_f = np.bincount(seg[f], minlength=n_sp).astype(float)
    n_m = np.bincount(seg[m], minlength=n_sp).astype(float)
    # The order test can reach ORDER_P only if every found group ranked
    # above every missed one would: z_max = (n_f n_m / 2) / sd(U).
    z_max = np.sqrt(3.0 * n_f * n_m / np.maximum(n_f + n_m + 1.0, 1.0))
    fit = (n_f >= MIN_FOUND) & (n_m > 0) & (special.ndtr(-z_max) <= ORDER_P)
    if not np.any(fit):
        return b_out
    keep = fit[seg] & (f | m)
    s, x, f, m = seg[keep], x[keep], f[keep], m[keep]
    # The order test first (cheap): only species whose found groups are
    # tabulated above their missed ones go on to the likelihood fit.
    fit &= _found_above_missed(s, x, f, m, n_sp) <= ORDER_P
    if not np.any(fit):
        return b_out
    sub = fit[s]
    at_k = at[keep][sub]
    s, x, f, m = s[sub], x[sub], f[sub], m[sub]
    sig = sigma_dex[at_k]
    y = np.where(f, log_observed[at_k], np.nan)
    lim = np.where(m, log_limit[at_k], np.nan)
    loglik = np.full((len(GRID), n_sp), -np.inf)
    for j, b in enumerate(GRID):
        # Scale at this b: the median of log10(observed / S^b) over found groups.
        r = y - b * x
        order = np.lexsort((r[f], s[f]))
        # Every species fitted has found groups, so no median is empty.
        c = sorted_segment_medians(r[f][order], s[f][order], n_sp)
        pred = c[s] + b * x
        z_f = (y - pred) / sig
        ll_f = np.where(f, -0.5 * z_f**2 - np.log(sig * _LN10), 0.0)
        z_m = (lim - pred) / sig
        p_miss = loss_probability + (1.0 - loss_probability) * special.ndtr(np.where(m, z_m, 0.0))
        ll_m = np.where(m, np.log(p_miss), 0.0)
        loglik[j] = np.bincount(s, weights=ll_f + ll_m, minlength=n_sp)
    best = np.argmax(loglik, axis=0)
    gain = loglik[best, np.arange(n_sp)] - loglik[0]
    move = fit & (gain > LR_THRESHOLD)
    b_out[move] = np.asarray(GRID)[best[move]]
    return b_out


def _found_above_missed(
    s: np.ndarray, x: np.ndarray, f: np.ndarray, m: np.ndarray, n_sp: int
) -> np.ndarray:
    """One-sided Mann-Whitney p per species: found groups tabulated stronger than missed ones.

    Midranks of log10 S within each species (ties share their mean rank);
    the normal approximation of U without the tie correction (which would
    only lower the variance, so this p is conservative). 1 where a species
    has no found or no missed group.
    """
    # One sort by (species, strength): species codes are whole numbers and
    # |log10 S| is far below 1e3, so s·1e4 + x orders them as a lexsort would.
    order = np.argsort(s * 1.0e4 + np.clip(x, -1.0e3, 1.0e3))
    xs, ss = x[order], s[order]
    n = xs.size
    pos = np.arange(n, dtype=float)
    seg_start = np.searchsorted(ss, ss, side="left").astype(float)
    # Runs of equal (species, strength): each gets the mean position of its run.
    new_run = np.ones(n, dtype=bool)
    new_run[1:] = (ss[1:] != ss[:-1]) | (xs[1:] != xs[:-1])
    run_id = np.cumsum(new_run) - 1
    run_mean = np.bincount(run_id, weights=pos) / np.bincount(run_id)
    rank = run_mean[run_id] - seg_start + 1.0
    fo, mo = f[order], m[order]
    n_f = np.bincount(ss[fo], minlength=n_sp).astype(float)
    n_m = np.bincount(ss[mo], minlength=n_sp).astype(float)
    r_f = np.bincount(ss[fo], weights=rank[fo], minlength=n_sp)
    u = r_f - n_f * (n_f + 1.0) / 2.0
    mean = n_f * n_m / 2.0
    sd = np.sqrt(n_f * n_m * (n_f + n_m + 1.0) / 12.0)
    p = np.ones(n_sp)
    ok = (n_f > 0) & (n_m > 0) & (sd > 0)
    p[ok] = special.ndtr(-(u[ok] - mean[ok]) / sd[ok])
    return p


def species_contrast(
    g_start: np.ndarray,
    g_end: np.ndarray,
    g_strength: np.ndarray,
    g_known: np.ndarray,
    g_response: np.ndarray,
    g_intensity: np.ndarray,
    g_limit: np.ndarray,
    g_sigma: np.ndarray,
    *,
    usable_found: np.ndarray,
    missed: np.ndarray,
    loss_probability: float,
) -> np.ndarray:
    """:func:`contrast_exponents` from the evidence pass's per-group arrays.

    Strengths, observed intensities and detection limits per group
    (:func:`workbench.matching.evidence.gather_evidence`); intensities and
    limits are divided by the instrument response before the fit.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        log_s = np.where(g_known & (g_strength > 0), np.log10(g_strength), np.nan)
        log_i = np.log10(g_intensity / g_response)
        log_dl = np.log10(g_limit / g_response)
    return contrast_exponents(
        g_start, g_end, log_s, log_i, log_dl, g_sigma, usable_found, missed, loss_probability
    )


def miss_prediction(
    predicted: np.ndarray, strength: np.ndarray, known: np.ndarray, b: float
) -> np.ndarray:
    """Predicted heights for the missing-line penalty at contrast ``b`` (one species).

    Anchored at the species' strongest line: a group of strength S keeps its
    prediction times min(S, 1)^(b − 1), so the contrast lowers only the
    weaker lines and can excuse misses, never add any. ``b = 1`` returns
    ``predicted`` itself.
    """
    if b == 1.0:
        return predicted
    lower = np.minimum(np.where(known & (strength > 0), strength, 1.0), 1.0) ** (b - 1.0)
    return predicted * lower
