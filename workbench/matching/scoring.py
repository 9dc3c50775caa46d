"""Per-species evidence, net evidence in decades, and the verdict class.

The model (issue 9) replaces hard vetoes by soft evidence. For one species,
counted per resolvable group (:mod:`workbench.matching.groups`):

groups that should be seen
    predicted at or above the detection limit (the species' intensity scale
    × group strength × instrument response; see
    :mod:`workbench.matching.evidence`), or, for a peak list without
    intensities, groups at least ``strong_fraction`` of the species'
    strongest. Masked groups (missing, but a peak at least as strong as the
    prediction lies within three half-windows and could hide them), crowded
    groups (found, with such a peak beside their window: judged alike, so
    that the chance test does not keep the hits and drop the misses) and
    groups *explained* by a better-supported species
    (:mod:`workbench.matching.joint`) are left out, counted neither way.
chance probability ``p``
    Binomial probability that at least ``k`` of the ``n`` groups that should
    be seen would have a peak in their window by coincidence, with per-group
    probability 1 − exp(−ρ·(2·tol + span)) (span: the group's extent, so a
    long chain of close lines pays for being easy to hit), ρ the density of
    observed peaks (any peak in the window makes a group found, so any peak
    is a chance hit; on the energy axis, peaks at least 30 % as intense as
    the prediction). This is what keeps a species with few listed lines from "fitting" a dense
    spectrum. On a wavelength axis ``p`` is combined (Fisher) with the
    closeness probability (:func:`closeness_probability`): how likely chance
    peaks would sit as close to their lines as the found ones do, measured
    from the spectrum's common peak-to-line offset
    (:func:`workbench.matching.passes.offset_centre`; 0, the scale as
    given, when too few well-identified groups measure it). Both are exact under chance,
    so the correction below covers the pair. Absorption: the density is
    the local dip density, the per-group chance min(1, ρ·(2·tol + span))
    (merged dips are spread more evenly than a Poisson scatter), and the
    closeness is that of the nearest of all the dips in the window
    (:mod:`workbench.matching.evidence`).
corrected chance probability
    ``p_corr = 1 − (1 − p)^N`` (Šidák), ``N`` the number of species tried
    in the run (those with at least one candidate, typically a few hundred):
    the probability that *some* species would do this well by chance.
missing-line penalty
    Each group that should be seen is missed, if the species is present,
    with probability m = ε + (1 − ε)·Φ(z), z = (log10 DL − log10
    predicted) / σ (emission: predicted at the species' contrast, which
    can only lower its weaker lines; :mod:`workbench.matching.contrast`),
    σ the source model's uncertainty in decades
    (:mod:`workbench.matching.sourcemodels`), ε = 0.2
    (:data:`LOSS_PROBABILITY`) the chance that a line of a species that is
    there is lost for reasons outside the model (unresolved blend, filter
    or response edge, self-absorption, a wrong tabulated intensity). The
    penalty is log10 of the probability that a present species leaves a
    record of misses at least as bad as the one observed
    (:func:`misses_tail_probability`: the exact tail of the weighted miss
    count Σ ln((1 − m)/m) over the missed groups). A missing line counts
    against the species in proportion to how surely it should have been
    seen, and only as far as the misses exceed what presence itself
    explains: the binomial chance probability already charges every miss
    against the coincidence hypothesis (k of n groups found, not k of k),
    so summing log10 m over the missed groups on top counted the ordinary
    misses of a present species twice (Fe I of the Goodman Fe lamps: 13 of
    29 groups missed where its 1.2-dex model expects 13, −4.1 decades). One
    surely-visible missing line costs log10 0.2 = −0.7 decades when it is
    the only group that should surely be seen, less when others could have
    been missed as well; the penalty is never harsher than the sum of the
    single-line terms. Without intensities or a detection limit the
    penalty is not available and the report says so. (X-ray: the sum of
    the single-line terms, unchanged.)
net evidence (decades)
    ``E = −log10(p_corr) + Σ penalties + prior``, the prior being the
    optional abundance prior's log-odds (:mod:`workbench.matching.priors`;
    0 with the default ``none``).

Verdict classes, strongest first (``verdict_level``); "found groups" are
groups with a peak, not explained by a better species:

3 ``established``
    E ≥ 3 (a coincidence as good as this, corrected for every species tried,
    is at most 1 in 1000 once the missing lines are accounted for), at least
    2 found groups counted in ``p``, at least 1 of them unique (no other
    plausible species competes for its peak), and missing-line evidence
    available (intensities and a detection limit).
2 ``probable``
    E ≥ 1.5, at least 2 found groups counted in ``p``, at least 1 unique.
    This is the cap for peak lists without intensities.

(Optical: with a positive abundance prior, "established" and "probable"
also need the data's own chance probability p ≤ 0.05 — a prior can tip a
call, not make one; :func:`~workbench.matching.prior_test.prior_capped`.
Under the absorption source model the data's test is
:func:`~workbench.matching.prior_test.absorption_prior_test` — the binomial tail with
the usable dip density, Fisher-combined with the closeness of the dips to
each unresolved blend's forward-modelled position
(:mod:`workbench.matching.absorption`) — and such a species may be
"probable" on one resolvable feature, its predicted strongest, found,
unique and counted (neither masked, crowded nor explained).)
1 ``possible``
    at least one found group and E ≥ log10 0.5 = −0.3 (some support, not
    outweighed by missing lines: with the chance evidence counted, a record
    of misses that a present species gives at least half the time).
    Includes species whose lines are all shared with others (the peak is
    theirs as much as anyone's), but not a species whose every found group
    is *explained* by a better-supported species: nothing of the spectrum is
    left to it, so it is "not supported" and the report names the species
    that explained its lines (``explained_by``). Listing such species as
    "possible" put cadmium on a titanium-white paint chip because two Cd I
    lines sat on Ti I and Fe I peaks while its five strongest lines were
    missing.
0 ``not supported``
    anything weaker. Listed when candidates existed, so that the analyst
    sees what was considered and why it was rejected.

X-ray rules (``x-ray`` source model on an energy axis only; optical results
are untouched): position and ratio agreement, the sole-explanation term,
family support and the class changes on the energy axis are described and
computed in :mod:`workbench.matching.xray_scoring`.
The score (0–1) orders species within a class: ``max(E, 0) / (max(E, 0) + 3)``.
The thresholds (3, 1.5 decades) were fixed before the real spectra were run;
the loss probability 0.2 and the "possible" floor log10 0.5 were chosen on
the tune set only (see ``docs/evidence-model.md``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import special

from workbench.matching.chance import (
    CLOSENESS_FLOOR,
    closeness_probability,
    fisher_combined,
    misses_tail_probability,
    sidak_corrected,
)
from workbench.matching.prior_test import (
    PRIOR_DATA_P,
    absorption_prior_test,
    main_feature_counted,
    prior_capped,
)
from workbench.matching.xray_scoring import (
    xray_agreement,
    xray_level,
    xray_main_found_and_sole,
    xray_missing_penalty_dex,
)

__all__ = [
    "CLOSENESS_FLOOR",
    "ESTABLISHED_DEX",
    "LOSS_PROBABILITY",
    "MISSING_FLOOR_DEX",
    "POSSIBLE_DEX",
    "PRIOR_DATA_P",
    "PROBABLE_DEX",
    "VERDICTS",
    "SpeciesEvidence",
    "class_level",
    "closeness_probability",
    "decide_verdict",
    "evaluate",
    "fisher_combined",
    "misses_tail_probability",
    "prior_capped",
    "rescore_closeness",
    "score_for",
    "score_of",
]

#: Verdict class names by level.
VERDICTS: dict[int, str] = {3: "established", 2: "probable", 1: "possible", 0: "not supported"}

#: Net evidence needed for "established" / "probable" / "possible" (decades).
ESTABLISHED_DEX: float = 3.0
PROBABLE_DEX: float = 1.5
#: "possible": a record of misses that a present species gives at least half
#: the time, once the chance evidence is counted (log10 0.5; −1 before the
#: missing-line tail, when misses were summed). Chosen on the tune set: at
#: log10 ε = −0.7 the non-lamp species called "possible" there rose from 412
#: (main) to 666; at −0.3 they are 361.
POSSIBLE_DEX: float = float(np.log10(0.5))
#: Probability that a line of a species that IS present is lost for reasons
#: outside the source model (unresolved blend with a stronger neighbour,
#: filter or response edge, self-absorption, a wrong tabulated intensity).
LOSS_PROBABILITY: float = 0.2
#: Largest penalty one missing group can bring (decades): log10 of LOSS_PROBABILITY.
MISSING_FLOOR_DEX: float = float(np.log10(LOSS_PROBABILITY))


@dataclass
class SpeciesEvidence:
    """Evidence gathered for one species (see module docstring)."""

    code: int
    label: str
    element: str
    ion: int | None
    family: str | None
    n_lines_in_range: int = 0
    n_strong_in_range: int = 0
    n_groups_in_range: int = 0
    found_lines: list[int] = field(default_factory=list)  # reference indices
    found_peaks: list[int] = field(default_factory=list)  # best peak per found line
    missing_lines: list[int] = field(default_factory=list)  # strongest line per missing group
    missing_predicted: list[float] = field(default_factory=list)
    shared_lines: list[int] = field(default_factory=list)
    unique_lines: list[int] = field(default_factory=list)
    masked_lines: list[int] = field(default_factory=list)
    missing_strong: list[int] = field(default_factory=list)
    explained_by: list[str] = field(default_factory=list)
    chance_probability: float = 1.0
    binomial_probability: float = 1.0  # the binomial tail alone (before closeness)
    chance_probability_corrected: float = 1.0
    closeness_probability: float = 1.0
    missing_penalty_dex: float = 0.0
    net_evidence_dex: float = 0.0
    missing_evidence: bool = False
    prior_dex: float = 0.0
    agreement_dex: float = 0.0
    family_dex: float = 0.0
    family_floor_dex: float | None = None
    family_support: str | None = None
    family_missing_dex: float = 0.0  # X-ray: missing higher-energy family (joint.py)
    sole_explanation: bool = False  # X-ray: main group the only explanation of a ≥10σ peak
    overlap_floor_dex: float | None = None  # X-ray: a spectrum fit needs it (xray_overlap)
    xray: bool = False
    main_found: bool = True
    n_groups_found: int = 0
    n_groups_matched: int = 0
    n_groups_counted: int = 0
    n_groups_expected: int = 0
    n_strong_found: int = 0
    n_unique_peaks: int = 0
    found_fraction: float = 0.0
    pattern_r: float | None = None
    scale: float | None = None
    contrast: float = 1.0  # emission: exponent of the predicted strengths (contrast.py)
    missing_penalty_listed_dex: float | None = None  # the penalty at contrast 1, where b > 1
    level: int = 0
    score: float = 0.0
    groups: dict[str, Any] = field(default_factory=dict, repr=False)
    pooled_with: list[str] = field(default_factory=list)  # see workbench.matching.pooling
    pooled_evidence_dex: float | None = None
    #: The class on the species' own evidence when pooling its element's ion
    #: stages raised it (workbench.matching.pooling); None when not raised.
    own_level: int | None = None

    @property
    def verdict(self) -> str:
        """Name of the verdict class."""
        return VERDICTS[self.level]

    @property
    def raised_by_pooling(self) -> bool:
        """Whether the class comes from the element's pooled stages, not the species alone."""
        return self.own_level is not None and self.own_level < self.level


def evaluate(
    ev: SpeciesEvidence,
    *,
    detection_limit: float | None,
    sigma_dex: float,
    n_tried: int,
    strong_fraction: float,
) -> None:
    """Compute counts, chance probability, penalty, net evidence, level and score in place."""
    g = ev.groups
    valid = ~g["explained"]
    found, nset = _found_and_counted(g)
    # count_nonzero: np.sum on booleans costs a few µs more a call, and
    # evaluate runs some 400 times on 10,000 random peaks.
    k = int(np.count_nonzero(nset & found))
    n = int(np.count_nonzero(nset))
    ev.n_groups_found = int(np.count_nonzero(found))
    ev.n_groups_matched = int(np.count_nonzero(g["found"]))
    ev.n_groups_counted = k
    ev.n_groups_expected = n
    # Distinct peaks by a set: np.unique costs ~15 µs a call on a few dozen
    # indices, and evaluate runs some 400 times on 10,000 random peaks.
    ev.n_unique_peaks = len(set(g["peak"][found & g["unique"]].tolist()))
    strong = g["known"] & (g["strength"] >= strong_fraction)
    ev.n_strong_found = len(set(g["peak"][found & strong].tolist()))
    ev.binomial_probability = (
        float(special.betainc(k, n - k + 1, float(np.mean(g["p_line"][nset])))) if k else 1.0
    )
    _chance_terms(ev, nset, found)
    # A visible group of strength unknown (a listed line, evidence.py) has no
    # prediction to weigh its absence by.
    missing = g["visible"] & g["known"] & ~g["found"] & ~g["masked"] & valid
    pred = g["predicted"]
    penalty = 0.0
    ev.missing_penalty_listed_dex = None
    if ev.missing_evidence and detection_limit and missing.any():
        dl = g.get("dl")
        dl = dl if dl is not None else np.full(pred.size, float(detection_limit))
        sig = g["sigma"] if "sigma" in g else np.full(pred.size, sigma_dex)
        if "delta" in g:
            # X-ray: each missing group costs log10 P(not seen | present).
            penalty = xray_missing_penalty_dex(_miss_probability(dl, pred, sig), missing)
        else:
            penalty = _misses_penalty(dl, pred, sig, nset, missing)
            pred_m = g.get("predicted_miss")
            if pred_m is not None:
                # At the species' contrast (contrast.py); the penalty at the
                # listed ratios is kept for the report's note.
                ev.missing_penalty_listed_dex = penalty
                penalty = _misses_penalty(dl, pred_m, sig, nset, missing)
    if "delta" in g:
        # X-ray: the element's missing higher-energy family (joint.py).
        penalty += ev.family_missing_dex
    ev.missing_penalty_dex = penalty
    ev.xray = "delta" in g
    if ev.xray:
        use = nset & found & g["unique"]
        ev.agreement_dex = xray_agreement(g, use, loss_probability=LOSS_PROBABILITY)
        ev.main_found, ev.sole_explanation = xray_main_found_and_sole(g, use)
    _net_evidence(ev, n_tried)
    m_order = np.argsort(-pred[missing], kind="stable")
    ev.missing_lines = g["rep"][missing][m_order].tolist()
    ev.missing_predicted = pred[missing][m_order].tolist()
    ev.missing_strong = g["rep"][missing & strong][
        np.argsort(-pred[missing & strong], kind="stable")
    ].tolist()
    ev.masked_lines = g["rep"][g["masked"]].tolist()
    denom = float(g["strength"][nset].sum())
    if denom > 0:
        ev.found_fraction = float(g["strength"][nset & found].sum() / denom)
    else:
        ev.found_fraction = 0.0
    ev.level = decide_verdict(ev)
    ev.own_level = None
    ev.score = score_of(ev)


def _miss_probability(dl: np.ndarray, pred: np.ndarray, sig: np.ndarray) -> np.ndarray:
    """Miss probability per group if present: ε + (1 − ε)·Φ((log10 DL − log10 pred) / σ)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        z = (np.log10(dl) - np.log10(pred)) / sig
    # NaN (0/0 or inf − inf) counts as z = 0; ±inf stay (np.nan_to_num
    # did the same at twice the cost).
    z[np.isnan(z)] = 0.0
    return LOSS_PROBABILITY + (1.0 - LOSS_PROBABILITY) * special.ndtr(z)


def _misses_penalty(
    dl: np.ndarray, pred: np.ndarray, sig: np.ndarray, nset: np.ndarray, missing: np.ndarray
) -> float:
    """log10 of the misses' tail probability (module docstring) for predictions ``pred``."""
    p_miss = _miss_probability(dl, pred, sig)
    return float(np.log10(misses_tail_probability(p_miss[nset], missing[nset])))


def _found_and_counted(g: dict[str, Any]) -> tuple[np.ndarray, np.ndarray]:
    """Found groups not explained by a better species, and the groups the chance test counts.

    Groups with a stronger peak close by are left out of the chance test
    alike whether found or not ("masked" when missing, "crowded" when
    found): leaving out only the missing ones counted the hits alone.
    """
    valid = ~g["explained"]
    crowded = g.get("crowded", g["masked"] & False)
    return g["found"] & valid, g["visible"] & ~g["masked"] & ~crowded & valid


def _chance_terms(ev: SpeciesEvidence, nset: np.ndarray, found: np.ndarray) -> None:
    """Chance probability from the binomial tail and the closeness term (in place).

    ``ev.binomial_probability`` holds the binomial tail (set by
    :func:`evaluate`); the closeness is measured from
    ``groups["offset_centre"]`` when set.
    """
    g = ev.groups
    ev.chance_probability = ev.binomial_probability
    ev.closeness_probability = 1.0
    hit = nset & found
    if np.any(hit) and g.get("offset_centre") is not None:
        # Optical: where in their windows the k peaks fell (closeness_probability).
        c = closeness_probability(
            g["offset_u"][hit],
            g["offset_window_u"][hit],
            g["offset_lines"][hit],
            centre_u=float(g["offset_centre"]),
            # Absorption: the found dip is the nearest of all the dips in
            # its window (chance.closeness_probability, rho_tol).
            rho_tol=g["rho_tol"][hit] if "rho_tol" in g else None,
        )
        ev.closeness_probability = c
        ev.chance_probability = fisher_combined([ev.chance_probability, c])
    if g.get("absorption"):
        # Absorption: the data test a prior-favoured species must pass
        # (prior_capped; absorption_prior_test).
        g["prior_test_p"] = absorption_prior_test(g, nset, found)


def _net_evidence(ev: SpeciesEvidence, n_tried: int) -> None:
    """Corrected chance probability and net evidence from the terms already set (in place)."""
    pc = ev.chance_probability
    ev.chance_probability_corrected = sidak_corrected(pc, n_tried)
    own = float(
        -np.log10(max(ev.chance_probability_corrected, 1e-300))
        + ev.missing_penalty_dex
        + ev.prior_dex
        + ev.agreement_dex
    )
    # X-ray: a family is at least as certain as an established family of its
    # element that predicts it (workbench.matching.joint); never more.
    floor = ev.family_floor_dex
    if ev.overlap_floor_dex is not None:
        # X-ray: a fit of the overlapping families to the spectrum needs this
        # one (workbench.matching.xray_overlap); a floor, like family support.
        floor = ev.overlap_floor_dex if floor is None else max(floor, ev.overlap_floor_dex)
    ev.family_dex = max(floor - own, 0.0) if floor is not None else 0.0
    ev.net_evidence_dex = own + ev.family_dex


def rescore_closeness(ev: SpeciesEvidence, centre_u: float, *, n_tried: int) -> None:
    """Re-score an evaluated optical species with its closeness measured from ``centre_u``.

    Equivalent to :func:`evaluate` with ``groups["offset_centre"] = centre_u``
    when nothing else changed since the species was evaluated (the counts and
    the missing-line penalty do not depend on the centre), at a fraction of
    its cost: on 10,000 random peaks every species is re-scored once.
    """
    ev.groups["offset_centre"] = centre_u
    found, nset = _found_and_counted(ev.groups)
    _chance_terms(ev, nset, found)
    _net_evidence(ev, n_tried)
    ev.level = decide_verdict(ev)
    ev.own_level = None
    ev.score = score_of(ev)


def class_level(e: float, k: int, unique: int, missing_evidence: bool) -> int:
    """The class rules of the module docstring for net evidence ``e`` (decades).

    Parameters
    ----------
    e : float
        Net evidence in decades.
    k : int
        Found groups counted in the chance probability.
    unique : int
        Unique peaks among them.
    missing_evidence : bool
        Whether missing-line evidence was available.

    Returns
    -------
    int
        The level (3 established … 0 not supported); the X-ray additions are
        in :func:`workbench.matching.xray_scoring.xray_level`.
    """
    if e >= ESTABLISHED_DEX and k >= 2 and unique >= 1 and missing_evidence:
        return 3
    if e >= PROBABLE_DEX and k >= 2 and unique >= 1:
        return 2
    if e >= POSSIBLE_DEX:
        return 1
    return 0


def decide_verdict(ev: SpeciesEvidence) -> int:
    """Apply the class rules of the module docstring; return the level."""
    if ev.n_groups_matched == 0:
        return 0
    if ev.n_groups_found == 0 and not ev.xray:
        # Every found group explained by a better species (module docstring).
        return 0
    e = ev.net_evidence_dex
    k = ev.n_groups_counted
    level = class_level(e, k, ev.n_unique_peaks, ev.missing_evidence)
    if not ev.xray:
        p_data = ev.groups.get("prior_test_p", ev.chance_probability)
        if (
            level < 2
            and ev.prior_dex > 0.0
            and e >= PROBABLE_DEX
            and p_data <= PRIOR_DATA_P
            and main_feature_counted(ev.groups, ev.n_unique_peaks)
        ):
            # Absorption with a prior: one resolvable feature, the species'
            # strongest, may carry "probable" (module docstring).
            level = 2
        return prior_capped(level, ev.prior_dex, p_data)
    return xray_level(
        level,
        e,
        main_found=ev.main_found,
        k=k,
        n_unique=ev.n_unique_peaks,
        sole_explanation=ev.sole_explanation,
        probable_dex=PROBABLE_DEX,
    )


def score_of(ev: SpeciesEvidence) -> float:
    """Score in [0, 1] ordering species within a verdict class."""
    return score_for(ev.net_evidence_dex)


def score_for(e: float) -> float:
    """Score in [0, 1] of net evidence ``e`` (decades): ``max(e, 0) / (max(e, 0) + 3)``."""
    e = max(float(e), 0.0)
    return float(e / (e + 3.0))
