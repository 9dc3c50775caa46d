"""Joint explanation: shared peaks are decided globally, strongest explanation first.

Species are ranked by net evidence (:mod:`workbench.matching.scoring`), best
first. Walking down the ranking, a species' found group whose peak is
already *claimed* by a better-ranked species of another element (one called
"probable" or better) is *explained* there when that species' predicted
intensity at the peak is at least ``EXPLAIN_FRACTION`` of the observed
intensity (any claim counts for a peak list without intensities), or, in
emission, when its prediction accounts for the peak within 2σ of its own
model (σ in dex, :func:`workbench.matching.sourcemodels.model_sigma`:
|log10(observed / predicted)| ≤ 2σ) *and* is the closer account of the two,
|log10(observed / its prediction)| / σ no larger than this species' own.
A fixed 30 % is 2σ only of a 0.26-dex model; tabulated lamp intensities
scatter by 0.8 dex line to line (``discharge-lamp``), so a lamp gas's line
drawn 5–16× above its tabulated strength was found by the gas yet left to an
absent line-rich species (V I, Gd I, Nd II, Ce) that reached "probable" on
such peaks (stop 22, ``benchmarks/lamp_gases.py``). Amplitudes under such a
model tell two species apart only weakly, hence the second condition: of
two accounts the one nearer the observed height in its own σ wins.

Amplitude and position together. Where the spectrum's line-to-line scatter
of positions is known (:func:`workbench.matching.passes.position_scatter`:
the median offset and 1.4826 × the median absolute deviation of the found,
unique, single-line groups of the species called "probable" or better, at
least 0.05 half-window, from at least 8 groups), a claim explains a
single-line group's peak only when it is also the closer account of the
peak with positions counted: z_int² + z_pos² of the claim no larger than
this species' own, z_pos = (offset − common offset) / scatter, z_int as
above (0 where a height or a prediction is unknown). The position a group of
several lines within the resolution would put its peak at is its blend's,
which is not modelled in emission, so such groups are judged on amplitudes
alone. Why: in the Keck LRIS arc (pypeit 2.0.1, held-out) the peak at
577.09 nm sits 0.01 nm (after the spectrum's common offset) from Hg I
577.12 nm, which the arc's own pipeline identified, and 0.08 nm — over four
times the arc's scatter — from the nearest Ne I line, a weak companion of
Ne I 576.60 nm, itself absent; on amplitudes alone Ne I took the peak.
Measured (stop 29), before → after: that Hg I group counted again (Hg I net
evidence 0.22 → 1.02 dex, still "possible"); invented five-gas lamps
(comparable variant) 2 more gases "established", no false call; judged
with every group's offset, not only single lines', Ce II reached "probable"
twice beside the five gases, a line-rich species always having some line
nearer a blended peak than the gases' own.

In emission this species' own account of a claimed peak (both the 30 %
blend test and the closer-account test) is taken at the scale its *free*
groups measure — found on peaks no better species of another element
claims — never above its fitted scale, and zero when none of its two or
more found groups is free (:func:`independent_scale_factor`). The fitted scale is the median of
observed / predicted over the species' found groups, so a species whose
hits sit on peaks better species account for is scaled to those very
peaks and predicts them at their observed height by construction: the
blend test then always left them its own. Si II in a pure Kr lamp (two
groups, both on Kr I lines Kr predicts at 0.24 and 1.0 of their height, at
a scale fitted on them: 1.0 of their height) and Ce I + II beside the five
gases of the invented lamps (``benchmarks/lamp_gases.py``) kept lamp lines
as their own that way (stop 23). An explained group is counted neither for
nor against the lower species (its intensity is not re-spent), and the
species is re-evaluated. If it is still
"probable" or better, it claims its own found groups' peaks in turn.

Uniqueness is decided in the same walk: a found group counts as unique when
no other plausible species competes for its peak (the pass's own rule), or
when no better-ranked species of another element called "probable" or
better has a line there: a species ranked below cannot take a peak away
from a better one.

X-ray (``x-ray`` model on an energy axis) adds two rules:

* amplitudes decide a shared peak: a group is explained also when the better
  species' prediction is at least ``XRAY_ACCOUNT_FRACTION`` (10^(−2·0.2)
  ≈ 0.40) of the observed height, i.e. it accounts for the whole peak within
  2σ of the x-ray model, whatever this species would predict itself (Pb L
  takes the Pb Lα/As Kα peak; As K keeps only its own Kβ);
* an established family supports its element's other families: when the
  other family's main group is found and its observed total intensity
  (scale × summed group strengths) relative to the established family's is
  not above ``FAMILY_FACTOR`` (3) × the thin-sample family ratio of
  :func:`workbench.xray.excitation.family_ratio` when it is the lower-energy
  family (absorption in the sample only weakens that one), or not below the
  ratio / 3 when it is the higher-energy one, its net evidence is raised to
  at least the established family's. Families established before the walk
  do this first, so that the supported family ranks and claims its peaks.

So a species cannot be established on lines a far better supported species
explains (Ca II H at 396.85 nm in the Sun is not evidence for Dy II), while
two species that truly share a peak keep their unique lines. The report
lists, per species, which better species explained some of its groups.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from workbench.matching.evidence import EvidencePass, ObservedLines
from workbench.matching.reference import ReferenceIndex
from workbench.matching.scoring import SpeciesEvidence, evaluate

__all__ = [
    "EXPLAIN_FRACTION",
    "FAMILY_FACTOR",
    "XRAY_ACCOUNT_FRACTION",
    "explain_jointly",
    "independent_scale_factor",
]

#: Part of the observed intensity a better species must predict to explain a peak.
EXPLAIN_FRACTION: float = 0.3
#: X-ray: an observed family ratio within this factor of the predicted
#: thin-sample ratio is consistent (``workbench.xray.excitation.
#: FAMILY_RATIO_UNCERTAINTY``, matrix absorption; common practice, no source).
FAMILY_FACTOR: float = 3.0
#: X-ray: a better species whose prediction is at least this part of the
#: observed height accounts for the whole peak within 2σ of the x-ray model
#: (10^(−2 × 0.2 dex) ≈ 0.40; σ of ``workbench.matching.sourcemodels``).
XRAY_ACCOUNT_FRACTION: float = 10.0 ** (-2.0 * 0.2)


def explain_jointly(
    ev_pass: EvidencePass,
    obs: ObservedLines,
    index: ReferenceIndex,
    *,
    sigma_dex: float,
    strong_fraction: float,
    family_ratio: Callable[[str, str, str], float] | None = None,
    position: tuple[float, float] | None = None,
) -> None:
    """Re-evaluate every species in place with peaks explained by better species removed.

    ``family_ratio(element, numerator, denominator)`` (X-ray only) gives the
    predicted intensity ratio of two line families of one element; with it,
    an established family supports the element's other families (module
    docstring). ``position`` (optical): the spectrum's common offset and
    line-to-line scatter in half-windows
    (:func:`workbench.matching.passes.position_scatter`); with it a claim
    explains a peak only as the closer account in amplitude and position
    together (module docstring).
    """
    established: dict[str, tuple[str, float, float, float]] = {}
    n_obs = obs.position.size
    claim_pred = np.full(n_obs, -np.inf)
    claim_sp = np.full(n_obs, -1, dtype=np.int64)
    # σ (dex) of the claiming species' model at each claimed peak.
    claim_sig = np.zeros(n_obs)
    # Elements as integer codes (-1 = none): comparing strings in object
    # arrays per species is the slow part of this walk otherwise.
    el_code = {el: i for i, el in enumerate(sorted({v.element for v in ev_pass.evidence.values()}))}
    claim_el = np.full(n_obs, -1, dtype=np.int64)
    # Offset (half-windows) of the claiming species' group from each claimed peak.
    claim_off = np.zeros(n_obs)
    # Element of the best-ranked "probable"-or-better species that has a
    # found group at each peak (-1 = none yet).
    touch_el = np.full(n_obs, -1, dtype=np.int64)
    with_int = np.isfinite(obs.intensity)
    if family_ratio is not None and obs.detection_limit:
        # A family whose element's higher-energy family should be plainly
        # visible, and is not there, is refuted by it (before the ranking, so
        # that Tm M cannot take Al Kα's peak when Tm L is missing).
        _family_refutation(ev_pass, obs, index, family_ratio)
        for ev in ev_pass.evidence.values():
            if ev.family_missing_dex:
                evaluate(
                    ev,
                    detection_limit=obs.detection_limit,
                    sigma_dex=sigma_dex,
                    n_tried=ev_pass.n_species_tried,
                    strong_fraction=strong_fraction,
                )
    if family_ratio is not None:
        # Families already established before the walk support their
        # element's other families first, so that those rank (and claim
        # their peaks) accordingly.
        for ev in sorted(ev_pass.evidence.values(), key=lambda v: (-v.net_evidence_dex, v.label)):
            total = _family_total(ev)
            if ev.level >= 3 and ev.family and total is not None:
                established.setdefault(
                    ev.element, (ev.family, total, ev.net_evidence_dex, _main_position(ev))
                )
        for ev in ev_pass.evidence.values():
            if ev.family is not None and _family_support(ev, established, family_ratio):
                evaluate(
                    ev,
                    detection_limit=obs.detection_limit,
                    sigma_dex=sigma_dex,
                    n_tried=ev_pass.n_species_tried,
                    strong_fraction=strong_fraction,
                )
    ranked = sorted(ev_pass.evidence.values(), key=lambda v: (-v.net_evidence_dex, v.label))
    for ev in ranked:
        g = ev.groups
        el = el_code[ev.element]
        found = g["found"]
        pk = np.where(found, g["peak"], 0)
        # Unique in the joint sense: no better-ranked supported species of
        # another element has a line at the peak.
        jointly_unique = found & ((touch_el[pk] == -1) | (touch_el[pk] == el))
        changed = bool(np.any(jointly_unique & ~g["unique"]))
        if changed:
            g["unique"] = g["unique"] | jointly_unique
        claimed = found & (claim_sp[pk] >= 0) & (claim_el[pk] != el)
        expl = np.zeros_like(found)
        if np.any(claimed):
            obs_h = np.where(with_int[pk], obs.intensity[pk], 0)
            enough = np.where(
                with_int[pk] & ev.missing_evidence,
                claim_pred[pk] >= EXPLAIN_FRACTION * obs_h,
                True,
            )
            own_pred = np.where(np.isfinite(g["predicted"]), g["predicted"], 0.0)
            z_claim = z_own = None
            if "delta" not in g and not g.get("absorption") and ev.missing_evidence:
                # Emission: this species' own account of a claimed peak at the
                # scale its unclaimed lines measure, not one fitted on the
                # claimed peaks themselves (module docstring).
                own_pred = own_pred * independent_scale_factor(
                    ev, found & ~claimed, pk, obs.intensity, obs.saturated
                )
                # Emission: a weaker claim explains the peak too when it
                # accounts for it within 2σ of the better species' own model
                # and is the closer account of the two, in σ (module docstring).
                z_claim = _account_z(obs_h, claim_pred[pk], claim_sig[pk])
                z_own = _account_z(obs_h, own_pred, g["sigma"])
                closer = z_claim <= np.nan_to_num(z_own, nan=np.inf)
                enough |= with_int[pk] & (z_claim <= 2.0) & closer
            # A peak both species predict at a comparable height is a blend and
            # counts for both; it is explained away only when this species
            # itself would account for little of it.
            obs_i = np.where(with_int[pk], obs.intensity[pk], np.inf)
            own_small = (own_pred < EXPLAIN_FRACTION * obs_i) | (not ev.missing_evidence)
            if "delta" in g:
                # X-ray: the better species' prediction alone accounts for the
                # peak within 2σ of its model: no significant excess is left
                # for this species, whatever it would predict itself.
                own_small = own_small | (claim_pred[pk] >= XRAY_ACCOUNT_FRACTION * obs_i)
            if position is not None and "delta" not in g:
                # Where the line-to-line scatter of positions is known, the
                # claim must also be the closer account of the peak in
                # amplitude and position together (module docstring).
                centre_u, sigma_u = position
                if z_claim is None:  # not computed above (absorption)
                    z_claim = _account_z(obs_h, claim_pred[pk], claim_sig[pk])
                    z_own = _account_z(obs_h, own_pred, g["sigma"])
                use_int = with_int[pk] & ev.missing_evidence
                zc = np.where(use_int & np.isfinite(z_claim), z_claim, 0.0)
                zo = np.where(use_int & np.isfinite(z_own), z_own, 0.0)
                pc = (claim_off[pk] - centre_u) / sigma_u
                po = np.nan_to_num((g["offset_u"] - centre_u) / sigma_u, nan=0.0)
                # Several lines within the resolution: the group's peak is
                # their blend's, not modelled in emission; amplitudes alone.
                enough &= (zc**2 + pc**2 <= zo**2 + po**2) | (g["offset_lines"] > 1)
            expl = claimed & enough & own_small
        if family_ratio is not None and ev.family is not None:
            changed |= _family_support(ev, established, family_ratio)
        if np.any(expl) or changed:
            g["explained"] = expl
            ev.explained_by = sorted({index.species_names[int(c)] for c in claim_sp[pk[expl]]})
            evaluate(
                ev,
                detection_limit=obs.detection_limit,
                sigma_dex=sigma_dex,
                n_tried=ev_pass.n_species_tried,
                strong_fraction=strong_fraction,
            )
        own = found & ~g["explained"]
        total = _family_total(ev)
        if ev.level >= 3 and ev.family and total is not None and ev.element not in established:
            established[ev.element] = (
                ev.family,
                total,
                ev.net_evidence_dex - ev.family_dex,
                _main_position(ev),
            )
        if ev.level >= 2:
            t = pk[own]
            t = t[touch_el[t] == -1]
            touch_el[t] = el
        if ev.level >= 2:
            p = pk[own]
            pred = g["predicted"][own]
            better = pred > claim_pred[p]
            claim_pred[p[better]] = pred[better]
            claim_sp[p[better]] = ev.code
            claim_sig[p[better]] = g["sigma"][own][better]
            claim_el[p[better]] = el
            claim_off[p[better]] = np.nan_to_num(g["offset_u"][own][better], nan=0.0)


def _account_z(observed: np.ndarray, predicted: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """How far a prediction is from the observed heights, in its model's σ (decades).

    |log10(observed / predicted)| / σ; inf or NaN where a height or a
    prediction is zero (the callers decide what that means).
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.abs(np.log10(observed / predicted)) / sigma


def independent_scale_factor(
    ev: SpeciesEvidence,
    free: np.ndarray,
    peak: np.ndarray,
    intensity: np.ndarray,
    saturated: np.ndarray,
) -> float:
    """Emission: the species' scale measured on its unclaimed lines, relative to its scale.

    A species' intensity scale is the censored median of observed /
    predicted over its found groups (:mod:`workbench.matching.evidence`), so
    where its found groups sit on peaks better species of other elements
    account for, the scale is fitted on those very peaks and its prediction
    there matches them by construction: the 30 % blend test and the closer
    account of stop 22 then always keep the peak as its own. Its account of
    a claimed peak is judged instead at the scale its *free* groups (found,
    on peaks no better species of another element claims, with a known
    unsaturated height) measure: the median of observed / predicted-per-unit-
    scale over them. The factor is never above 1 (the rule only takes back
    what the claimed peaks gave themselves) and is 0 when no free group is
    left (nothing in the spectrum supports the species' scale but peaks that
    others account for). A species with a single found group is left alone
    (factor 1): it has no count for a circular scale to inflate, and its
    one peak stays an ambiguity of two accounts, reported as an unresolved
    overlap (a trace element's only line under a matrix line).

    Parameters
    ----------
    ev : SpeciesEvidence
        The species (its ``groups`` and ``scale``).
    free : numpy.ndarray of bool
        Per group: found on a peak no better species of another element claims.
    peak : numpy.ndarray of int
        Per group: its peak's index (any value where not found).
    intensity, saturated : numpy.ndarray
        The observed peaks' heights (NaN where unknown) and saturation flags.

    Returns
    -------
    float
        Factor in [0, 1] to multiply the species' predictions by; 1 where the
        species has no scale or a single found group.
    """
    g = ev.groups
    if ev.scale is None or not ev.scale > 0 or np.count_nonzero(g["found"]) < 2:
        # One found group: nothing to count (the classes above "possible"
        # need two); its peak stays an ambiguity of two accounts, warned as
        # an unresolved overlap (interference.py).
        return 1.0
    height = intensity[peak]
    good = (
        free
        & g["known"]
        & np.isfinite(height)
        & (height > 0)
        & ~saturated[peak]
        & (g["predicted"] > 0)
    )
    if not np.any(good):
        return 0.0
    # The free groups' scale over the fitted one: median(observed / (predicted
    # / scale)) / scale, i.e. the median of observed / predicted.
    return min(1.0, float(np.median(height[good] / g["predicted"][good])))


def _family_refutation(
    ev_pass: EvidencePass,
    obs: ObservedLines,
    index: ReferenceIndex,
    family_ratio: Callable[[str, str, str], float],
) -> None:
    """Charge a family for its element's missing higher-energy family (X-ray).

    A family F seen on its main peak implies its element's other families at
    the thin-sample ratio (:func:`workbench.xray.excitation.family_ratio`).
    Absorption in the sample weakens the lower-energy family more, so a
    higher-energy family G is predicted at *least* that strong: its lines'
    heights are h_G = ratio · (h_F · w_F / f_F) · f_G / w_G (h the main peak
    height, w the detector FWHM, f the fraction of the family's counts within
    half a FWHM of the line). Each of G's lines (≥ 0.1 of its strongest) with
    no observed peak within the match window costs, like a missing line,
    log10[ε + (1 − ε)·Φ(z)], z = (log10 DL − log10 h_G)/σ with
    σ = log10 ``FAMILY_FACTOR`` (the ratio's uncertainty). Tm M on Al Kα's
    peak with no Tm L at 7–8 keV, Re M on a Pb M satellite with no Re L: the
    physics of the element, not a coincidence of one peak, decides.
    Sets ``family_missing_dex`` of the evidence in place.
    """
    from scipy import special

    from workbench.matching.scoring import LOSS_PROBABILITY

    sigma = float(np.log10(FAMILY_FACTOR))
    res = obs.resolution if obs.resolution is not None else 2.0 * obs.half_window
    if obs.position.size == 0:
        return
    o_order = np.argsort(obs.position)
    o_pos, o_res, o_hw = obs.position[o_order], res[o_order], obs.half_window[o_order]
    strengths = np.nan_to_num(np.asarray(ev_pass.strengths, dtype=np.float64))
    fams: dict[tuple[str, str], np.ndarray] = {}
    for code, (el, fam) in enumerate(zip(index.species_element, index.species_family, strict=True)):
        if fam:
            fams[(el, fam)] = np.flatnonzero(index.species == code)

    def fraction(lines: np.ndarray, e: float) -> float:
        w = strengths[lines]
        tot = float(np.sum(w))
        if tot <= 0:
            return 0.0
        hw = float(np.interp(e, o_pos, o_hw))
        return float(np.sum(w[np.abs(index.position[lines] - e) <= hw]) / tot)

    for ev in ev_pass.evidence.values():
        ev.family_missing_dex = 0.0
        g = ev.groups
        if not ev.family or not ev.main_found or ev.scale is None:
            continue
        known = np.where(g["known"], g["predicted"], -np.inf)
        main = int(np.argmax(known))
        e_f = float(g["position"][main])
        h_f = float(obs.intensity[int(g["peak"][main])])
        f_lines = fams.get((ev.element, ev.family))
        if f_lines is None or not np.isfinite(h_f) or h_f <= 0:
            continue
        f_f = fraction(f_lines, e_f)
        if f_f <= 0:
            continue
        counts_f = h_f * float(np.interp(e_f, o_pos, o_res)) / f_f
        total = 0.0
        for (el, fam), lines in fams.items():
            if el != ev.element or fam == ev.family:
                continue
            lines = lines[ev_pass.in_range[lines]]
            if lines.size == 0 or float(np.min(index.position[lines])) <= e_f:
                continue  # only a higher-energy family is a lower bound
            ratio = family_ratio(el, fam, ev.family)
            if not (np.isfinite(ratio) and ratio > 0):
                continue
            w = strengths[lines]
            if not np.any(w > 0):
                continue
            all_lines = fams[(el, fam)]
            for ln in lines[w >= 0.1 * float(np.max(w))]:
                e_g = float(index.position[ln])
                i = int(np.searchsorted(o_pos, e_g))
                hw = float(np.interp(e_g, o_pos, o_hw))
                near = [j for j in (i - 1, i) if 0 <= j < o_pos.size]
                if any(abs(o_pos[j] - e_g) <= hw for j in near):
                    continue  # a peak is there (how strong is another matter)
                h_g = (
                    ratio
                    * counts_f
                    * fraction(all_lines, e_g)
                    / float(np.interp(e_g, o_pos, o_res))
                )
                if h_g <= 0:
                    continue
                dl = float(obs.detection_limit_at(np.array([e_g]))[0])
                z = (np.log10(dl) - np.log10(h_g)) / sigma
                total += float(
                    np.log10(LOSS_PROBABILITY + (1.0 - LOSS_PROBABILITY) * special.ndtr(z))
                )
        ev.family_missing_dex = total


def _main_position(ev) -> float:
    """Position of a family's main (strongest predicted, known) group."""
    g = ev.groups
    return float(g["position"][int(np.argmax(np.where(g["known"], g["predicted"], -np.inf)))])


def _family_total(ev) -> float | None:
    """Observed total of a family: its scale times the summed strength of its known groups."""
    if ev.scale is None:
        return None
    g = ev.groups
    return float(ev.scale * np.sum(np.where(g["known"], g["strength"], 0.0)))


def _family_support(
    ev: SpeciesEvidence,
    established: dict[str, tuple[str, float, float, float]],
    family_ratio: Callable[[str, str, str], float],
) -> bool:
    """Give ``ev`` the evidence of an established family of its element (X-ray).

    The family is present if its element is (the physics links them); what
    must agree is where and how strong it is: its main group found, and its
    observed total, relative to the established family's, not more than
    ``FAMILY_FACTOR`` × the predicted thin-sample ratio when it is the
    lower-energy family (absorption in the sample only weakens it), not less
    than the ratio / ``FAMILY_FACTOR`` when it is the higher-energy one.
    Returns whether anything changed.
    """
    est = established.get(ev.element)
    if est is None or est[0] == ev.family or not ev.main_found:
        return False
    fam, total_1, e_1, est_pos = est
    total_2 = _family_total(ev)
    if total_2 is None or total_1 <= 0:
        return False
    ratio = family_ratio(ev.element, ev.family, fam)
    if not (np.isfinite(ratio) and ratio > 0):
        return False
    observed = total_2 / total_1
    # Absorption in the sample weakens the lower-energy family, never
    # strengthens it: only the other side of the ratio is bounded.
    lower = _main_position(ev) < est_pos
    if (observed > FAMILY_FACTOR * ratio) if lower else (observed < ratio / FAMILY_FACTOR):
        return False
    if ev.family_floor_dex == e_1:
        return False
    ev.family_floor_dex = e_1
    ev.family_support = f"{ev.element} {fam}"
    return True
