"""Gather per-species evidence from candidate pairs: groups, likelihood, chance (one pass).

Per species, the evidence is counted per *resolvable group*
(:mod:`workbench.matching.groups`), never per reference line, and combined
as in :mod:`workbench.matching.scoring`:

* the species' intensity scale is the median of observed / predicted over
  its found, unsaturated groups that no other competing species shares;
  the prediction is the group's strength (:mod:`workbench.matching.sourcemodels`)
  times the instrument response at its position
  (:mod:`workbench.matching.response`);
* a group *should be seen* when predicted at or above the detection limit
  (with intensities), or when its strength is at least ``strong_fraction``
  of the species' strongest (without intensities);
* a group that should be seen and has no peak is *missing*, unless an
  observed peak at least as strong as its prediction lies within three
  half-windows (it may hide in that wing: *masked*, counted neither way);
* the chance probability and the missing-line penalty are computed from
  these (see :mod:`workbench.matching.scoring`).

With the ``x-ray`` source model on an energy axis (``xray=True``) the scale
is that of the family's strongest found group (the best predicted and best
measured line; a weak line sitting on another element's peak cannot inflate
it), and each group carries what the X-ray agreement terms of
:mod:`workbench.matching.scoring` need (:func:`_xray_terms`).

Everything is vectorised over pairs and groups; the only Python loop is over
species with at least one candidate (tens to a few hundred), with slices of
species-sorted arrays. Per-species group arrays are kept on the evidence
(``SpeciesEvidence.groups``) so that the joint step
(:mod:`workbench.matching.joint`) can re-evaluate a species cheaply.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.matching.candidates import CandidatePairs, find_candidates
from workbench.matching.groups import resolvable_groups
from workbench.matching.priors import prior_dex
from workbench.matching.reference import ReferenceIndex
from workbench.matching.scoring import SpeciesEvidence, evaluate

__all__ = [
    "XRAY_CALIBRATION_SIGMA_EV",
    "XRAY_LINE_SIGMA_EV",
    "EvidencePass",
    "ObservedLines",
    "gather_evidence",
]


@dataclass(frozen=True)
class ObservedLines:
    """Observed peaks as arrays (axis unit), as the engine sees them."""

    position: np.ndarray
    intensity: np.ndarray  # NaN where unknown
    half_window: np.ndarray
    saturated: np.ndarray  # bool
    detection_limit: float | None  # intensity units; None when intensities are unknown
    tolerance: object = None  # the resolved ToleranceSpec
    excluded: np.ndarray | None = None  # bool: artefact peaks (escape, sum, ...) not to match
    resolution: np.ndarray | None = None  # resolution element (≈ FWHM) per peak; None = window
    detection_curve: tuple[np.ndarray, np.ndarray] | None = None  # (x, limit) where it varies

    def detection_limit_at(self, x: np.ndarray) -> np.ndarray:
        """Detection limit at positions ``x`` (the scalar limit where no curve is known)."""
        if self.detection_curve is not None:
            cx, cy = self.detection_curve
            return np.interp(x, cx, cy)
        return np.full(np.shape(x), self.detection_limit, dtype=float)


@dataclass
class EvidencePass:
    """Result of one evidence pass."""

    evidence: dict[int, SpeciesEvidence]
    pairs: CandidatePairs  # ref indices are global (into the ReferenceIndex)
    pair_species: np.ndarray
    pair_competes: np.ndarray  # bool: the pair's group is strong enough to compete
    strengths: np.ndarray  # expected strength per reference line
    in_range: np.ndarray
    usable: np.ndarray
    n_species_tried: int = 0
    density: float = 0.0
    span: float = 0.0
    sorted_intensity: np.ndarray | None = None


def _range_max(padded: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Maximum of ``padded[lo:hi]`` per window (−inf for empty windows), vectorised.

    ``padded`` ends with a −inf sentinel so that ``hi`` may equal the data length.
    """
    if lo.size == 0:
        return np.empty(0)
    idx = np.column_stack([lo, hi]).ravel()
    out = np.maximum.reduceat(padded, idx)[::2]
    return np.where(hi > lo, out, -np.inf)


def _pearson(a: np.ndarray, b: np.ndarray) -> float | None:
    if a.size < 3:
        return None
    da, db = a - a.mean(), b - b.mean()
    den = float(np.sqrt(np.dot(da, da) * np.dot(db, db)))
    return float(np.dot(da, db) / den) if den > 0 else None


def _median(a: np.ndarray) -> float:
    """Median of a small 1-D array (np.median's overhead dominates at this size)."""
    s = np.sort(a)
    n = s.size
    return float(0.5 * (s[(n - 1) // 2] + s[n // 2]))


#: Residual energy-scale error on an energy axis (eV, 1σ): the scale check
#: applies a correction only beyond 20 eV (``workbench.xray.energy_scale.
#: MIN_SIGNIFICANT_EV``), so an unapplied offset lies within about ±20 eV,
#: taken as 2σ (common practice, no source).
XRAY_CALIBRATION_SIGMA_EV: float = 10.0
#: Uncertainty of tabulated X-ray line energies (eV, 1σ): Deslattes et al.,
#: Rev. Mod. Phys. 75 (2003) 35 give K and L diagram lines to well under
#: 1 eV; 2 eV allows for the Elam compilation's rounding (from memory).
XRAY_LINE_SIGMA_EV: float = 2.0


def _xray_terms(
    obs: ObservedLines,
    index: ReferenceIndex,
    g: dict,
    tol: np.ndarray,
    span: np.ndarray,
    dl: np.ndarray | None,
) -> dict[str, np.ndarray]:
    """Per-group quantities for the X-ray agreement terms (``scoring``).

    * ``delta``: observed peak − the group's strongest line (eV). The maximum
      of an unresolved blend sits between its strongest line and the
      strength-weighted mean, so that distance enters the uncertainty.
    * ``sigma_pos``: √(calibration² + line² + blend² + peak²), the peak
      term (FWHM/2.355)/√SNR with SNR = 3·I/DL (DL = 3 × noise, so SNR is
      height / noise): the top of a noisy Gaussian peak wanders where the
      peak is within about one noise unit of its maximum,
      |x| ≲ σ·√(2/SNR) (derivation, no source), which for weak peaks is far
      more than the centroid's counting error.
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
    res = obs.resolution if obs.resolution is not None else 2.0 * obs.half_window
    inten = obs.intensity[pk]
    if dl is not None:
        snr = np.where(np.isfinite(inten) & (inten > 0), 3.0 * inten / dl, 1.0)
    else:
        snr = np.ones(found.size)
    sig_c = (res[pk] / 2.355) / np.sqrt(np.maximum(snr, 1.0))
    blend = g["position"] - rep_pos
    sigma_pos = np.sqrt(XRAY_CALIBRATION_SIGMA_EV**2 + XRAY_LINE_SIGMA_EV**2 + blend**2 + sig_c**2)
    i_max = float(np.nanmax(obs.intensity)) if np.any(np.isfinite(obs.intensity)) else np.nan
    floor = np.maximum(0.3 * g["predicted"], dl if dl is not None else 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_range = np.log10(i_max / floor)
    log_range = np.where(np.isfinite(log_range), np.maximum(log_range, 0.5), 0.5)
    return {
        "delta": np.where(found, x_obs - rep_pos, np.nan),
        "sigma_pos": sigma_pos,
        "window": 2.0 * tol + span,
        "log_range": log_range,
        "obs_intensity": np.where(found, inten, np.nan),
        "saturated": np.where(found, obs.saturated[pk], False),
        "snr": np.where(found, snr, 0.0),
    }


def gather_evidence(
    obs: ObservedLines,
    index: ReferenceIndex,
    strengths: np.ndarray,
    in_range: np.ndarray,
    *,
    strong_fraction: float,
    min_rel_intensity: float,
    competitor_min_rel: float,
    sigma_dex: float,
    response: np.ndarray | None = None,
    plausible: set[int] | None = None,
    n_species_tried: int | None = None,
    abundance_prior: str = "none",
    sigma_lines: np.ndarray | None = None,
    xray: bool = False,
) -> EvidencePass:
    """Collect the evidence of every species with at least one candidate.

    Parameters
    ----------
    obs : ObservedLines
        The observed peaks.
    index : ReferenceIndex
        Reference lines.
    strengths : numpy.ndarray
        Predicted relative strength per reference line (NaN = unknown).
    in_range : numpy.ndarray of bool
        Reference lines inside the observed range.
    strong_fraction, min_rel_intensity, competitor_min_rel : float
        Thresholds (see :mod:`workbench.matching.scoring`).
    sigma_dex : float
        Uncertainty of the source model's predicted log-intensity (decades).
    response : numpy.ndarray, optional
        Relative instrument response per reference line (1 = flat).
    plausible : set of int, optional
        Species codes that may compete for a peak; all species when omitted
        (first pass).
    n_species_tried : int, optional
        Species tried, for the multiple-testing correction; by default the
        number of species with at least one candidate in this pass.
    abundance_prior : str
        ``none``, ``crustal`` or ``solar`` (:mod:`workbench.matching.priors`).
    sigma_lines : numpy.ndarray, optional
        Per-line uncertainty (dex) where it differs from ``sigma_dex``
        (:func:`workbench.matching.sourcemodels.model_sigma`).
    xray : bool
        The ``x-ray`` source model on an energy axis: the scale is that of
        the strongest found group (no median, no censoring) and each group carries what the
        agreement terms of :mod:`workbench.matching.scoring` need (offset of
        its peak from its strongest line, position uncertainty, window, the
        log-intensity range of chance peaks).

    Returns
    -------
    EvidencePass
    """
    e = strengths
    e_zero = np.where(np.isfinite(e), e, 0.0)
    usable = in_range & (~np.isfinite(e) | (e >= min_rel_intensity))
    # Lines sorted by (species, position): groups are contiguous per species.
    usable_idx = np.flatnonzero(usable)
    usable_idx = usable_idx[np.lexsort((index.position[usable_idx], index.species[usable_idx]))]
    u_pos = index.position[usable_idx]
    u_sp = index.species[usable_idx]
    res = obs.resolution if obs.resolution is not None else obs.half_window
    gid = resolvable_groups(u_sp, u_pos, np.interp(u_pos, obs.position, res))
    n_groups = int(gid[-1]) + 1 if gid.size else 0
    line_group = np.full(index.n_lines, -1, dtype=np.int64)
    line_group[usable_idx] = gid
    u_e = e_zero[usable_idx]
    g_strength = np.bincount(gid, weights=u_e, minlength=n_groups)
    g_known = np.bincount(gid, weights=np.isfinite(e[usable_idx]), minlength=n_groups) > 0
    g_count = np.bincount(gid, minlength=n_groups)
    g_pos = np.where(
        g_strength > 0,
        np.bincount(gid, weights=u_e * u_pos, minlength=n_groups) / np.maximum(g_strength, 1e-300),
        np.bincount(gid, weights=u_pos, minlength=n_groups) / np.maximum(g_count, 1),
    )
    g_species = np.zeros(n_groups, dtype=np.int64)
    g_species[gid] = u_sp
    # Strongest line of each group: it stands for the group in the evidence.
    strongest = np.lexsort((-u_e, gid))
    g_rep = np.full(n_groups, -1, dtype=np.int64)
    g_first_line = np.unique(gid[strongest], return_index=True)[1]
    g_rep[gid[strongest][g_first_line]] = usable_idx[strongest][g_first_line]
    g_tol = np.interp(g_pos, obs.position, obs.half_window)
    # Extent of each group (lines are sorted within it): a chain of close lines
    # is easier to hit by chance, so its window is its span plus the tolerance.
    g_first_i = np.flatnonzero(np.diff(np.concatenate(([-1], gid))) != 0)
    g_last_i = np.append(g_first_i[1:] - 1, gid.size - 1) if gid.size else g_first_i
    g_span = u_pos[g_last_i] - u_pos[g_first_i] if gid.size else np.zeros(0)
    if response is None:
        g_resp = np.ones(n_groups)
    else:
        g_resp = np.bincount(gid, weights=response[usable_idx] * np.maximum(u_e, 1e-300))
        g_resp = g_resp / np.bincount(gid, weights=np.maximum(u_e, 1e-300), minlength=n_groups)

    # Candidate pairs over usable lines (sorted by position for the search).
    by_pos = np.argsort(index.position[usable_idx], kind="stable")
    search_idx = usable_idx[by_pos]
    local = find_candidates(obs.position, obs.half_window, index.position[search_idx])
    ref = search_idx[local.ref]
    if obs.excluded is not None and np.any(obs.excluded):
        keep = ~obs.excluded[local.obs]
        local = CandidatePairs(obs=local.obs[keep], ref=local.ref[keep], delta=local.delta[keep])
        ref = ref[keep]
    pairs = CandidatePairs(obs=local.obs, ref=ref, delta=local.delta)
    sp = index.species[ref]
    grp = line_group[ref]
    competes = ~g_known[grp] | (g_strength[grp] >= competitor_min_rel)
    if plausible is not None:
        competes &= np.isin(sp, np.fromiter(plausible, dtype=np.int64, count=len(plausible)))

    n_obs = obs.position.size
    comp_keys = np.unique(pairs.obs[competes].astype(np.int64) * index.n_species + sp[competes])
    n_comp = np.bincount(comp_keys // index.n_species, minlength=n_obs)

    # Best peak per group: smallest |delta| among the group's pairs.
    order = np.lexsort((np.abs(pairs.delta), grp))
    g_first, first_at = np.unique(grp[order], return_index=True)
    g_peak = np.full(n_groups, -1, dtype=np.int64)
    g_peak[g_first] = pairs.obs[order[first_at]]
    g_line = np.full(n_groups, -1, dtype=np.int64)  # the line nearest its peak
    g_line[g_first] = pairs.ref[order[first_at]]
    # Optical closeness (scoring.closeness_probability): the found peak's
    # offset from its nearest line, in half-windows.
    g_offset = np.full(n_groups, np.nan)
    g_offset[g_first] = pairs.delta[order[first_at]]
    found = g_peak >= 0
    pk = np.where(found, g_peak, 0)
    key = pk.astype(np.int64) * index.n_species + g_species
    pos_k = np.minimum(np.searchsorted(comp_keys, key), max(comp_keys.size - 1, 0))
    own = (comp_keys[pos_k] == key) if comp_keys.size else np.zeros(n_groups, dtype=bool)
    g_unique = found & (n_comp[pk] - own.astype(np.int64) == 0)

    # Peak density and comparable-strength look-up for the chance probability.
    span = float(obs.position[-1] - obs.position[0]) + 2.0 * float(np.median(obs.half_window))
    density = n_obs / span if span > 0 else 0.0
    sorted_intensity = np.sort(obs.intensity[np.isfinite(obs.intensity)])
    intensity_padded = np.append(
        np.where(np.isfinite(obs.intensity), obs.intensity, -np.inf), -np.inf
    )
    has_int = obs.detection_limit is not None and sorted_intensity.size > 0

    species_present = np.unique(sp)
    n_tried = int(n_species_tried or species_present.size)
    g_start = np.searchsorted(g_species, species_present, side="left")
    g_end = np.searchsorted(g_species, species_present, side="right")
    # Reference lines per species (all in range, usable or not): report counts.
    in_counts = np.bincount(index.species[in_range], minlength=index.n_species)

    # Found lines per species for the report: every (line, best peak) pair of the species.
    order_l = np.lexsort((np.abs(pairs.delta), ref, sp))
    sp_sorted = sp[order_l]
    l_start = np.searchsorted(sp_sorted, species_present, side="left")
    l_end = np.searchsorted(sp_sorted, species_present, side="right")

    evidence: dict[int, SpeciesEvidence] = {}
    for code, ga, gb, la, lb in zip(
        species_present.tolist(),
        g_start.tolist(),
        g_end.tolist(),
        l_start.tolist(),
        l_end.tolist(),
        strict=True,
    ):
        sl = slice(ga, gb)
        G = g_strength[sl]
        known = g_known[sl]
        fnd = found[sl]
        peak = g_peak[sl]
        uniq = g_unique[sl]
        resp = g_resp[sl]
        I_p = np.where(fnd, obs.intensity[np.where(fnd, peak, 0)], np.nan)
        sat = np.where(fnd, obs.saturated[np.where(fnd, peak, 0)], False)
        ev = SpeciesEvidence(
            code=code,
            label=index.species_names[code],
            element=index.species_element[code],
            ion=index.species_ion[code],
            family=index.species_family[code],
            n_lines_in_range=int(in_counts[code]),
        )
        # Scale from found, unsaturated, known groups (unique ones when there are any).
        pred_unit = G * resp
        good = fnd & known & np.isfinite(I_p) & (I_p > 0) & ~sat & (pred_unit > 0)
        use = good & uniq if np.any(good & uniq) else good
        if np.any(use):
            ratios = I_p[use] / pred_unit[use]
            if xray:
                # X-ray: the family's strongest found line sets the scale; it
                # is the best predicted and best measured, and a weak line on
                # another element's peak cannot inflate it.
                ev.scale = float(ratios[int(np.argmax(pred_unit[use]))])
            else:
                ev.scale = _median(ratios)
            if has_int and not xray:
                # Censored median: groups that should be seen at this scale but
                # have no peak enter at the detection limit (an upper bound of
                # their ratio). The median of found lines alone is biased high:
                # only the lines that came out bright were found.
                unseen = known & ~fnd & (pred_unit > 0)
                dl_u = obs.detection_limit_at(g_pos[sl])
                for _ in range(4):
                    cens = unseen & (ev.scale * pred_unit >= dl_u)
                    new_scale = _median(np.concatenate([ratios, dl_u[cens] / pred_unit[cens]]))
                    if new_scale == ev.scale:
                        break
                    ev.scale = new_scale
        if np.sum(good & uniq) >= 3:
            m = good & uniq
            ev.pattern_r = _pearson(np.log(I_p[m]), np.log(pred_unit[m]))
        with_int = has_int and ev.scale is not None
        dl_g = obs.detection_limit_at(g_pos[sl]) if with_int else None
        if with_int:
            predicted = ev.scale * pred_unit
            visible = known & (predicted >= dl_g)
        else:
            predicted = np.where(known, G, 0.0)
            visible = known & (G >= strong_fraction)
        masked = np.zeros_like(fnd)
        crowded = np.zeros_like(fnd)
        if xray:
            cand = visible & ~fnd
            if with_int and np.any(cand):
                xc = g_pos[sl][cand]
                w = 3.0 * g_tol[sl][cand]
                lo_i = np.searchsorted(obs.position, xc - w, side="left")
                hi_i = np.searchsorted(obs.position, xc + w, side="right")
                masked[np.flatnonzero(cand)] = (
                    _range_max(intensity_padded, lo_i, hi_i) >= predicted[cand]
                )
        elif with_int and np.any(visible):
            # Optical: crowded = a peak at least as strong as the prediction
            # within three half-windows but outside the group's own window,
            # judged alike for found and unfound groups ("masked" when
            # missing, "crowded" when found; both left out of the chance
            # test). Masking only the unfound ones left the chance test with
            # the hits alone: in a dense spectrum nearly every unfound group
            # is masked (10,000 random peaks gave 43 species "established").
            xc = g_pos[sl][visible]
            t = g_tol[sl][visible]
            half = g_span[sl][visible] / 2.0
            w = 3.0 * t + half
            lo_a = np.searchsorted(obs.position, xc - w, side="left")
            hi_a = np.searchsorted(obs.position, xc - t - half, side="left")
            lo_b = np.searchsorted(obs.position, xc + t + half, side="right")
            hi_b = np.searchsorted(obs.position, xc + w, side="right")
            side = np.maximum(
                _range_max(intensity_padded, lo_a, hi_a), _range_max(intensity_padded, lo_b, hi_b)
            )
            near = np.zeros_like(fnd)
            near[np.flatnonzero(visible)] = side >= predicted[visible]
            masked = near & ~fnd
            crowded = near & fnd
        if with_int and xray:
            # X-ray: density of peaks comparable in strength (≥ 30 % of the
            # prediction) per group.
            n_ge = sorted_intensity.size - np.searchsorted(
                sorted_intensity, 0.3 * predicted, "left"
            )
            rho = n_ge / span
        else:
            # Optical: any peak in the window makes the group found, so the
            # chance of a hit is that of any peak (a density of comparably
            # strong peaks made chance hits look rarer than the hits counted).
            rho = np.full(G.size, density)
        ev.groups = {
            "strength": G,
            "known": known,
            "found": fnd,
            "peak": peak,
            "unique": uniq,
            "visible": visible,
            "masked": masked,
            "crowded": crowded,
            "predicted": predicted,
            "p_line": 1.0 - np.exp(-rho * (2.0 * g_tol[sl] + g_span[sl])),
            "position": g_pos[sl],
            "line": g_line[sl],
            "rep": g_rep[sl],
            "sigma": (
                sigma_lines[g_rep[sl]] if sigma_lines is not None else np.full(G.size, sigma_dex)
            ),
            "explained": np.zeros(G.size, dtype=bool),
            "dl": dl_g,
            "offset_u": g_offset[sl] / g_tol[sl],
            "offset_window_u": 2.0 + g_span[sl] / g_tol[sl],
            "offset_lines": g_count[sl],
        }
        if xray:
            ev.groups.update(_xray_terms(obs, index, ev.groups, g_tol[sl], g_span[sl], dl_g))
        ev.n_groups_in_range = int(G.size)
        ev.n_strong_in_range = int(np.sum(known & (G >= strong_fraction)))
        ev.missing_evidence = bool(with_int)
        ev.prior_dex = prior_dex(abundance_prior, ev.element)
        sel = order_l[la:lb]
        lines, first = np.unique(ref[sel], return_index=True)
        ev.found_lines = lines.tolist()
        ev.found_peaks = pairs.obs[sel][first].tolist()
        line_unique = g_unique[line_group[lines]]
        ev.unique_lines = lines[line_unique].tolist()
        ev.shared_lines = lines[~line_unique].tolist()
        evaluate(
            ev,
            detection_limit=obs.detection_limit,
            sigma_dex=sigma_dex,
            n_tried=n_tried,
            strong_fraction=strong_fraction,
        )
        evidence[code] = ev
    return EvidencePass(
        evidence=evidence,
        pairs=pairs,
        pair_species=sp,
        pair_competes=competes,
        strengths=e,
        in_range=in_range,
        usable=usable,
        n_species_tried=n_tried,
        density=density,
        span=span,
        sorted_intensity=sorted_intensity,
    )
