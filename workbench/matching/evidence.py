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


def _sorted_medians(v: np.ndarray, seg: np.ndarray, n_seg: int) -> np.ndarray:
    """Median per segment of values sorted by (segment, value); NaN for an empty segment.

    The same arithmetic as ``_median`` on each segment's values.
    """
    counts = np.bincount(seg, minlength=n_seg)
    start = np.cumsum(counts) - counts
    out = np.full(n_seg, np.nan)
    has = counts > 0
    lo = (start + (counts - 1) // 2)[has]
    hi = (start + counts // 2)[has]
    out[has] = 0.5 * (v[lo] + v[hi])
    return out


def _species_scales(
    g_start: np.ndarray,
    g_end: np.ndarray,
    I_all: np.ndarray,
    pred_unit_all: np.ndarray,
    good_all: np.ndarray,
    good_uniq_all: np.ndarray,
    unseen_all: np.ndarray,
    dl_all: np.ndarray | None,
    xray: bool,
) -> list[float | None]:
    """Intensity scale per species (groups ``g_start[i]:g_end[i]``), None without a usable group.

    The scale comes from found, unsaturated, known groups (``good``; the
    unique ones when there are any): their observed / predicted ratio. With
    ``dl_all`` (intensities known, not X-ray) it is a censored median, else
    the median, or with ``xray`` the ratio of the strongest predicted group.
    Worked out for all species at once (segment medians); the values are
    those a per-species ``_median`` gives.
    """
    n_sp = g_start.size
    counts = g_end - g_start
    seg = np.repeat(np.arange(n_sp), counts)
    if not np.any(counts):
        return [None] * n_sp
    # The groups of every species, species after species.
    at = np.arange(int(counts.sum())) + np.repeat(g_start - (np.cumsum(counts) - counts), counts)
    good = good_all[at]
    good_uniq = good_uniq_all[at]
    # Scale from found, unsaturated, known groups (unique ones when there are any).
    any_uniq = np.bincount(seg[good_uniq], minlength=n_sp) > 0
    use = np.where(any_uniq[seg], good_uniq, good)
    u_at, u_seg = at[use], seg[use]
    has = np.bincount(u_seg, minlength=n_sp) > 0
    ratios = I_all[u_at] / pred_unit_all[u_at]
    # Candidates for censoring: unseen groups of species with a scale, at
    # the detection limit. Ratios and candidates are sorted together once;
    # each round keeps the ratios and the candidates censored at the current
    # scale, which stay in order.
    unseen = unseen_all[at] & has[seg] if dl_all is not None else np.zeros(at.size, dtype=bool)
    c_at, c_seg = at[unseen], seg[unseen]
    c_val = dl_all[c_at] / pred_unit_all[c_at] if dl_all is not None else np.zeros(0)
    order = np.lexsort((np.concatenate([ratios, c_val]), np.concatenate([u_seg, c_seg])))
    v_sorted = np.concatenate([ratios, c_val])[order]
    s_sorted = np.concatenate([u_seg, c_seg])[order]
    is_ratio = order < ratios.size
    c_of = np.where(is_ratio, 0, order - ratios.size)
    if xray:
        # X-ray: the family's strongest found line sets the scale; it is the
        # best predicted and best measured, and a weak line on another
        # element's peak cannot inflate it (the first of equals).
        first_max = np.lexsort((-pred_unit_all[u_at], u_seg))
        first = first_max[np.diff(u_seg[first_max], prepend=-1) != 0]
        scale = np.full(n_sp, np.nan)
        scale[u_seg[first]] = ratios[first]
    else:
        scale = _sorted_medians(v_sorted[is_ratio], s_sorted[is_ratio], n_sp)
    if dl_all is not None and c_at.size:
        # Censored median: groups that should be seen at this scale but have
        # no peak enter at the detection limit (an upper bound of their
        # ratio). The median of found lines alone is biased high: only the
        # lines that came out bright were found. Up to four rounds; a species
        # whose median no longer changes keeps it (a round at an unchanged
        # scale gives the same median again).
        c_pred, c_dl = pred_unit_all[c_at], dl_all[c_at]
        for _ in range(4):
            cens = scale[c_seg] * c_pred >= c_dl
            keep = is_ratio | cens[c_of]
            scale = _sorted_medians(v_sorted[keep], s_sorted[keep], n_sp)
    return [float(v) if h else None for v, h in zip(scale.tolist(), has.tolist(), strict=True)]


_ORDERS: dict[int, tuple[ReferenceIndex, np.ndarray, np.ndarray]] = {}


def _line_orders(index: ReferenceIndex) -> tuple[np.ndarray, np.ndarray]:
    """All lines by (species, position) and by (position, species), once per index.

    Both are stable (ties in the index's order), so that the usable lines of a
    pass, taken in these orders, are what a stable sort of them would give.
    """
    hit = _ORDERS.get(id(index))
    if hit is None or hit[0] is not index:
        if len(_ORDERS) >= 16:
            _ORDERS.pop(next(iter(_ORDERS)))
        hit = (
            index,
            np.lexsort((index.position, index.species)),
            np.lexsort((index.species, index.position)),
        )
        _ORDERS[id(index)] = hit
    return hit[1], hit[2]


@dataclass(frozen=True, eq=False)
class _LayoutKey:
    """What a pass layout depends on: copies of the arrays, the index itself."""

    index: ReferenceIndex
    strengths: np.ndarray
    in_range: np.ndarray
    min_rel_intensity: float
    obs_arrays: tuple
    detection_limit: float | None

    @staticmethod
    def _obs_arrays(obs: ObservedLines) -> tuple:
        curve = obs.detection_curve or (None, None)
        return (
            obs.position,
            obs.intensity,
            obs.half_window,
            obs.saturated,
            obs.excluded,
            obs.resolution,
            curve[0],
            curve[1],
        )

    @classmethod
    def of(cls, obs, index, strengths, in_range, min_rel_intensity) -> _LayoutKey:
        """A key holding copies, so that later changes to the inputs are noticed."""
        return cls(
            index,
            np.array(strengths, copy=True),
            np.array(in_range, copy=True),
            float(min_rel_intensity),
            tuple(None if a is None else np.array(a, copy=True) for a in cls._obs_arrays(obs)),
            obs.detection_limit,
        )

    def matches(self, obs, index, strengths, in_range, min_rel_intensity) -> bool:
        """Whether these inputs are the ones the layout was made from (equal bits)."""
        if index is not self.index or float(min_rel_intensity) != self.min_rel_intensity:
            return False
        if obs.detection_limit != self.detection_limit:
            return False
        pairs = [(strengths, self.strengths), (in_range, self.in_range)]
        pairs += list(zip(self._obs_arrays(obs), self.obs_arrays, strict=True))
        for a, b in pairs:
            if (a is None) != (b is None):
                return False
            # Bit for bit (NaN included): equal bits are equal values; the
            # rare converse (e.g. -0.0 and 0.0) only costs a new layout.
            if a is not None and not (
                a.shape == b.shape and a.dtype == b.dtype and a.tobytes() == b.tobytes()
            ):
                return False
        return True


@dataclass(frozen=True, eq=False)
class _Layout:
    """Groups, candidate pairs and per-species slices of one set of expected strengths.

    None of it depends on the instrument response, on which species compete
    or on the scoring settings, so the passes of one match that share the
    expected strengths (the chosen model's first pass and the second passes)
    share it: the last two layouts are kept (one per source model tried) and
    reused when the lines, strengths and peaks are equal. Its arrays are
    read-only, since the evidence holds views of them.
    """

    key: _LayoutKey
    usable: np.ndarray
    usable_idx: np.ndarray
    u_e: np.ndarray
    gid: np.ndarray
    n_groups: int
    line_group: np.ndarray
    g_strength: np.ndarray
    g_known: np.ndarray
    g_pos: np.ndarray
    g_species: np.ndarray
    g_tol: np.ndarray
    g_rep: np.ndarray
    g_span: np.ndarray
    pairs: CandidatePairs
    sp: np.ndarray
    grp: np.ndarray
    g_peak: np.ndarray
    g_line: np.ndarray
    found: np.ndarray
    pk: np.ndarray
    n_obs: int
    span: float
    density: float
    sorted_intensity: np.ndarray
    intensity_padded: np.ndarray
    has_int: bool
    species_present: np.ndarray
    g_start: np.ndarray
    g_end: np.ndarray
    in_counts: np.ndarray
    f_lines: np.ndarray
    f_species: np.ndarray
    f_lines_list: list[int]
    f_peaks_list: list[int]
    l_start: np.ndarray
    l_end: np.ndarray
    I_all: np.ndarray
    sat_all: np.ndarray
    dl_all: np.ndarray | None

    def __post_init__(self) -> None:
        for v in vars(self).values():
            if isinstance(v, np.ndarray):
                v.flags.writeable = False
        for v in (self.pairs.obs, self.pairs.ref, self.pairs.delta):
            v.flags.writeable = False

    def matches(self, obs, index, strengths, in_range, min_rel_intensity) -> bool:
        """Whether this layout was made from these inputs (see ``_LayoutKey.matches``)."""
        return self.key.matches(obs, index, strengths, in_range, min_rel_intensity)


#: The last layouts made, newest first (replaced as a whole, never edited in place).
_LAYOUTS: tuple[_Layout, ...] = ()
_N_LAYOUTS = 2


def _layout(
    obs: ObservedLines,
    index: ReferenceIndex,
    strengths: np.ndarray,
    in_range: np.ndarray,
    min_rel_intensity: float,
) -> _Layout:
    """The part of a pass that depends only on the lines, strengths and peaks (see ``_Layout``)."""
    global _LAYOUTS
    kept = _LAYOUTS
    for hit in kept:
        if hit.matches(obs, index, strengths, in_range, min_rel_intensity):
            return hit
    e = strengths
    e_zero = np.where(np.isfinite(e), e, 0.0)
    usable = in_range & (~np.isfinite(e) | (e >= min_rel_intensity))
    # Lines sorted by (species, position): groups are contiguous per species.
    by_species, by_position = _line_orders(index)
    usable_idx = by_species[usable[by_species]]
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
    g_tol = np.interp(g_pos, obs.position, obs.half_window)
    # Extent of each group (lines are sorted within it): a chain of close lines
    # is easier to hit by chance, so its window is its span plus the tolerance.
    g_first_i = np.flatnonzero(np.diff(np.concatenate(([-1], gid))) != 0)
    # Strongest line of each group (the first of equals): it stands for the
    # group in the evidence.
    g_rep = np.full(n_groups, -1, dtype=np.int64)
    if gid.size:
        at_max = np.flatnonzero(u_e == np.maximum.reduceat(u_e, g_first_i)[gid])
        g_rep = usable_idx[at_max[np.diff(gid[at_max], prepend=-1) != 0]]
    g_last_i = np.append(g_first_i[1:] - 1, gid.size - 1) if gid.size else g_first_i
    g_span = u_pos[g_last_i] - u_pos[g_first_i] if gid.size else np.zeros(0)
    # Candidate pairs over usable lines (sorted by position for the search).
    search_idx = by_position[usable[by_position]]
    local = find_candidates(obs.position, obs.half_window, index.position[search_idx])
    ref = search_idx[local.ref]
    if obs.excluded is not None and np.any(obs.excluded):
        keep = ~obs.excluded[local.obs]
        local = CandidatePairs(obs=local.obs[keep], ref=local.ref[keep], delta=local.delta[keep])
        ref = ref[keep]
    pairs = CandidatePairs(obs=local.obs, ref=ref, delta=local.delta)
    sp = index.species[ref]
    grp = line_group[ref]
    # Best peak per group: smallest |delta| among the group's pairs.
    order = np.lexsort((np.abs(pairs.delta), grp))
    grp_o = grp[order]
    first_at = np.flatnonzero(np.diff(grp_o, prepend=-1) != 0)
    g_first = grp_o[first_at]
    g_peak = np.full(n_groups, -1, dtype=np.int64)
    g_peak[g_first] = pairs.obs[order[first_at]]
    g_line = np.full(n_groups, -1, dtype=np.int64)  # the line nearest its peak
    g_line[g_first] = pairs.ref[order[first_at]]
    found = g_peak >= 0
    pk = np.where(found, g_peak, 0)
    n_obs = obs.position.size
    # Peak density and comparable-strength look-up for the chance probability.
    span = float(obs.position[-1] - obs.position[0]) + 2.0 * float(np.median(obs.half_window))
    density = n_obs / span if span > 0 else 0.0
    sorted_intensity = np.sort(obs.intensity[np.isfinite(obs.intensity)])
    intensity_padded = np.append(
        np.where(np.isfinite(obs.intensity), obs.intensity, -np.inf), -np.inf
    )
    has_int = obs.detection_limit is not None and sorted_intensity.size > 0

    species_present = np.unique(sp)
    g_start = np.searchsorted(g_species, species_present, side="left")
    g_end = np.searchsorted(g_species, species_present, side="right")
    # Reference lines per species (all in range, usable or not): report counts.
    in_counts = np.bincount(index.species[in_range], minlength=index.n_species)

    # Found lines per species for the report: every (line, best peak) pair of
    # the species (a line's first pair in (species, line, |delta|) order; a
    # line belongs to one species, so a new line starts at every change).
    order_l = np.lexsort((np.abs(pairs.delta), ref, sp))
    ref_l = ref[order_l]
    first_l = np.diff(ref_l, prepend=-1) != 0
    f_lines = ref_l[first_l]
    f_species = sp[order_l][first_l]
    f_lines_list = f_lines.tolist()
    f_peaks_list = pairs.obs[order_l][first_l].tolist()
    l_start = np.searchsorted(f_species, species_present, side="left")
    l_end = np.searchsorted(f_species, species_present, side="right")

    # Per-group quantities that do not depend on a species' scale, for all
    # groups at once; the loops below take each species' slice.
    I_all = np.where(found, obs.intensity[pk], np.nan)
    sat_all = np.where(found, obs.saturated[pk], False)
    dl_all = obs.detection_limit_at(g_pos) if has_int else None
    layout = _Layout(
        key=_LayoutKey.of(obs, index, strengths, in_range, min_rel_intensity),
        usable=usable,
        usable_idx=usable_idx,
        u_e=u_e,
        gid=gid,
        n_groups=n_groups,
        line_group=line_group,
        g_strength=g_strength,
        g_known=g_known,
        g_pos=g_pos,
        g_species=g_species,
        g_tol=g_tol,
        g_rep=g_rep,
        g_span=g_span,
        pairs=pairs,
        sp=sp,
        grp=grp,
        g_peak=g_peak,
        g_line=g_line,
        found=found,
        pk=pk,
        n_obs=n_obs,
        span=span,
        density=density,
        sorted_intensity=sorted_intensity,
        intensity_padded=intensity_padded,
        has_int=has_int,
        species_present=species_present,
        g_start=g_start,
        g_end=g_end,
        in_counts=in_counts,
        f_lines=f_lines,
        f_species=f_species,
        f_lines_list=f_lines_list,
        f_peaks_list=f_peaks_list,
        l_start=l_start,
        l_end=l_end,
        I_all=I_all,
        sat_all=sat_all,
        dl_all=dl_all,
    )
    _LAYOUTS = (layout, *kept)[:_N_LAYOUTS]
    return layout


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
    L = _layout(obs, index, strengths, in_range, min_rel_intensity)
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

    # 1. The intensity scale (and pattern correlation) of each species.
    good_uniq_all = good_all & g_unique
    scales = _species_scales(
        g_start,
        g_end,
        I_all,
        pred_unit_all,
        good_all,
        good_uniq_all,
        g_known & ~found & (pred_unit_all > 0),
        dl_all if has_int and not xray else None,
        xray,
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
        visible_all = g_known & np.where(
            with_scale, predicted_all >= dl_all, g_strength >= strong_fraction
        )
    else:
        visible_all = g_known & (g_strength >= strong_fraction)
    masked_all = np.zeros(n_groups, dtype=bool)
    cand = with_scale & visible_all & ~found
    if np.any(cand):
        xc = g_pos[cand]
        w = 3.0 * g_tol[cand]
        lo_i = np.searchsorted(obs.position, xc - w, side="left")
        hi_i = np.searchsorted(obs.position, xc + w, side="right")
        masked_all[cand] = _range_max(intensity_padded, lo_i, hi_i) >= predicted_all[cand]
    # Density of peaks comparable in strength (≥ 30 % of the prediction)
    # per group: a strong line is rarely matched by chance when strong
    # peaks are few.
    if has_int:
        n_ge = sorted_intensity.size - np.searchsorted(
            sorted_intensity, 0.3 * predicted_all, "left"
        )
        rho_all = np.where(with_scale, n_ge / span, density)
    else:
        rho_all = np.full(n_groups, density)
    p_line_all = 1.0 - np.exp(-rho_all * (2.0 * g_tol + g_span))
    sigma_all = sigma_lines[g_rep] if sigma_lines is not None else np.full(n_groups, sigma_dex)

    # 3. The evidence of each species.
    evidence: dict[int, SpeciesEvidence] = {}
    for code, ga, gb, la, lb, scale, pattern in zip(
        species_present.tolist(),
        g_start.tolist(),
        g_end.tolist(),
        l_start.tolist(),
        l_end.tolist(),
        scales,
        patterns,
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
            "predicted": predicted_all[sl],
            "p_line": p_line_all[sl],
            "position": g_pos[sl],
            "line": g_line[sl],
            "rep": g_rep[sl],
            "sigma": sigma_all[sl],
            "explained": np.zeros(gb - ga, dtype=bool),
            "dl": dl_g,
        }
        if xray:
            ev.groups.update(_xray_terms(obs, index, ev.groups, g_tol[sl], g_span[sl], dl_g))
        ev.n_groups_in_range = gb - ga
        ev.n_strong_in_range = int(n_strong_cum[gb] - n_strong_cum[ga])
        ev.missing_evidence = bool(with_int)
        ev.prior_dex = prior_dex(abundance_prior, ev.element)
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
