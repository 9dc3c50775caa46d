"""The layout of an evidence pass: groups, candidate pairs and per-species slices, made once.

Everything in :func:`workbench.matching.evidence.gather_evidence` that depends
only on the reference lines, their expected strengths, the observed peaks and
the usable-strength threshold: the usable lines in (species, position) order,
their resolvable groups (:mod:`workbench.matching.groups`), group strengths,
positions, extents and strongest lines, the candidate pairs
(:mod:`workbench.matching.candidates`) with each group's nearest peak, the
peak density, and the found lines per species. None of it depends on the
instrument response, on which species compete or on the scoring settings,
so the passes of one match that share the expected strengths (the chosen
model's first pass and both second passes) share one layout: the last two
layouts are kept and reused when the inputs are equal bit for bit. Their
arrays are read-only, since the evidence of every pass holds views of them.

Performance only: a pass with a kept layout gives exactly what it gives
with a new one (``tests/matching/test_evidence_layout.py``,
``benchmarks/check_identity.py``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from workbench.matching.candidates import CandidatePairs, find_candidates
from workbench.matching.groups import resolvable_groups
from workbench.matching.reference import ReferenceIndex

if TYPE_CHECKING:
    from workbench.matching.evidence import ObservedLines

__all__ = ["PassLayout", "line_orders", "pass_layout"]

#: Line orders per index (the index is held, so its id is not reused while
#: the entry lives).
_ORDERS: dict[int, tuple[ReferenceIndex, np.ndarray, np.ndarray]] = {}


def line_orders(index: ReferenceIndex) -> tuple[np.ndarray, np.ndarray]:
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
            obs.split_top,
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
class PassLayout:
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
    g_listed: np.ndarray
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
    g_offset: np.ndarray
    g_count: np.ndarray
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
_LAYOUTS: tuple[PassLayout, ...] = ()
_N_LAYOUTS = 2


def pass_layout(
    obs: ObservedLines,
    index: ReferenceIndex,
    strengths: np.ndarray,
    in_range: np.ndarray,
    min_rel_intensity: float,
) -> PassLayout:
    """The part of an evidence pass that depends only on the lines, strengths and peaks.

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
    min_rel_intensity : float
        Lines predicted weaker than this are not used.

    Returns
    -------
    PassLayout
        A layout kept from an earlier pass when these inputs are equal bit for
        bit (see :class:`PassLayout`), else a new one.
    """
    global _LAYOUTS
    kept = _LAYOUTS
    for hit in kept:
        if hit.matches(obs, index, strengths, in_range, min_rel_intensity):
            return hit
    e = strengths
    e_zero = np.where(np.isfinite(e), e, 0.0)
    usable = in_range & (~np.isfinite(e) | (e >= min_rel_intensity))
    # Lines sorted by (species, position): groups are contiguous per species.
    by_species, by_position = line_orders(index)
    usable_idx = by_species[usable[by_species]]
    u_pos = index.position[usable_idx]
    u_sp = index.species[usable_idx]
    res = obs.resolution if obs.resolution is not None else obs.half_window
    # Energy axis: X-ray families' chains are split where their predicted
    # profile is resolved (workbench.matching.groups).
    gid = resolvable_groups(
        u_sp,
        u_pos,
        np.interp(u_pos, obs.position, res),
        e_zero[usable_idx] if index.axis == "energy" else None,
    )
    n_groups = int(gid[-1]) + 1 if gid.size else 0
    line_group = np.full(index.n_lines, -1, dtype=np.int64)
    line_group[usable_idx] = gid
    u_e = e_zero[usable_idx]
    g_strength = np.bincount(gid, weights=u_e, minlength=n_groups)
    g_known = np.bincount(gid, weights=np.isfinite(e[usable_idx]), minlength=n_groups) > 0
    # Groups of strength unknown holding a line of a source that lists only
    # lines known to show (reference.LISTED_SOURCES).
    if index.listed is not None and index.listed.any():
        g_listed = ~g_known & (
            np.bincount(gid, weights=index.listed[usable_idx], minlength=n_groups) > 0
        )
    else:
        g_listed = np.zeros(n_groups, dtype=bool)
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
    # Optical closeness (chance.closeness_probability): the found peak's
    # offset from its nearest line.
    g_offset = np.full(n_groups, np.nan)
    g_offset[g_first] = pairs.delta[order[first_at]]
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
    layout = PassLayout(
        key=_LayoutKey.of(obs, index, strengths, in_range, min_rel_intensity),
        usable=usable,
        usable_idx=usable_idx,
        u_e=u_e,
        gid=gid,
        n_groups=n_groups,
        line_group=line_group,
        g_strength=g_strength,
        g_known=g_known,
        g_listed=g_listed,
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
        g_offset=g_offset,
        g_count=g_count,
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
