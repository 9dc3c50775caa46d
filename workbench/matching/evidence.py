"""Gather per-species evidence from candidate pairs (one pass of the engine).

The pass is vectorised over pairs; the only Python loop is over the species
that have at least one candidate (tens to a few hundred), each handled with
slices of species-sorted arrays.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from workbench.matching.candidates import CandidatePairs, find_candidates
from workbench.matching.reference import ReferenceIndex
from workbench.matching.scoring import SpeciesEvidence, decide_verdict, score_of

__all__ = ["EvidencePass", "ObservedLines", "gather_evidence"]


@dataclass(frozen=True)
class ObservedLines:
    """Observed peaks as arrays (axis unit), as the engine sees them."""

    position: np.ndarray
    intensity: np.ndarray  # NaN where unknown
    half_window: np.ndarray
    saturated: np.ndarray  # bool
    detection_limit: float | None  # intensity units; None when intensities are unknown
    tolerance: object = None  # the resolved ToleranceSpec


@dataclass
class EvidencePass:
    """Result of one evidence pass."""

    evidence: dict[int, SpeciesEvidence]
    pairs: CandidatePairs  # ref indices are global (into the ReferenceIndex)
    pair_species: np.ndarray
    pair_competes: np.ndarray  # bool: the pair's line is strong enough to compete
    strengths: np.ndarray  # expected strength per reference line
    in_range: np.ndarray
    usable: np.ndarray


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
    if a.size < 3 or np.ptp(a) == 0 or np.ptp(b) == 0:
        return None
    return float(np.corrcoef(a, b)[0, 1])


def gather_evidence(
    obs: ObservedLines,
    index: ReferenceIndex,
    strengths: np.ndarray,
    in_range: np.ndarray,
    *,
    strong_fraction: float,
    min_rel_intensity: float,
    competitor_min_rel: float,
    missing_factor: float,
    plausible: set[int] | None = None,
) -> EvidencePass:
    """Collect the evidence of every species with at least one candidate.

    Parameters
    ----------
    obs : ObservedLines
        The observed peaks.
    index : ReferenceIndex
        Reference lines.
    strengths : numpy.ndarray
        Expected relative strength per reference line (NaN = unknown).
    in_range : numpy.ndarray of bool
        Reference lines inside the observed range.
    strong_fraction, min_rel_intensity, competitor_min_rel, missing_factor : float
        Thresholds (see :mod:`workbench.matching.scoring`).
    plausible : set of int, optional
        Species codes that may compete for a peak; all species when omitted
        (first pass). The second pass restricts competition to species with
        real support in the first (see :mod:`workbench.matching.engine`).

    Returns
    -------
    EvidencePass
    """
    e = strengths
    e_zero = np.where(np.isfinite(e), e, 0.0)
    usable = in_range & (~np.isfinite(e) | (e >= min_rel_intensity))
    usable_idx = np.flatnonzero(usable)
    local = find_candidates(obs.position, obs.half_window, index.position[usable_idx])
    ref = usable_idx[local.ref]
    pairs = CandidatePairs(obs=local.obs, ref=ref, delta=local.delta)
    sp = index.species[ref]
    e_pair = e[ref]
    competes = ~np.isfinite(e_pair) | (e_pair >= competitor_min_rel)
    if plausible is not None:
        competes &= np.isin(sp, np.fromiter(plausible, dtype=np.int64, count=len(plausible)))

    # Distinct competing species per peak: unique (peak, species) among competing pairs.
    n_obs = obs.position.size
    comp_keys = np.unique(pairs.obs[competes].astype(np.int64) * index.n_species + sp[competes])
    comp_peak = comp_keys // index.n_species
    n_comp = np.bincount(comp_peak, minlength=n_obs)

    def competes_at(peaks_: np.ndarray, code_: int) -> np.ndarray:
        # Is (peak, code) among the competing keys? Binary search in the sorted keys.
        q = peaks_.astype(np.int64) * index.n_species + code_
        pos = np.searchsorted(comp_keys, q)
        pos = np.minimum(pos, max(comp_keys.size - 1, 0))
        return comp_keys[pos] == q if comp_keys.size else np.zeros(q.size, dtype=bool)

    # Sort pairs by species once; slice per species.
    order = np.lexsort((np.abs(pairs.delta), ref, sp))
    sp_sorted = sp[order]
    species_present, starts = np.unique(sp_sorted, return_index=True)
    ends = np.append(starts[1:], sp_sorted.size)

    # In-range lines per species, for the expected-but-missing logic.
    in_idx = np.flatnonzero(in_range)
    in_sp = index.species[in_idx]
    in_order = np.argsort(in_sp, kind="stable")
    in_idx = in_idx[in_order]
    in_sp = in_sp[in_order]

    # Density of observed peaks, for the chance-coincidence probability.
    span = float(obs.position[-1] - obs.position[0]) + 2.0 * float(np.median(obs.half_window))
    density = n_obs / span if span > 0 else 0.0
    sorted_intensity = np.sort(obs.intensity[np.isfinite(obs.intensity)])
    # Intensities with a trailing sentinel, for vectorised window maxima.
    intensity_padded = np.append(
        np.where(np.isfinite(obs.intensity), obs.intensity, -np.inf), -np.inf
    )

    evidence: dict[int, SpeciesEvidence] = {}
    for code, a, b in zip(species_present, starts, ends, strict=True):
        code = int(code)
        sel = order[a:b]
        p_obs = pairs.obs[sel]
        p_ref = ref[sel]
        # Best peak per reference line: first occurrence after sorting by |delta|.
        lines, first = np.unique(p_ref, return_index=True)
        best_peak = p_obs[first]
        lo, hi = np.searchsorted(in_sp, [code, code + 1])
        sp_lines = in_idx[lo:hi]
        e_lines = e[sp_lines]
        ev = SpeciesEvidence(
            code=code,
            label=index.species_names[code],
            element=index.species_element[code],
            ion=index.species_ion[code],
            family=index.species_family[code],
            n_lines_in_range=int(sp_lines.size),
            n_strong_in_range=int(np.sum(e_lines >= strong_fraction)),
        )
        e_found = e[lines]
        # A line is unique when no other competing species has a candidate at its peak.
        own_competes = competes_at(best_peak, code)
        others = n_comp[best_peak] - own_competes.astype(np.int64)
        unique = others == 0
        ev.found_lines = lines.tolist()
        ev.found_peaks = best_peak.tolist()
        ev.unique_lines = lines[unique].tolist()
        ev.shared_lines = lines[~unique].tolist()
        # Counts are of distinct observed peaks: two lines of one species inside
        # one unresolved peak are one piece of evidence, not two.
        ev.n_strong_found = int(np.unique(best_peak[e_found >= strong_fraction]).size)
        ev.n_unique_peaks = int(np.unique(best_peak[unique]).size)

        # Intensity scale: observed / expected at each matched peak (all of this
        # species' lines in a peak's window are summed: a blend).
        pk_all, inv = np.unique(p_obs, return_inverse=True)
        e_p = np.bincount(inv, weights=e_zero[p_ref], minlength=pk_all.size)
        peak_unique = n_comp[pk_all] - competes_at(pk_all, code) == 0
        I_p = obs.intensity[pk_all]
        good = np.isfinite(I_p) & (I_p > 0) & (e_p > 0) & ~obs.saturated[pk_all]
        use = good & peak_unique if np.any(good & peak_unique) else good
        if np.any(use):
            ev.scale = float(np.median(I_p[use] / e_p[use]))
        if np.sum(good & peak_unique) >= 3:
            m = good & peak_unique
            ev.pattern_r = _pearson(np.log(I_p[m]), np.log(e_p[m]))

        found_mask = np.isin(sp_lines, lines)
        finite = np.isfinite(e_lines)
        if ev.scale is not None and obs.detection_limit is not None:
            predicted = ev.scale * np.where(finite, e_lines, 0.0)
            visible = predicted >= missing_factor * obs.detection_limit
        else:
            predicted = np.where(finite, e_lines, 0.0)
            visible = e_lines >= strong_fraction
        missing = visible & ~found_mask & finite
        if np.any(missing):
            # A line without its own peak may be hidden in the wing of a stronger
            # neighbour (peak finders resolve shoulders poorly): not "missing"
            # when an observed peak at least as strong as predicted lies within
            # 3 half-windows.
            cand = sp_lines[missing]
            xc = index.position[cand]
            w = 3.0 * np.interp(xc, obs.position, obs.half_window)
            lo_i = np.searchsorted(obs.position, xc - w, side="left")
            hi_i = np.searchsorted(obs.position, xc + w, side="right")
            strongest = (
                _range_max(intensity_padded, lo_i, hi_i)
                if obs.detection_limit is not None
                else np.full(cand.size, -np.inf)
            )
            masked_local = strongest >= predicted[missing]
            masked = np.zeros_like(missing)
            masked[np.flatnonzero(missing)[masked_local]] = True
            ev.masked_lines = sp_lines[masked].tolist()
            missing &= ~masked
            visible &= ~masked
        miss_order = np.argsort(-predicted[missing], kind="stable")
        ev.missing_lines = sp_lines[missing][miss_order].tolist()
        ev.missing_predicted = predicted[missing][miss_order].tolist()
        # Chance coincidence: with peaks scattered at this density, each strong
        # line would have a peak in its window with p = 1 - exp(-ρ·2·tol).
        strong_mask = finite & (e_lines >= strong_fraction)
        if ev.masked_lines:
            strong_mask &= ~np.isin(sp_lines, ev.masked_lines)
        n_strong = int(np.sum(strong_mask))
        k_strong = int(np.sum(strong_mask & found_mask))
        if n_strong and k_strong:
            tol_l = np.interp(index.position[sp_lines[strong_mask]], obs.position, obs.half_window)
            rho = np.full(tol_l.size, density)
            if ev.scale is not None and sorted_intensity.size:
                # Only peaks of comparable strength (≥ 30 % of the prediction)
                # could pass for the line: a strong line is rarely matched by
                # chance when strong peaks are few.
                thr = 0.3 * ev.scale * e_lines[strong_mask]
                n_ge = sorted_intensity.size - np.searchsorted(sorted_intensity, thr, "left")
                rho = n_ge / span
            p = float(np.mean(1.0 - np.exp(-rho * 2.0 * tol_l)))
            # P(X ≥ k) for X ~ Binomial(n, p) is the regularised incomplete
            # beta function I_p(k, n − k + 1).
            ev.chance_probability = float(special.betainc(k_strong, n_strong - k_strong + 1, p))
        ev.missing_strong = [i for i in ev.missing_lines if e[i] >= strong_fraction]
        denom_mask = finite & (visible | found_mask)
        denom = float(np.sum(e_lines[denom_mask]))
        if denom > 0:
            ev.found_fraction = float(np.sum(e_lines[denom_mask & found_mask]) / denom)
        else:
            # No strength information: presence alone caps the call at "possible".
            ev.found_fraction = 0.5 if lines.size else 0.0
        ev.level = decide_verdict(ev)
        ev.score = score_of(ev)
        evidence[code] = ev
    return EvidencePass(
        evidence=evidence,
        pairs=pairs,
        pair_species=sp,
        pair_competes=competes,
        strengths=e,
        in_range=in_range,
        usable=usable,
    )
