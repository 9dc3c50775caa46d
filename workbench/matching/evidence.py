"""Gather per-species evidence from candidate pairs: groups, likelihood, chance (one pass).

Per species, the evidence is counted per *resolvable group*
(:mod:`workbench.matching.groups`), never per reference line, and combined
as in :mod:`workbench.matching.scoring`:

* the species' intensity scale is the median of observed / predicted over
  its found, unsaturated groups that no other competing species shares
  (optical: only groups its model, at that scale, does not predict more
  than 2σ below the detection limit — a strong peak on a faint prediction
  is another line or a coincidence — starting from the strongest predicted
  found group), censored with the unseen groups that should be seen
  (:mod:`workbench.matching.species_scale`);
  the prediction is the group's strength (:mod:`workbench.matching.sourcemodels`)
  times the instrument response at its position
  (:mod:`workbench.matching.response`);
* a group *should be seen* when predicted at or above the detection limit
  (with intensities), or when its strength is at least ``strong_fraction``
  of the species' strongest (without intensities);
* a group that should be seen and has no peak is *missing*, unless an
  observed peak at least as strong as its prediction lies within three
  half-windows (it may hide in that wing: *masked*, counted neither way),
  or a peak set aside (a band, an artefact, an analyst's exclusion: never
  matched) at least as strong lies in its own window (it may hide in it;
  :mod:`workbench.matching.masking`);
* the chance probability and the missing-line penalty are computed from
  these (see :mod:`workbench.matching.scoring`).

The chance that a group's window holds a peak by coincidence (local
density, the ρw bound, and on the energy axis the density of comparably
strong peaks) is :mod:`workbench.matching.hit_chance`.

With the ``absorption`` source model each group also carries the expected
number of chance dips per half-window (``rho_tol``) for the closeness term
(:func:`workbench.matching.chance.closeness_probability`: the found dip is
the nearest of all the dips in the window, not one uniform dip).

With the ``x-ray`` source model on an energy axis (``xray=True``) the scale
is that of the family's strongest found group (the best predicted and best
measured line; a weak line sitting on another element's peak cannot inflate
it), and each group carries what the X-ray agreement terms of
:mod:`workbench.matching.scoring` need
(:func:`workbench.matching.xray_evidence.xray_terms`).

Everything is vectorised over pairs and groups; the only Python loop is over
species with at least one candidate (tens to a few hundred), with slices of
species-sorted arrays. Per-species group arrays are kept on the evidence
(``SpeciesEvidence.groups``) so that the joint step
(:mod:`workbench.matching.joint`) can re-evaluate a species cheaply.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from workbench.matching.absorption import (
    blend_closeness_terms,
    instrument_fwhm,
    species_features,
    usable_density,
)
from workbench.matching.candidates import CandidatePairs
from workbench.matching.contrast import miss_prediction, species_contrast
from workbench.matching.hit_chance import group_hit_chance
from workbench.matching.layout import pass_layout
from workbench.matching.masking import hidden_groups
from workbench.matching.priors import prior_dex
from workbench.matching.reference import ReferenceIndex
from workbench.matching.scoring import LOSS_PROBABILITY, SpeciesEvidence, evaluate
from workbench.matching.species_scale import TIE_MARGIN, species_scales
from workbench.matching.xray_evidence import group_blend_maxima, xray_terms

__all__ = [
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
    saturated: np.ndarray  # bool: height not a measure (clipped, or a split top)
    detection_limit: float | None  # intensity units; None when intensities are unknown
    tolerance: object = None  # the resolved ToleranceSpec
    excluded: np.ndarray | None = None  # bool: artefact peaks (escape, sum, ...) not to match
    resolution: np.ndarray | None = None  # resolution element (≈ FWHM) per peak; None = window
    detection_curve: tuple[np.ndarray, np.ndarray] | None = None  # (x, limit) where it varies
    #: Counting significance N/√(N + 2B) of each peak from its own net and
    #: baseline counts (energy axis, :mod:`workbench.xray.prepare`); None elsewhere.
    significance: np.ndarray | None = None
    #: Height over one channel's counting noise, h/√(h + b), of each peak
    #: (energy axis, :mod:`workbench.xray.prepare`); None elsewhere.
    height_snr: np.ndarray | None = None
    #: Standard error of each peak's centre from a fit of the detector's line
    #: shape (energy axis, :mod:`workbench.xray.centroid`; NaN where not
    #: fitted); None elsewhere.
    position_sigma: np.ndarray | None = None
    #: The ends of the axis the peaks were searched over (the spectrum's
    #: range, or the peaks' windows for a bare peak list); set by the engine.
    axis_range: tuple[float, float] | None = None
    #: Parts of that axis the spectrum's sampling skips (last sample before,
    #: first after; :mod:`workbench.peaks.sampling`); set by the engine.
    axis_gaps: tuple[tuple[float, float], ...] = ()
    #: Peaks that are one line's split top (workbench.peaks.split), also in
    #: ``saturated``; None when the peak list does not say.
    split_top: np.ndarray | None = None

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
    xray_overlaps: list = field(default_factory=list)  # workbench.matching.xray_overlap


def _pearson(a: np.ndarray, b: np.ndarray) -> float | None:
    if a.size < 3:
        return None
    da, db = a - a.mean(), b - b.mean()
    den = float(np.sqrt(np.dot(da, da) * np.dot(db, db)))
    return float(np.dot(da, db) / den) if den > 0 else None


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
    absorption: bool = False,
    contrast: bool = False,
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
    absorption : bool
        The ``absorption`` source model on a wavelength axis: each group
        also carries what the data test of a prior-favoured species needs
        (:mod:`workbench.matching.absorption`).
    contrast : bool
        Fit each species' contrast exponent b (emission source models;
        :mod:`workbench.matching.contrast`); its missing-line penalty then
        predicts the species' weaker groups lower (``groups["predicted_miss"]``).

    Returns
    -------
    EvidencePass
    """
    L = pass_layout(obs, index, strengths, in_range, min_rel_intensity)
    e = strengths
    usable = L.usable
    usable_idx = L.usable_idx
    u_e = L.u_e
    gid = L.gid
    n_groups = L.n_groups
    line_group = L.line_group
    g_strength = L.g_strength
    g_known = L.g_known
    g_pos = L.g_pos
    g_species = L.g_species
    g_tol = L.g_tol
    g_rep = L.g_rep
    g_span = L.g_span
    pairs = L.pairs
    sp = L.sp
    grp = L.grp
    g_peak = L.g_peak
    g_line = L.g_line
    g_offset = L.g_offset
    g_count = L.g_count
    found = L.found
    pk = L.pk
    n_obs = L.n_obs
    span = L.span
    density = L.density
    sorted_intensity = L.sorted_intensity
    intensity_padded = L.intensity_padded
    has_int = L.has_int
    species_present = L.species_present
    g_start = L.g_start
    g_end = L.g_end
    in_counts = L.in_counts
    f_lines = L.f_lines
    f_lines_list = L.f_lines_list
    f_peaks_list = L.f_peaks_list
    l_start = L.l_start
    l_end = L.l_end
    I_all = L.I_all
    sat_all = L.sat_all
    dl_all = L.dl_all
    if response is None:
        g_resp = np.ones(n_groups)
    else:
        g_resp = np.bincount(gid, weights=response[usable_idx] * np.maximum(u_e, 1e-300))
        g_resp = g_resp / np.bincount(gid, weights=np.maximum(u_e, 1e-300), minlength=n_groups)

    competes = ~g_known[grp] | (g_strength[grp] >= competitor_min_rel)
    if plausible is not None:
        competes &= np.isin(sp, np.fromiter(plausible, dtype=np.int64, count=len(plausible)))

    comp_keys = np.unique(pairs.obs[competes].astype(np.int64) * index.n_species + sp[competes])
    n_comp = np.bincount(comp_keys // index.n_species, minlength=n_obs)

    key = pk.astype(np.int64) * index.n_species + g_species
    pos_k = np.minimum(np.searchsorted(comp_keys, key), max(comp_keys.size - 1, 0))
    own = (comp_keys[pos_k] == key) if comp_keys.size else np.zeros(n_groups, dtype=bool)
    g_unique = found & (n_comp[pk] - own.astype(np.int64) == 0)

    n_tried = int(n_species_tried or species_present.size)
    f_unique = g_unique[line_group[f_lines]]
    pred_unit_all = g_strength * g_resp
    good_all = found & g_known & np.isfinite(I_all) & (I_all > 0) & ~sat_all & (pred_unit_all > 0)
    dl_all = obs.detection_limit_at(g_pos) if has_int else None
    n_strong_cum = np.concatenate(([0], np.cumsum(g_known & (g_strength >= strong_fraction))))

    sigma_all = sigma_lines[g_rep] if sigma_lines is not None else np.full(n_groups, sigma_dex)
    b_species = np.ones(g_start.size)
    if contrast and has_int and not xray and not absorption:
        # One departure shared by the species' lines (workbench.matching.contrast).
        b_species = species_contrast(
            g_start,
            g_end,
            g_strength,
            g_known,
            g_resp,
            I_all,
            dl_all,
            sigma_all,
            usable_found=found & g_unique & g_known & np.isfinite(I_all) & (I_all > 0) & ~sat_all,
            missed=g_known & ~found,
            loss_probability=LOSS_PROBABILITY,
        )
    # 1. The intensity scale (and pattern correlation) of each species.
    good_uniq_all = good_all & g_unique
    good_all_bounded = found & g_known & np.isfinite(I_all) & (I_all > 0) & sat_all
    good_all_bounded &= pred_unit_all > 0
    scales = species_scales(
        g_start,
        g_end,
        I_all,
        pred_unit_all,
        good_all,
        good_uniq_all,
        g_known & ~found & (pred_unit_all > 0),
        dl_all if has_int and not xray else None,
        xray,
        sigma_all,
        # Found on a clipped or split top: the height is a lower bound.
        lower_all=good_all_bounded,
    )
    n_good_uniq = np.concatenate(([0], np.cumsum(good_uniq_all)))
    patterns: list[float | None] = []
    for ga, gb in zip(g_start.tolist(), g_end.tolist(), strict=True):
        pattern = None
        if n_good_uniq[gb] - n_good_uniq[ga] >= 3:
            m = good_uniq_all[ga:gb]
            pattern = _pearson(np.log(I_all[ga:gb][m]), np.log(pred_unit_all[ga:gb][m]))
        patterns.append(pattern)

    # 2. What each group should show at its species' scale, for all groups at
    #    once: predicted intensity (or relative strength without intensities),
    #    visible, masked by a stronger neighbouring peak, chance per group.
    with_scale = np.zeros(n_groups, dtype=bool)
    g_scale = np.full(n_groups, np.nan)
    if has_int:
        for ga, gb, scale in zip(g_start.tolist(), g_end.tolist(), scales, strict=True):
            if scale is not None:
                with_scale[ga:gb] = True
                g_scale[ga:gb] = scale
    predicted_all = np.where(
        with_scale, g_scale * pred_unit_all, np.where(g_known, g_strength, 0.0)
    )
    if dl_all is not None:
        # A scale can sit exactly on an unseen group's limit (species_scale.TIE_MARGIN).
        visible_all = g_known & np.where(
            with_scale, predicted_all >= dl_all * TIE_MARGIN, g_strength >= strong_fraction
        )
    else:
        visible_all = g_known & (g_strength >= strong_fraction)
    # Groups that may hide in another peak (masking.py): masked when missing,
    # crowded when found; both left out of the chance test.
    masked_all, crowded_all = hidden_groups(
        obs.position,
        obs.excluded,
        intensity_padded,
        with_scale & visible_all,
        found,
        predicted_all,
        g_pos,
        g_tol,
        g_span,
        xray=xray,
        axis_range=obs.axis_range,
        gaps=obs.axis_gaps,
        # Only a clipped top hides a line of any height: a split top's
        # measured maximum is what its wings can hide (workbench.peaks.split).
        saturated=obs.saturated if obs.split_top is None else obs.saturated & ~obs.split_top,
        peak_resolution=None if xray else obs.resolution,
    )
    if not xray and not absorption:
        # Emission: a group of strength unknown from a source that lists only
        # lines known to show (reference.LISTED_SOURCES: Zn I 330.26 nm of
        # PypeIt's zinc-lamp list, the supplement's key lines) is counted by
        # the chance test like a visible group. It has no prediction, so it
        # is never masked or crowded and the missing-line test leaves it out
        # (scoring.evaluate).
        visible_all = visible_all | L.g_listed
    rho_all, p_line_all = group_hit_chance(
        obs,
        L,
        index.n_species,
        counted=visible_all & ~masked_all & ~crowded_all,
        with_scale=with_scale,
        predicted=predicted_all,
        xray=xray,
        absorption=absorption,
    )
    prior_test: dict[str, np.ndarray] | None = None
    if absorption and not xray:
        # The data test of a prior-favoured absorber (prior_test.prior_capped):
        # usable chance density, closeness from each blend's dip.
        rho_u = usable_density(density, obs.excluded, obs.half_window, span)
        first_i = np.flatnonzero(np.diff(gid, prepend=-1) != 0)
        res = obs.resolution if obs.resolution is not None else obs.half_window
        prior_test = blend_closeness_terms(
            g_pos,
            index.position[usable_idx[first_i]],
            g_span,
            g_tol,
            np.interp(g_pos, obs.position, res),
            obs.position[pk],
            found,
            rho_u,
        )
        # The same hit chance as the evidence's own (local density, ρw
        # bound), from the usable density where that is higher.
        prior_test["p_line_usable"] = np.minimum(
            1.0, np.maximum(rho_u, rho_all) * (2.0 * g_tol + g_span)
        )
        usable_dips = ~obs.excluded if obs.excluded is not None else np.ones(n_obs, dtype=bool)
        fwhm = instrument_fwhm(res, usable_dips)
        # Chains: groups longer than a resolution element (their windows).
        chain = g_span > np.interp(g_pos, obs.position, res)
        chain_lo = index.position[usable_idx[first_i]] - g_tol
        chain_hi = chain_lo + g_span + 2.0 * g_tol

    blend_max = blend_sig = None
    if xray and n_groups:
        res = obs.resolution if obs.resolution is not None else 2.0 * obs.half_window
        blend_max, blend_sig = group_blend_maxima(
            index.position[usable_idx],
            u_e,
            gid,
            index.position[g_rep],
            np.interp(g_pos, obs.position, res),
            sigma_all,
        )

    # 3. The evidence of each species.
    evidence: dict[int, SpeciesEvidence] = {}
    for code, ga, gb, la, lb, scale, pattern, b_sp in zip(
        species_present.tolist(),
        g_start.tolist(),
        g_end.tolist(),
        l_start.tolist(),
        l_end.tolist(),
        scales,
        patterns,
        b_species.tolist(),
        strict=True,
    ):
        sl = slice(ga, gb)
        ev = SpeciesEvidence(
            code=code,
            label=index.species_names[code],
            element=index.species_element[code],
            ion=index.species_ion[code],
            family=index.species_family[code],
            n_lines_in_range=int(in_counts[code]),
        )
        ev.scale = scale
        ev.pattern_r = pattern
        ev.contrast = b_sp
        with_int = has_int and scale is not None
        dl_g = dl_all[sl] if with_int else None
        ev.groups = {
            "strength": g_strength[sl],
            "known": g_known[sl],
            "found": found[sl],
            "peak": g_peak[sl],
            "unique": g_unique[sl],
            "visible": visible_all[sl],
            "masked": masked_all[sl],
            "crowded": crowded_all[sl],
            "predicted": predicted_all[sl],
            "p_line": p_line_all[sl],
            "position": g_pos[sl],
            "line": g_line[sl],
            "rep": g_rep[sl],
            "sigma": sigma_all[sl],
            "explained": np.zeros(gb - ga, dtype=bool),
            "dl": dl_g,
            "offset_u": g_offset[sl] / g_tol[sl],
            "offset_window_u": 2.0 + g_span[sl] / g_tol[sl],
            "offset_lines": g_count[sl],
        }
        if b_sp != 1.0:
            # The missing-line penalty's predictions at the species' contrast.
            ev.groups["predicted_miss"] = miss_prediction(
                predicted_all[sl], g_strength[sl], g_known[sl], b_sp
            )
        if xray:
            if blend_max is not None:
                ev.groups["blend_max"] = blend_max[sl]
                ev.groups["blend_sigma"] = blend_sig[sl]
            ev.groups.update(xray_terms(obs, index, ev.groups, g_tol[sl], g_span[sl], dl_g))
        if prior_test is not None:
            ev.groups.update({k: v[sl] for k, v in prior_test.items()})
            ev.groups["absorption"] = True
            # Expected chance dips per half-window: the found dip is the
            # nearest of all dips in its window (chance.closeness_probability).
            ev.groups["rho_tol"] = rho_all[sl] * g_tol[sl]
        ev.n_groups_in_range = gb - ga
        ev.n_strong_in_range = int(n_strong_cum[gb] - n_strong_cum[ga])
        ev.missing_evidence = bool(with_int)
        ev.prior_dex = prior_dex(abundance_prior, ev.element)
        if prior_test is not None and ev.prior_dex > 0.0 and np.any(chain[sl]):
            # A prior-named absorber whose groups chain beyond a resolution
            # element: its features as the instrument sees them
            # (absorption.species_features; its data test, scoring).
            la_u, lb_u = np.searchsorted(gid, [ga, gb])
            ev.groups["features"] = species_features(
                obs,
                index.position[usable_idx[la_u:lb_u]],
                u_e[la_u:lb_u],
                fwhm=fwhm,
                scale=scale if with_int else None,
                response=(g_pos[sl], g_resp[sl]),
                strong_fraction=strong_fraction,
                density=rho_u,
                chains=(chain_lo[sl][chain[sl]], chain_hi[sl][chain[sl]]),
            )
        line_unique = f_unique[la:lb]
        lines = f_lines[la:lb]
        ev.found_lines = f_lines_list[la:lb]
        ev.found_peaks = f_peaks_list[la:lb]
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
