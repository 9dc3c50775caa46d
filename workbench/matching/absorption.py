"""Absorption: the data test of an absorber that an abundance prior names in advance.

Under the ``absorption`` source model (:mod:`workbench.matching.sourcemodels`)
the observed features are dips of a continuum. At low resolution (the ASTM
G173 sunlight is sampled every 0.5–1 nm: 33 dips from 300 to 1000 nm) a
species' strongest absorption is often one dip made of several lines: Na I
D1 + D2, the Mg I b triplet, Ca II H with H I Hε. What the instrument
records of such a blend is the sum of its lines' absorption convolved with
the instrument profile; for lines closer than the resolution element (the
definition of a resolvable group, :mod:`workbench.matching.groups`) that sum
has one minimum, at the strength-weighted mean of the lines' positions (to
first order in the separation over the profile width; the strengths are the
source model's curve-of-growth strengths, i.e. the predicted equivalent
widths). That is the group's forward-modelled position.

An abundance prior may tip a call but not make one
(:func:`workbench.matching.prior_test.prior_capped`): a species it favours
needs its data alone to pass one pre-specified test at p ≤ 0.05. For an
absorption spectrum that test
(:func:`workbench.matching.prior_test.absorption_prior_test`) is the binomial
chance test of the evidence with two changes, both exact under chance:

* **Closeness to the blend's dip.** Fisher-combined with the binomial tail,
  the closeness probability (how likely chance dips would lie as close to
  the species' groups as the found ones do) measured, for a group whose lines
  lie within one resolution element, from its forward-modelled dip rather
  than from the nearest of its lines (Na I D in G173: the dip at 589.21 nm
  lies 0.21 nm from D2 but 0.07 nm from the blend's predicted minimum), and
  from the spectrum's common offset when it has been measured, else from
  zero (a pre-specified hypothesis needs no offset fitted to it; the
  wavelength-scale check has already applied any significant shift).
  Because the found dip is the *nearest* of a Poisson number of chance dips
  in the window, the closeness is P(nearest within d | at least one)
  (:func:`workbench.matching.chance.closeness_probability` with the
  density); taking it as one uniform dip is anti-conservative in crowded
  windows (``tests/matching/test_absorption.py`` checks uniformity).
* **Chance dips are dips that could be matched.** Dips set aside as bands
  (wider than ``BAND_WIDTH_FACTOR`` × the median width: telluric O₂/H₂O,
  molecular bands) or as artefacts are never matched, and where they lie no
  other dip was found: the density is that of the usable dips over the
  axis left free by the excluded ones (:func:`usable_density`).

* **Features inside chains.** At low resolution a line forest chains
  into groups tens of nm long (Fe I below 450 nm in G173: 110 and 184
  lines), whose closeness can only be measured from the nearest of many
  lines, so they carry almost nothing. What the instrument records of them
  is their absorption convolved with its profile: each line a Gaussian of
  the instrument's FWHM (:func:`instrument_fwhm`) with its curve-of-growth
  strength as depth, summed; the local maxima of that sum are the
  *features* it resolves (:func:`predicted_features`). Inside such chains
  the closeness is measured to the features (:func:`species_features`,
  :func:`feature_test`): a feature should be seen when its prominence at
  the species' scale reaches the detection limit, is found at the nearest
  usable dip within the half-window, and counts a dip once. The count (the
  binomial) stays the groups': one over the features, with one uniform
  chance density, raised false "probable" on the seeded mixtures (24
  mixtures, solar prior: 2 → 8), whereas the closeness needs chance dips
  uniform only within each window (on the same mixtures 2.5 % of absent
  prior-named species reach closeness ≤ 0.05).

The same test lets a prior-named absorber be "probable" on one resolvable
feature, its predicted strongest, found, unique and counted, or on two
features found inside its chains at distinct dips, one of them unique: at
low resolution a species' absorption often collapses into one or a few
features, as single-group families do at EDS resolution.

Why only for a prior-named species, not in the net evidence of every
species: used for every species (the closeness from the first pass at
offset zero, the usable density in every chance test), the same terms made
ASTM G173 H I "established" without a prior, but on seeded synthetic
absorption mixtures (``tests/matching/test_absorption_mixtures.py``) they
raised false calls at R = 500 from 0 to 2 "established" and from 1 to 20
"probable" (solar prior), and at R = 2000 gave Hg "probable" without a
prior: the reference set holds near-coincident lines of different species
(Hg II, not put in: six groups whose combined closeness probability was
0.0006), for which closeness is far from uniform. Restricted to the
pre-specified test, nothing changes without a prior. Constants: none
tuned (:data:`GRID_PER_FWHM` and :data:`KERNEL_SIGMAS` only set the forward
model's numerical accuracy).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import special

from workbench.matching.chance import CLOSENESS_FLOOR, fisher_combined
from workbench.matching.masking import wing_max
from workbench.peaks.extrema import local_maxima

__all__ = [
    "blend_closeness_terms",
    "feature_test",
    "instrument_fwhm",
    "predicted_features",
    "species_features",
    "usable_density",
]

#: Samples per instrument FWHM of the forward-model grid: the minimum of a
#: Gaussian sampled this finely is placed to well under 1 % of the FWHM by the
#: parabola through its three highest samples (arithmetic, no source).
GRID_PER_FWHM: int = 20
#: Half-width of the Gaussian kernel in σ: beyond 4σ it is below 3.4e-4 of its
#: peak (arithmetic).
KERNEL_SIGMAS: float = 4.0


def usable_density(
    density: float, excluded: np.ndarray | None, half_window: np.ndarray, span: float
) -> float:
    """Density of dips that can be matched, over the part of the axis they can lie in.

    Excluded dips (bands, artefacts) cannot be matched; they also occupy
    their own width (2 × half-window each), where no other dip was found.
    So the usable density is (usable dips) / (span − excluded widths), the
    latter kept at least half the span.

    Parameters
    ----------
    density : float
        Density of all observed peaks (per axis unit) over ``span``.
    excluded : numpy.ndarray of bool, optional
        Peaks never matched.
    half_window : numpy.ndarray
        Half-window per peak.
    span : float
        Axis span the density refers to.

    Returns
    -------
    float
        The usable density.
    """
    if excluded is None or not np.any(excluded) or span <= 0:
        return density
    n = excluded.size
    n_use = n - int(np.count_nonzero(excluded))
    free = max(span - float(np.sum(2.0 * half_window[excluded])), 0.5 * span)
    return float(n_use / free) * (density * span / n) if n else density


def blend_closeness_terms(
    group_position: np.ndarray,
    group_first: np.ndarray,
    group_span: np.ndarray,
    group_tolerance: np.ndarray,
    group_resolution: np.ndarray,
    peak_position: np.ndarray,
    found: np.ndarray,
    density: float,
) -> dict[str, np.ndarray]:
    """Per group: the found peak's offset from the blend's predicted dip, in window units.

    A group qualifies when its span (first to last line) is at most its
    resolution element: its lines make one dip at the strength-weighted mean
    position ``group_position`` (module docstring). Its window runs from the
    first line − tolerance to the last line + tolerance; with m the window's
    middle and H its half-length (tolerance + span / 2), offsets are in
    units of H:

    * ``blend_u``: (peak − m) / H, in [−1, 1] for a found peak;
    * ``blend_ref_u``: (dip position − m) / H;
    * ``blend_unit``: tolerance / H (the spectrum's common offset is
      measured in tolerances; this converts it).

    NaN for groups that do not qualify or have no peak. A single line is a
    group of span 0: its terms are the usual ones (u = offset / tolerance,
    reference 0, unit 1).

    Parameters
    ----------
    group_position : numpy.ndarray
        Strength-weighted mean position of each group.
    group_first : numpy.ndarray
        Position of each group's first (lowest) line.
    group_span : numpy.ndarray
        Extent of each group (last − first line).
    group_tolerance : numpy.ndarray
        Half-window at each group.
    group_resolution : numpy.ndarray
        Resolution element at each group.
    peak_position : numpy.ndarray
        Position of the group's best peak (ignored where not ``found``).
    found : numpy.ndarray of bool
        Groups with a peak.
    density : float
        Density of chance dips (per axis unit, :func:`usable_density`).

    Returns
    -------
    dict of str to numpy.ndarray
        ``blend_u``, ``blend_ref_u``, ``blend_unit``, and ``blend_rho_tol``
        (density × tolerance, for every found group: the expected number of
        chance dips per tolerance, used to make closeness honest in crowded
        windows, see :func:`workbench.matching.chance.closeness_probability`).
    """
    half = group_tolerance + group_span / 2.0
    ok = found & (group_span <= group_resolution) & (half > 0)
    safe = np.where(ok, half, 1.0)
    mid = group_first + group_span / 2.0
    nan = np.full(half.shape, np.nan)
    u = np.where(ok, (peak_position - mid) / safe, nan)
    ref = np.where(ok, (group_position - mid) / safe, nan)
    unit = np.where(ok, group_tolerance / safe, nan)
    rho_tol = np.where(found, density * group_tolerance, nan)
    return {"blend_u": u, "blend_ref_u": ref, "blend_unit": unit, "blend_rho_tol": rho_tol}


def instrument_fwhm(resolution: np.ndarray, usable: np.ndarray) -> float:
    """The instrument's resolution element (FWHM, axis unit): the median over usable dips.

    Each dip's measured width is the instrument profile widened by whatever
    the dip blends; most dips of a low-resolution spectrum are one
    resolution element wide (G173: 2.0 nm at its 1 nm sampling, the floor of
    two samples), so the median is the profile, not the blends (bands and
    artefacts, left out, are wider still).

    Parameters
    ----------
    resolution : numpy.ndarray
        Resolution element (≈ FWHM) per dip.
    usable : numpy.ndarray of bool
        Dips that can be matched.

    Returns
    -------
    float
        The FWHM (NaN without usable dips).
    """
    r = resolution[usable & np.isfinite(resolution) & (resolution > 0)]
    return float(np.median(r)) if r.size else float("nan")


def predicted_features(
    line_position: np.ndarray, strength: np.ndarray, fwhm: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The dips a species' lines make at the instrument's resolution.

    The species' absorption is forward-modelled as the instrument sees it:
    each line a Gaussian of the instrument's FWHM whose depth is its
    curve-of-growth strength (so an isolated line's feature has its own
    strength, and lines at one position add, as the groups' strengths do),
    summed. The features are the local maxima of that sum (the minima of
    the transmission): their positions (refined by a parabola through the
    three highest samples), depths and prominences (depth above the higher
    of the two saddles that separate the feature from stronger ones; a
    shoulder is not a dip of its own). A close doublet makes one feature at
    its forward-modelled minimum; a line forest (Fe I below 450 nm) makes
    as many features as the instrument can resolve, not one chain tens of
    nm long.

    Parameters
    ----------
    line_position : numpy.ndarray
        Line positions (axis unit).
    strength : numpy.ndarray
        Predicted strength per line (NaN or ≤ 0: contributes nothing).
    fwhm : float
        Instrument FWHM (axis unit).

    Returns
    -------
    tuple of numpy.ndarray
        Position, depth and prominence of each feature, by position.
    """
    w = np.where(np.isfinite(strength) & (strength > 0), strength, 0.0)
    keep = w > 0
    x_l, w = np.asarray(line_position, dtype=float)[keep], w[keep]
    if x_l.size == 0 or not np.isfinite(fwhm) or fwhm <= 0:
        return np.zeros(0), np.zeros(0), np.zeros(0)
    order = np.argsort(x_l, kind="stable")
    x_l, w = x_l[order], w[order]
    sigma = fwhm / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    # Lines farther apart than twice the kernel's reach do not touch: each
    # such cluster is modelled alone (a lone line is its own feature), so
    # the grid covers the lines' neighbourhoods, not the whole axis.
    cut = np.flatnonzero(np.diff(x_l) > 2.0 * KERNEL_SIGMAS * sigma) + 1
    starts = np.concatenate(([0], cut))
    ends = np.append(cut, x_l.size)
    lone = ends - starts == 1
    pos = [x_l[starts[lone]]]
    depth = [w[starts[lone]]]
    prom = [w[starts[lone]]]
    for a, b in zip(starts[~lone].tolist(), ends[~lone].tolist(), strict=True):
        p_c, d_c, r_c = _cluster_features(x_l[a:b], w[a:b], fwhm, sigma)
        pos.append(p_c)
        depth.append(d_c)
        prom.append(r_c)
    pos_a = np.concatenate(pos)
    o = np.argsort(pos_a, kind="stable")
    return pos_a[o], np.concatenate(depth)[o], np.concatenate(prom)[o]


def _prominences(a: np.ndarray, peaks: np.ndarray) -> np.ndarray:
    """Prominence of each local maximum of ``a`` (which is 0 at both ends).

    The usual definition (as :func:`workbench.peaks.extrema.peak_prominences`
    with an unlimited window), walked over the maxima and the minima between
    them instead of over every sample.
    """
    h = a[peaks]
    valley = np.minimum.reduceat(a, peaks)[:-1] if peaks.size > 1 else np.zeros(0)
    left_end, right_end = float(a[: peaks[0] + 1].min()), float(a[peaks[-1] :].min())
    n = peaks.size
    prom = np.empty(n)
    for i in range(n):
        m_left = np.inf
        j = i - 1
        while j >= 0:
            m_left = min(m_left, valley[j])
            if h[j] > h[i]:
                break
            j -= 1
        else:
            m_left = min(m_left, left_end)
        m_right = np.inf
        j = i + 1
        while j < n:
            m_right = min(m_right, valley[j - 1])
            if h[j] > h[i]:
                break
            j += 1
        else:
            m_right = min(m_right, right_end)
        prom[i] = h[i] - max(m_left, m_right)
    return prom


def _cluster_features(
    x_l: np.ndarray, w: np.ndarray, fwhm: float, sigma: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Features of one cluster of touching lines (:func:`predicted_features`)."""
    step = fwhm / GRID_PER_FWHM
    half = int(np.ceil(KERNEL_SIGMAS * sigma / step))
    x0 = float(x_l[0]) - (half + 2) * step
    n = int(np.ceil((float(x_l[-1]) - x0) / step)) + half + 3
    # Each line shared between its two neighbouring grid samples (linear),
    # then the Gaussian profile of peak 1 laid over the grid.
    t = (x_l - x0) / step
    i = np.floor(t).astype(np.int64)
    frac = t - i
    grid = np.bincount(i, weights=w * (1.0 - frac), minlength=n + 1)[:n]
    grid += np.bincount(i + 1, weights=w * frac, minlength=n + 1)[:n]
    kernel = np.exp(-0.5 * ((np.arange(-half, half + 1) * step) / sigma) ** 2)
    a = np.convolve(grid, kernel, mode="same")
    peaks = local_maxima(a)
    if peaks.size == 0:
        return np.zeros(0), np.zeros(0), np.zeros(0)
    # The cluster's ends fall to zero (the margin is wider than the kernel),
    # so prominences within it are those on the whole axis.
    prom = _prominences(a, peaks)
    y0, y1, y2 = a[peaks - 1], a[peaks], a[peaks + 1]
    den = y0 - 2.0 * y1 + y2
    shift = np.where(den < 0, 0.5 * (y0 - y2) / np.where(den < 0, den, -1.0), 0.0)
    pos = x0 + (peaks + np.clip(shift, -0.5, 0.5)) * step
    return pos, y1, prom


def species_features(
    obs: Any,
    line_position: np.ndarray,
    strength: np.ndarray,
    *,
    fwhm: float,
    scale: float | None,
    response: tuple[np.ndarray, np.ndarray],
    strong_fraction: float,
    density: float,
    chains: tuple[np.ndarray, np.ndarray] | None = None,
) -> dict[str, Any]:
    """One species' predicted features and the dips found at them.

    Features come from :func:`predicted_features`. A feature should be seen
    when its prominence, at the species' intensity scale and the instrument
    response, reaches the detection limit there (without intensities: when
    it is at least ``strong_fraction`` of the species' strongest line, as
    for groups). It is found when a usable dip lies within the half-window
    there (the nearest such dip is its dip), and, as for groups, left out of
    the test ("crowded" when found, "masked" when not) when a dip at least
    as deep as predicted lies within three half-windows but outside its own.
    Two features never count one dip twice: the weaker is left out.

    Parameters
    ----------
    obs : ObservedLines
        The observed dips (:class:`workbench.matching.evidence.ObservedLines`).
    line_position, strength : numpy.ndarray
        The species' usable lines and their predicted strengths.
    fwhm : float
        Instrument FWHM (:func:`instrument_fwhm`).
    scale : float or None
        The species' intensity scale (None without one).
    response : tuple of numpy.ndarray
        Positions and relative instrument response at them (the species'
        groups), interpolated to the features.
    strong_fraction : float
        Visibility threshold without intensities.
    density : float
        Density of usable chance dips (:func:`usable_density`).
    chains : tuple of numpy.ndarray, optional
        Windows (low, high ends) of the species' groups that chain beyond a
        resolution element; ``in_chain`` marks the features inside them.

    Returns
    -------
    dict of str to numpy.ndarray
        ``position``, ``prominence``, ``predicted``, ``scale`` (measured
        on the features; None without intensities), ``tolerance``,
        ``visible``, ``found``, ``dip`` (−1 where none), ``counted``
        (visible and neither masked nor crowded nor a repeated dip),
        ``in_chain``,
        ``p_hit`` (chance of a usable dip within the half-window) and
        ``offset_u`` (dip − feature, in half-windows).
    """
    pos, _, prom = predicted_features(line_position, strength, fwhm)
    x = obs.position
    tol = np.interp(pos, x, obs.half_window) if pos.size else np.zeros(0)
    resp = np.interp(pos, response[0], response[1]) if response[0].size else np.ones(pos.size)
    usable = ~obs.excluded if obs.excluded is not None else np.ones(x.size, dtype=bool)
    xu = x[usable]
    iu = np.flatnonzero(usable)
    dip = np.full(pos.size, -1, dtype=np.int64)
    offset = np.full(pos.size, np.nan)
    if xu.size and pos.size:
        j = np.clip(np.searchsorted(xu, pos), 1, max(xu.size - 1, 1)).astype(np.int64)
        j = np.minimum(j, xu.size - 1)
        # The nearer of the two usable dips around the feature.
        left = np.maximum(j - 1, 0)
        j = np.where(np.abs(xu[left] - pos) <= np.abs(xu[j] - pos), left, j)
        d = xu[j] - pos
        hit = np.abs(d) <= tol
        dip = np.where(hit, iu[j], -1)
        offset = np.where(hit, d / tol, np.nan)
    found = dip >= 0
    inten = obs.intensity
    if scale is not None and obs.detection_limit is not None:
        # The species' scale measured on its features: the groups' scale
        # rests on summed strengths, which a chain of lines tens of nm long
        # (Fe I) inflates far beyond any dip it makes. Measured, as for
        # groups, on the found features of its strong lines (prominence at
        # least strong_fraction of its most prominent feature).
        strong = found & (prom >= strong_fraction * prom.max())
        ratio = inten[dip[strong]] / (prom[strong] * resp[strong])
        ratio = ratio[np.isfinite(ratio) & (ratio > 0)]
        if ratio.size:
            scale = float(np.exp(np.median(np.log(ratio))))
        predicted = scale * prom * resp
        visible = predicted >= obs.detection_limit_at(pos)
    else:
        scale = None
        predicted = prom.copy()
        visible = prom >= strong_fraction
    # Crowded / masked: a dip as deep as predicted beside the window (the
    # groups' rule, workbench.matching.evidence).
    near = np.zeros(pos.size, dtype=bool)
    if scale is not None and np.any(np.isfinite(inten)):
        padded = np.append(np.nan_to_num(inten, nan=-np.inf), -np.inf)
        side, _, _ = wing_max(x, padded, pos, tol)
        near = visible & (side >= predicted)
    counted = visible & ~near
    # One dip counts once: the feature with the larger prediction keeps it.
    order = np.argsort(-predicted, kind="stable")
    taken: set[int] = set()
    for f in order.tolist():
        if counted[f] and found[f]:
            if int(dip[f]) in taken:
                counted[f] = False
            taken.add(int(dip[f]))
    in_chain = np.zeros(pos.size, dtype=bool)
    if chains is not None and chains[0].size and pos.size:
        lo, hi = chains
        in_chain = np.any((pos[:, None] >= lo[None, :]) & (pos[:, None] <= hi[None, :]), axis=1)
    return {
        "in_chain": in_chain,
        "position": pos,
        "prominence": prom,
        "predicted": predicted,
        "scale": scale,
        "tolerance": tol,
        "visible": visible,
        "found": found,
        "dip": dip,
        "counted": counted,
        "p_hit": 1.0 - np.exp(-density * 2.0 * tol),
        "offset_u": offset,
    }


def feature_test(
    features: dict[str, Any],
    centre_u: float = 0.0,
    unique_dips: np.ndarray | None = None,
    explained_dips: np.ndarray | None = None,
) -> dict[str, float]:
    """How the dips sit at a species' predicted features, as chance probabilities.

    Over the counted features (:func:`species_features`):

    * ``binomial``: the tail of k found of n, each hit with chance
      1 − exp(−ρ·2·tol) (ρ the usable dip density) — exact only if chance
      dips are uniform along the axis;
    * ``closeness``: how close the found dips lie to the features' positions
      (measured from the spectrum's common offset ``centre_u``, in
      half-windows), Fisher-combined over the found features, each made
      exact for the nearest of a Poisson number of chance dips: c =
      (1 − e^(−a·f)) / (1 − e^(−a)), f the part of the window within the
      dip's distance, a the expected chance dips in the window
      (:func:`workbench.matching.chance.closeness_probability`). It needs
      chance dips uniform only within each window.

    Parameters
    ----------
    features : dict
        :func:`species_features`.
    centre_u : float
        The spectrum's common offset (half-windows), 0 when not measured.
    unique_dips : numpy.ndarray of int, optional
        Dips no other plausible species competes for (the peaks of the
        species' unique groups, as the joint explanation leaves them).
    explained_dips : numpy.ndarray of int, optional
        Dips a better-supported species explains (the peaks of the species'
        explained groups and of none of its other groups): features at them
        are left out, as explained groups are.

    Returns
    -------
    dict of str to float
        ``binomial`` and ``closeness`` (probabilities in (0, 1]), ``k``
        (found counted features), ``n`` (counted features) and ``unique``
        (distinct unique dips among the found ones).
    """
    dip = features["dip"]
    counted = features["counted"] & features["in_chain"]
    if explained_dips is not None and explained_dips.size:
        counted = counted & ~(features["found"] & np.isin(dip, explained_dips))
    hit = counted & features["found"]
    n = int(np.count_nonzero(counted))
    k = int(np.count_nonzero(hit))
    if k == 0:
        return {"binomial": 1.0, "closeness": 1.0, "k": 0, "n": n, "unique": 0}
    p = float(special.betainc(k, n - k + 1, float(np.mean(features["p_hit"][counted]))))
    d = np.abs(features["offset_u"][hit] - centre_u)
    f = (np.minimum(1.0, centre_u + d) - np.maximum(-1.0, centre_u - d)) / 2.0
    a = -np.log1p(-np.minimum(features["p_hit"][hit], 1.0 - 1e-12))
    c = np.where(a > 1e-9, np.expm1(-a * f) / np.expm1(-np.maximum(a, 1e-300)), f)
    close = fisher_combined(np.clip(c, CLOSENESS_FLOOR, 1.0).tolist())
    unique = np.isin(dip, unique_dips) if unique_dips is not None else np.zeros(dip.size, bool)
    n_unique = int(np.unique(dip[hit & unique]).size)
    return {"binomial": p, "closeness": close, "k": k, "n": n, "unique": n_unique}
