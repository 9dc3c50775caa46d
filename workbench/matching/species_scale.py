"""Intensity scale of each species: observed over predicted on its found groups.

Apart from :mod:`workbench.matching.evidence` because it is one concept with
its own rules: which found groups measure a species' scale (unique,
unsaturated, consistent with the model at the detection limit), the censored
median that lets unseen groups enter at the detection limit, and the X-ray
rule that the strongest found line sets the scale. The evidence reads the
scale to predict every group's height and which lines should have been seen.
Worked out for all species at once (segment medians); the values equal a
per-species median (``tests/matching/test_evidence_layout.py``).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "SCALE_CONSISTENT_SIGMAS",
    "TIE_MARGIN",
    "sorted_segment_medians",
    "species_groups",
    "species_scales",
]


def _median(a: np.ndarray) -> float:
    """Median of a small 1-D array (np.median's overhead dominates at this size)."""
    s = np.sort(a)
    n = s.size
    return float(0.5 * (s[(n - 1) // 2] + s[n // 2]))


#: Optical scale: found groups predicted more than this many σ (the source
#: model's uncertainty) below the detection limit at the species' scale do
#: not measure the scale (:func:`species_scales`). 2σ: the usual bound of
#: "consistent with the model", fixed before the real spectra were run
#: (common practice, no source). Tune set: 1σ gives the same classes; at
#: 3σ ASTM G173 Mg I is "not supported" again (as without the rule).
SCALE_CONSISTENT_SIGMAS: float = 2.0


#: Comparisons of a prediction with a detection limit that the scale can make
#: exact (the censored median lands on an unseen group's limit) count a
#: prediction within 1e-9 (relative) below the limit as reaching it, so that
#: rounding in the last bit of an input (x · 0.1 against x / 10) cannot flip
#: them (measured: it moved Ne I's scale in the Kast arc by 0.6 % and its
#: net evidence by 0.18 dex).
TIE_MARGIN: float = 1.0 - 1e-9


def species_groups(g_start: np.ndarray, g_end: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per group, species after species: the species' rank and the group's index.

    Species ``i`` owns groups ``g_start[i]:g_end[i]``; returns (``seg``,
    ``at``) with ``seg`` the rank ``i`` and ``at`` the group index.
    """
    counts = g_end - g_start
    seg = np.repeat(np.arange(g_start.size), counts)
    at = np.arange(int(counts.sum())) + np.repeat(g_start - (np.cumsum(counts) - counts), counts)
    return seg, at


def sorted_segment_medians(v: np.ndarray, seg: np.ndarray, n_seg: int) -> np.ndarray:
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


def species_scales(
    g_start: np.ndarray,
    g_end: np.ndarray,
    I_all: np.ndarray,
    pred_unit_all: np.ndarray,
    good_all: np.ndarray,
    good_uniq_all: np.ndarray,
    unseen_all: np.ndarray,
    dl_all: np.ndarray | None,
    xray: bool,
    sigma_all: np.ndarray | None = None,
    lower_all: np.ndarray | None = None,
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
    if not np.any(counts):
        return [None] * n_sp
    # The groups of every species, species after species.
    seg, at = species_groups(g_start, g_end)
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
        scale = sorted_segment_medians(v_sorted[is_ratio], s_sorted[is_ratio], n_sp)
    consistent = np.ones(v_sorted.size, dtype=bool)
    if dl_all is not None and sigma_all is not None and not xray:
        # Optical: a found group that the model, at the species' scale,
        # predicts more than 2σ below the detection limit cannot have made
        # its peak by the model's own account: the peak is another line or a
        # coincidence, and its ratio (huge: a strong peak over a faint
        # prediction) does not measure the scale. In a dense spectrum such
        # hits are the majority (Fe I in the Goodman FeHeAr lamps sits on
        # Ar II lines the optical set lacks; Mg I in ASTM G173 on telluric
        # dips), and their median inflated the scale until the species'
        # strong lines looked missing. Start from the strongest predicted
        # found group (the best predicted and best measured), as X-ray does,
        # then take the censored median over the consistent groups.
        # u_seg is ascending (species after species): the first group at
        # each species' largest prediction, without a sort.
        pu = pred_unit_all[u_at]
        starts = np.flatnonzero(np.diff(u_seg, prepend=-1) != 0)
        seg_max = np.maximum.reduceat(pu, starts) if starts.size else np.zeros(0)
        at_max = np.flatnonzero(pu == np.repeat(seg_max, np.diff(np.append(starts, pu.size))))
        first = at_max[np.diff(u_seg[at_max], prepend=-1) != 0]
        scale = np.full(n_sp, np.nan)
        scale[u_seg[first]] = ratios[first]
        # Per ratio: the lowest scale at which its group is consistent;
        # the anchor (first) always is.
        floor_r = dl_all[u_at] * 10.0 ** (-SCALE_CONSISTENT_SIGMAS * sigma_all[u_at]) / pu
        floor_r[first] = -np.inf
        floor = np.concatenate([floor_r, np.full(c_at.size, -np.inf)])[order]

        def _consistent(sc: np.ndarray) -> np.ndarray:
            return sc[s_sorted] >= floor

        consistent = _consistent(scale)
        scale = sorted_segment_medians(
            v_sorted[is_ratio & consistent], s_sorted[is_ratio & consistent], n_sp
        )
    if dl_all is not None and c_at.size:
        # Censored median: groups that should be seen at this scale but have
        # no peak enter at the detection limit (an upper bound of their
        # ratio). The median of found lines alone is biased high: only the
        # lines that came out bright were found. Up to four rounds; a species
        # whose median no longer changes keeps it (a round at an unchanged
        # scale gives the same median again).
        c_pred, c_dl = pred_unit_all[c_at], dl_all[c_at]
        for _ in range(4):
            # A round can put the scale exactly on a censored entry (c_dl /
            # c_pred), so that this test is a tie decided by the last bit:
            # the relative margin settles it the same way every time.
            cens = scale[c_seg] * c_pred >= c_dl * TIE_MARGIN
            if sigma_all is not None and not xray:
                consistent = _consistent(scale)
            keep = (is_ratio & consistent) | (~is_ratio & cens[c_of])
            scale = sorted_segment_medians(v_sorted[keep], s_sorted[keep], n_sp)
    if lower_all is not None and dl_all is not None and not xray:
        # A species found only on peaks whose height is a lower bound (clipped
        # or split tops) has no measured scale, but a least one: the largest
        # observed / predicted ratio among them. Its other lines are then
        # predicted at least that strong, so lines missing even so count
        # against it. Without this such a species had no scale and no
        # missing-line evidence at all, and every species with one line
        # under a saturated peak was "possible" on that line alone.
        bound = lower_all[at] & ~has[seg]
        if np.any(bound):
            r = I_all[at[bound]] / pred_unit_all[at[bound]]
            least = np.full(n_sp, -np.inf)
            np.maximum.at(least, seg[bound], r)
            use = np.isfinite(least) & ~has
            scale = np.where(use, least, scale)
            has = has | use
    return [float(v) if h else None for v, h in zip(scale.tolist(), has.tolist(), strict=True)]
