"""Chance and tail probabilities of the evidence model (pure statistics).

The three closed forms the class rules of :mod:`workbench.matching.scoring`
rest on, kept apart from the rules themselves: the exact tail probability of
a record of missed lines for a present species
(:func:`misses_tail_probability`), the closeness of found peaks to their
lines against chance (:func:`closeness_probability`) and Fisher's combination
of independent p-values (:func:`fisher_combined`, also used by
:mod:`workbench.matching.pooling`). Their meaning and worked examples are in
the scoring module's docstring and ``docs/evidence-model.md``.
"""

from __future__ import annotations

import numpy as np
from scipy import special

__all__ = [
    "CLOSENESS_FLOOR",
    "closeness_probability",
    "fisher_combined",
    "misses_tail_probability",
    "sidak_corrected",
    "simes_combined",
]

#: Rounding of the miss weights ln((1 − m)/m) in :func:`misses_tail_probability`
#: (nats): a twentieth of the weight of a surely-visible line (ln 4 = 1.39).
_MISS_WEIGHT_QUANTUM: float = 0.05
#: Most weighted groups for the exact convolution in misses_tail_probability;
#: beyond it the normal approximation (speed: a species with hundreds of
#: groups in a dense spectrum).
_EXACT_MAX_GROUPS: int = 40
#: Smallest closeness term c per group (closeness_probability): peak centres
#: and tabulated wavelengths are not known better than about a hundredth of
#: a half-window, so a closer coincidence is not counted as closer than that
#: (common practice, no source).
CLOSENESS_FLOOR: float = 0.01


def misses_tail_probability(p_miss: np.ndarray, missed: np.ndarray) -> float:
    """P(a record of misses at least this bad | the species is present), exact.

    Each group that should be seen is missed, if the species is present,
    with probability m_i = ε + (1 − ε)·Φ(z_i) (module docstring). How bad a
    record of misses is, is measured by its log-likelihood under "present",
    T = Σ_missed log m_i + Σ_found log(1 − m_i); equivalently by the weighted
    miss count W = Σ_missed w_i with w_i = ln((1 − m_i)/m_i) (a line that
    should surely be seen weighs most). The returned tail P(W ≥ W_obs) is
    computed exactly by convolution over the groups, with w_i rounded to
    :data:`_MISS_WEIGHT_QUANTUM` nats (w_i < 0, a group more likely missed
    than seen, weighs 0); beyond :data:`_EXACT_MAX_GROUPS` weighted groups
    by the normal approximation of W (a sum of many small independent
    terms), never below Π_missed m_i.

    Why a tail and not Σ log10 m_i over the missed groups: the chance
    probability (:func:`evaluate`) is a binomial tail over the same groups,
    which already charges the misses against the coincidence hypothesis
    (k of n found, not k of k). What the misses must add is whether they are
    *more than presence explains*: a species that loses 45 % of its groups
    where its model (σ and ε) expects 45 % to be lost (Fe I of a hollow
    cathode lamp, predicted by a 1.2-dex Boltzmann prior) has an ordinary
    record, while one whose two surely-visible strongest lines are both
    missing and nothing else was expected to be lost has a record present
    species give in 0.2 × 0.2 = 4 % of cases. The tail is never smaller than
    Π_missed m_i (the chance that at least those groups are missed), so the
    penalty is never harsher than the product of the single-line terms.

    Parameters
    ----------
    p_miss : numpy.ndarray
        m_i per group that should be seen.
    missed : numpy.ndarray of bool
        Which of them have no peak.

    Returns
    -------
    float
        The tail probability in (0, 1].
    """
    if not missed.any():
        return 1.0
    m = np.clip(p_miss, 1e-12, 1.0 - 1e-12)
    w = np.log((1.0 - m) / m)
    units = np.rint(np.maximum(w, 0.0) / _MISS_WEIGHT_QUANTUM).astype(np.int64)
    observed = int(units[missed].sum())
    if observed == 0:
        return 1.0
    keep = units > 0
    m, units = m[keep], units[keep]
    if units.size > _EXACT_MAX_GROUPS:
        # Many groups: W is a sum of many small independent terms, so its
        # distribution is close to normal (continuity-corrected by half a
        # unit); never below the chance that the missed groups are missed.
        mu = float(np.sum(m * units))
        sd = float(np.sqrt(np.sum(m * (1.0 - m) * units.astype(float) ** 2)))
        tail = float(special.ndtr(-(observed - 0.5 - mu) / sd)) if sd > 0 else 0.0
        return float(min(1.0, max(tail, float(np.prod(np.clip(p_miss[missed], 1e-12, 1.0))))))
    # Exact: the distribution of W below the observed value; what moves past
    # it is in the tail.
    dist = np.zeros(observed)
    dist[0] = 1.0
    for u, mi in zip(units.tolist(), m.tolist(), strict=True):
        shifted = dist[: observed - u] * mi if u < observed else None
        dist *= 1.0 - mi
        if shifted is not None:
            dist[u:] += shifted
    return float(min(1.0, max(1.0 - float(np.sum(dist)), 1e-300)))


def closeness_probability(
    offset_u: np.ndarray,
    window_u: np.ndarray,
    n_lines: np.ndarray,
    *,
    centre_u: float = 0.0,
    blend: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None = None,
    rho_tol: np.ndarray | None = None,
) -> float:
    """Chance probability that the found peaks lie as close to their lines as they do.

    The binomial chance probability only asks whether a peak fell inside a
    group's window. Where inside is evidence too: a real line's peak lies
    within the spectrum's positional accuracy of its reference (0.3 σ from
    it is far better evidence than 2.9 σ), while a chance peak falls
    anywhere in the window, uniformly. Offsets are measured from the
    spectrum's common offset ``centre_u`` (a residual wavelength-scale
    shift below the scale check's threshold moves every real line alike;
    :func:`workbench.matching.passes.offset_centre`). Per found group, with
    d = |u − centre| (u the peak's offset from its nearest line, in
    half-windows), the chance c that a uniform peak lies as close:

    * one line (window −1 … 1): c = (min(1, centre + d) − max(−1, centre − d)) / 2;
    * n lines over a window of W half-windows: c = min(1, 2·n·d / W) (the
      union of the n intervals, edges ignored).

    Under "absent" each c is uniform on (0, 1], so the probability that
    their product is as small as observed is Fisher's
    (:func:`fisher_combined`). It is combined with the binomial tail by
    Fisher's method too (given its window, a chance peak's place in it is
    independent of whether it was hit), and the multiple-testing correction
    then covers both. No positional accuracy has to be assumed: the
    statistic is exact under chance and gains power only where the
    spectrum's lines really sit close to their references. c is floored at
    :data:`CLOSENESS_FLOOR`.

    Parameters
    ----------
    offset_u : numpy.ndarray
        Peak − nearest line of the group, in half-windows.
    window_u : numpy.ndarray
        The group's window (2 + span / half-window).
    n_lines : numpy.ndarray
        Lines in the group.
    centre_u : float
        The spectrum's common offset (half-windows).
    blend : tuple of numpy.ndarray, optional
        Absorption (:func:`workbench.matching.absorption.blend_closeness_terms`):
        per group the peak's offset from its window's middle, the
        forward-modelled dip position and the tolerance, all in units of the
        window's half-length (NaN where the group is no unresolved blend),
        and the chance-dip density × tolerance. Where the first three are
        given, the fraction f of the window within d of the reference is
        measured from the dip position (shifted by the common offset). With
        the density, c is made exact for a *Poisson number* of chance dips in
        the window rather than one: the found peak is the nearest of them, so
        c = P(nearest within d | at least one) = (1 − e^(−a·f)) / (1 − e^(−a)),
        a the expected number of chance dips in the window (f when a → 0).
    rho_tol : numpy.ndarray, optional
        Without ``blend``: the expected number of chance peaks per
        half-window at each group (density × tolerance). The found peak is
        the *nearest* of all the peaks in the group's window (the layout
        keeps the pair of smallest offset), so with a = ``rho_tol`` × W
        chance peaks expected in the window, c = (1 − e^(−a·f)) / (1 − e^(−a))
        as above. Without it c is that of one uniform peak, which is right
        only where a window rarely holds more than one peak.

    Returns
    -------
    float
        The probability in (0, 1].
    """
    u = np.asarray(offset_u, dtype=float)
    ok = np.isfinite(u)
    if not np.any(ok):
        return 1.0
    u, w, n = u[ok], np.asarray(window_u)[ok], np.asarray(n_lines)[ok]
    d = np.abs(u - centre_u)
    single = (np.minimum(1.0, centre_u + d) - np.maximum(-1.0, centre_u - d)) / 2.0
    multi = np.minimum(1.0, 2.0 * n * d / w)
    c = np.where(n <= 1, single, multi)
    if blend is None and rho_tol is not None:
        a = np.asarray(rho_tol, dtype=float)[ok] * w
        a = np.where(np.isfinite(a) & (a > 0), a, 0.0)
        poisson = np.expm1(-a * c) / np.where(a > 0, np.expm1(-a), -1.0)
        c = np.where(a > 1e-9, poisson, c)
    if blend is not None:
        bu, bref, bunit, rho_tol = (np.asarray(a, dtype=float)[ok] for a in blend)
        use = np.isfinite(bu)
        ref = bref + centre_u * bunit
        db = np.abs(bu - ref)
        cb = (np.minimum(1.0, ref + db) - np.maximum(-1.0, ref - db)) / 2.0
        c = np.where(use, cb, c)
        # Window length in tolerances: 2 / unit for a blend (2H / tol), w otherwise.
        with np.errstate(invalid="ignore", divide="ignore"):
            a = rho_tol * np.where(use, 2.0 / bunit, w)
        a = np.where(np.isfinite(a) & (a > 0), a, 0.0)
        poisson = np.expm1(-a * c) / np.where(a > 0, np.expm1(-a), -1.0)
        c = np.where(a > 1e-9, poisson, c)
    return fisher_combined(np.clip(c, CLOSENESS_FLOOR, 1.0).tolist())


def fisher_combined(p_values: list[float]) -> float:
    """Fisher's combined probability for independent p-values (closed form).

    ``q = Πp_i``, ``P = q·Σ_{j<m} (−ln q)^j / j!``: the probability that the
    product of m independent uniform variables is at most q (Fisher 1932,
    *Statistical Methods for Research Workers*, §21.1 — from memory; checked
    against ``scipy.stats.combine_pvalues`` in the tests).

    Parameters
    ----------
    p_values : list of float
        Independent p-values in (0, 1].

    Returns
    -------
    float
        The combined probability.
    """
    if not p_values:
        return 1.0
    ln_q = float(np.sum(np.log(np.clip(p_values, 1e-300, 1.0))))
    if ln_q >= 0.0:
        return 1.0
    x = -ln_q
    term, total = 1.0, 1.0
    for j in range(1, len(p_values)):
        term *= x / j
        total += term
    return float(min(1.0, max(np.exp(ln_q + np.log(total)), 1e-300)))


def simes_combined(p_values: list[float]) -> float:
    """Simes' combined probability: min over i of m·p_(i)/i (p sorted ascending).

    Valid (never anti-conservative) for independent p-values and for
    positively dependent ones (Simes 1986, *Biometrika* 73, 751; Sarkar 1998
    for positive dependence — from memory), where Fisher's method overstates
    the evidence. It equals the smallest Benjamini–Hochberg adjusted p-value
    (checked against ``scipy.stats.false_discovery_control`` in the tests).

    Parameters
    ----------
    p_values : list of float
        p-values in (0, 1].

    Returns
    -------
    float
        The combined probability.
    """
    if not p_values:
        return 1.0
    p = np.sort(np.clip(np.asarray(p_values, dtype=float), 1e-300, 1.0))
    return float(min(1.0, np.min(p.size * p / np.arange(1, p.size + 1))))


def sidak_corrected(p: float, n_tests: int) -> float:
    """Šidák's correction: P(at least one of ``n_tests`` chance results this good), 1 − (1 − p)^n.

    Computed as −expm1(n·log1p(−p)) so that tiny ``p`` keep their precision
    (p is capped just below 1).
    """
    return float(-np.expm1(n_tests * np.log1p(-min(p, 1 - 1e-16))))
