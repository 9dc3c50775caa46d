"""The evidence passes of one match: source-model choice, first and second pass.

:func:`choose_model` runs a first pass per candidate source model and keeps
the one that explains the spectrum best (``auto``); :func:`second_pass`
repeats the evidence with competition among plausible species only, fits the
shared instrument response, decides shared peaks jointly and pools an
element's ion stages (:mod:`workbench.matching.pooling`). Called by
:func:`workbench.matching.engine.match_peaks`.
"""

from __future__ import annotations

import numpy as np

from workbench.matching.evidence import EvidencePass, ObservedLines, gather_evidence
from workbench.matching.expected import atomic_log_strength
from workbench.matching.joint import explain_jointly
from workbench.matching.params import MatchParameters
from workbench.matching.pooling import pool_ion_stages
from workbench.matching.reference import ReferenceIndex
from workbench.matching.response import ResponseFit, fit_response
from workbench.matching.scoring import PROBABLE_DEX, rescore_closeness
from workbench.matching.sourcemodels import (
    SOURCE_MODELS,
    model_sigma,
    model_strengths,
)

__all__ = ["choose_model", "first_pass", "position_scatter", "second_pass"]


def _plausible(ev_pass: EvidencePass) -> set[int]:
    return {
        c
        for c, ev in ev_pass.evidence.items()
        if ev.level >= 2 or (ev.level >= 1 and ev.net_evidence_dex >= PROBABLE_DEX)
    }


def _is_xray(index: ReferenceIndex, model: str) -> bool:
    """The X-ray rules of the evidence model apply: ``x-ray`` model on an energy axis."""
    return model == "x-ray" and index.axis == "energy"


def _contrast(index: ReferenceIndex, model: str) -> bool:
    """Fit the species' contrast exponents (:mod:`workbench.matching.contrast`): emission.

    Second pass only: the first pass chooses the source model and the
    plausible species as before (measured: the real-data and degraded-lamp
    tables are the same with it in the first passes too; the fit costs 3.5
    ms per match on 10,000 random peaks in the second pass alone, 10.5 ms
    in every pass).
    """
    return model in ("discharge-lamp", "lte-plasma") and index.axis == "wavelength"


def _family_ratio_for(params: MatchParameters):
    """``(element, numerator, denominator) → ratio`` for the run's instrument (X-ray)."""
    from workbench.xray.excitation import family_ratio
    from workbench.xray.instrument import DEFAULT_INSTRUMENT

    inst = params.instrument or DEFAULT_INSTRUMENT
    cache: dict[tuple[str, str, str], float] = {}

    def ratio(element: str, numerator: str, denominator: str) -> float:
        key = (element, numerator, denominator)
        if key not in cache:
            cache[key] = family_ratio(element, numerator, denominator, inst)[0]
        return cache[key]

    return ratio


def first_pass(
    obs: ObservedLines,
    index: ReferenceIndex,
    params: MatchParameters,
    model: str,
    temperature_K: float,
    in_range: np.ndarray,
) -> tuple[np.ndarray, EvidencePass]:
    """Expected strengths under ``model`` and the first evidence pass (all species compete)."""
    strengths = model_strengths(index, model, temperature_K, in_range)
    first = gather_evidence(
        obs,
        index,
        strengths,
        in_range,
        strong_fraction=params.strong_fraction,
        min_rel_intensity=params.min_rel_intensity,
        competitor_min_rel=params.competitor_min_rel,
        sigma_dex=SOURCE_MODELS[model].sigma_dex,
        abundance_prior=params.abundance_prior,
        sigma_lines=model_sigma(index, model),
        xray=_is_xray(index, model),
        absorption=model == "absorption" and index.axis == "wavelength",
    )
    return strengths, first


def second_pass(
    obs: ObservedLines,
    index: ReferenceIndex,
    params: MatchParameters,
    model: str,
    in_range: np.ndarray,
    strengths: np.ndarray,
    first: EvidencePass,
    response: ResponseFit | None = None,
) -> tuple[EvidencePass, ResponseFit]:
    """Second evidence pass: plausible species compete; response, joint explanation, pooling."""
    sigma = SOURCE_MODELS[model].sigma_dex
    kw = dict(
        strong_fraction=params.strong_fraction,
        min_rel_intensity=params.min_rel_intensity,
        competitor_min_rel=params.competitor_min_rel,
        sigma_dex=sigma,
        plausible=_plausible(first),
        n_species_tried=first.n_species_tried,
        abundance_prior=params.abundance_prior,
        sigma_lines=model_sigma(index, model),
        xray=_is_xray(index, model),
        absorption=model == "absorption" and index.axis == "wavelength",
        contrast=_contrast(index, model),
    )
    second: EvidencePass | None = None
    if response is None:
        second = gather_evidence(obs, index, strengths, in_range, **kw)
        # The response is fitted on the second pass (competition among
        # plausible species only, so that well-identified species have unique
        # groups), then the pass is repeated with it. A re-run at a new
        # temperature reuses the response already fitted.
        response = (
            fit_response(obs, second, equal_species=model != "absorption")
            if index.axis == "wavelength"
            else ResponseFit()
        )
    if response.degree:
        resp_lines = 10.0 ** response.log10_at(index.position)
        second = gather_evidence(obs, index, strengths, in_range, response=resp_lines, **kw)
    elif second is None:
        second = gather_evidence(obs, index, strengths, in_range, **kw)
    position = None
    if index.axis == "wavelength":
        apply_offset_centre(second)
        position = position_scatter(second)
    explain_jointly(
        second,
        obs,
        index,
        sigma_dex=sigma,
        strong_fraction=params.strong_fraction,
        family_ratio=_family_ratio_for(params) if _is_xray(index, model) else None,
        position=position,
    )
    if index.axis == "wavelength":
        pool_ion_stages(second)
    return second, response


#: Fewest found, unique single-line groups (of species called probable or
#: better) needed to measure the spectrum's common offset; below it the
#: offset is taken as 0, the scale as given (common practice, no source).
MIN_CENTRE_GROUPS: int = 8


def _centre_offsets(ev_pass: EvidencePass) -> np.ndarray:
    """Offsets (half-windows) of the found, unique, single-line groups of well-called species."""
    u = []
    for ev in ev_pass.evidence.values():
        if ev.level < 2 or ev.xray:
            continue
        g = ev.groups
        m = g["found"] & g["unique"] & ~g["explained"] & (g["offset_lines"] == 1)
        u.append(g["offset_u"][m])
    a = np.concatenate(u) if u else np.zeros(0)
    return a[np.isfinite(a)]


def offset_centre(ev_pass: EvidencePass) -> float:
    """The spectrum's common peak-to-line offset (half-windows).

    Median offset of the found, unique, single-line groups of every species
    called probable or better (measured like the instrument response, on the
    well-identified species): a wavelength-scale shift too small for the
    scale check to apply still moves every real line alike, and the
    closeness of a species' peaks to its lines
    (:func:`workbench.matching.chance.closeness_probability`) is measured
    from it. With fewer than :data:`MIN_CENTRE_GROUPS` such groups the
    offset is taken as 0: the scale as given (after any scale correction
    applied). Any centre fixed without looking at a species' own peaks
    keeps its closeness exact under chance (a chance peak is uniform in
    its window wherever the centre is). Before, there was no closeness term
    at all then, and a spectrum whose species all needed that term to
    reach "probable" could never measure the offset: a pure Ne lamp at
    R 700 (Goodman 1200M4 Ne, degraded) had Ne I "possible" with 19 of 34
    groups found, every peak within a tenth of a half-window of its line.
    """
    a = _centre_offsets(ev_pass)
    if a.size < MIN_CENTRE_GROUPS:
        return 0.0
    return float(np.median(a))


#: Least position scatter (half-windows) the joint explanation assumes: a
#: peak's centre is measured to about FWHM / (2.35 · SNR), 0.04 half-window at
#: SNR 20 under the ``auto`` window of half a FWHM, and reference
#: wavelengths carry their own errors (common practice, no source).
POSITION_SIGMA_FLOOR_U: float = 0.05


def position_scatter(ev_pass: EvidencePass) -> tuple[float, float] | None:
    """The spectrum's common offset and its line-to-line scatter (half-windows).

    Measured on the groups :func:`offset_centre` uses (the found, unique,
    single-line groups of species called "probable" or better), taken after
    the closeness re-scoring (:func:`apply_offset_centre`), so species that
    the closeness term lifted to "probable" add their groups; the median and
    1.4826 × the median absolute deviation (the normal-consistent scatter),
    the latter at least :data:`POSITION_SIGMA_FLOOR_U`. ``None``
    with fewer than :data:`MIN_CENTRE_GROUPS` such groups: the scatter is
    then not known and the joint explanation weighs amplitudes alone
    (:mod:`workbench.matching.joint`).
    """
    a = _centre_offsets(ev_pass)
    if a.size < MIN_CENTRE_GROUPS:
        return None
    centre = float(np.median(a))
    sigma = 1.4826 * float(np.median(np.abs(a - centre)))
    return centre, max(sigma, POSITION_SIGMA_FLOOR_U)


def apply_offset_centre(ev_pass: EvidencePass) -> None:
    """Re-score every optical species with the closeness term (in place)."""
    centre = offset_centre(ev_pass)
    for ev in ev_pass.evidence.values():
        if ev.xray:
            continue
        # Only the closeness depends on the centre (counts and penalty do not).
        rescore_closeness(ev, centre, n_tried=ev_pass.n_species_tried)


def _total_evidence(ev_pass: EvidencePass, counted: np.ndarray | None = None) -> float:
    """Σ max(net evidence, 0) over species: how well the model explains the spectrum.

    ``counted`` (bool per species) restricts the sum to the species that can
    tell the models apart (:func:`_model_sensitive_species`).
    """
    return float(
        sum(
            max(ev.net_evidence_dex, 0.0)
            for c, ev in ev_pass.evidence.items()
            if counted is None or counted[c]
        )
    )


def _model_sensitive_species(
    index: ReferenceIndex, temperature_K: float, in_range: np.ndarray
) -> np.ndarray:
    """Species whose predicted line strengths depend on the source model (bool per species).

    A species with atomic data (gA) on at least one in-range line is predicted
    by Boltzmann under ``lte-plasma`` and by its tabulated lamp intensities
    under ``discharge-lamp``: its fit says which model describes the source.
    A species with tabulated intensities only (Ar II in the shipped set) is
    predicted from the same numbers under both; only the stated uncertainty
    differs (0.35 against 0.8 dex), and a tighter σ rewards good matches more,
    so such a species would pull the choice towards ``lte-plasma`` for no
    physical reason. It is left out of the comparison (not of the match).
    """
    atomic = np.isfinite(atomic_log_strength(index, temperature_K, "emission"))
    hit = np.bincount(index.species[in_range & atomic], minlength=index.n_species)
    return hit > 0


def choose_model(
    obs: ObservedLines,
    index: ReferenceIndex,
    params: MatchParameters,
    temperature_K: float,
    in_range: np.ndarray,
) -> tuple[str, str, np.ndarray, EvidencePass]:
    """The source model (name, why) and its first pass."""
    if params.source_model != "auto":
        st, first = first_pass(obs, index, params, params.source_model, temperature_K, in_range)
        return params.source_model, "given", st, first
    if index.axis == "energy":
        st, first = first_pass(obs, index, params, "x-ray", temperature_K, in_range)
        return "x-ray", "auto: energy axis", st, first
    if params.mode == "absorption":
        st, first = first_pass(obs, index, params, "absorption", temperature_K, in_range)
        return "absorption", "auto: absorption spectrum", st, first
    st_l, first_l = first_pass(obs, index, params, "lte-plasma", temperature_K, in_range)
    if not np.any(np.isfinite(obs.intensity)):
        return "lte-plasma", "auto: no intensities to compare models", st_l, first_l
    st_d, first_d = first_pass(obs, index, params, "discharge-lamp", temperature_K, in_range)
    counted = _model_sensitive_species(index, temperature_K, in_range)
    e_l, e_d = _total_evidence(first_l, counted), _total_evidence(first_d, counted)
    why = f"auto: total net evidence {e_d:.1f} dex (discharge-lamp) vs {e_l:.1f} dex (lte-plasma)"
    if e_d > e_l:
        return "discharge-lamp", why, st_d, first_d
    return "lte-plasma", why, st_l, first_l
