"""The matching engine: observed lines + reference sets → element calls with evidence.

Flow of :func:`match_peaks`:

1. Input checks (:mod:`~workbench.matching.observed`): identical rows are
   merged (one peak per position, the highest intensity kept; said in the
   warnings); tolerance per observed line
   (:mod:`~workbench.matching.tolerance`, or ``tolerance_per_peak``); the
   candidate search is refused at once when it would compare more than
   :data:`MAX_CANDIDATE_PAIRS` pairs (a window far too wide).
2. Reference lines in the observed range and the source model's predicted
   strengths (:mod:`~workbench.matching.sourcemodels`); ``auto`` picks the
   model from the data and says which.
3. Evidence pass 1, all species competing, flat instrument response; a
   shared response curve is fitted (:mod:`~workbench.matching.response`);
   pass 2 with that response and competition restricted to species with
   real support in pass 1 ("probable" or better, or "possible" with net
   evidence ≥ the "probable" threshold); then the joint explanation
   (:mod:`~workbench.matching.joint`). Evidence is counted per resolvable
   group (:mod:`~workbench.matching.groups`); classes in
   :mod:`~workbench.matching.scoring`.
4. ``lte-plasma`` without a given temperature: a Boltzmann-plot estimate
   from the best-identified species; when it differs from the working value
   by more than 10 %, steps 2–3 are repeated once at the estimate.
5. Wavelength-scale check from unambiguous strong matches. With
   ``apply_calibration=None`` (the default) it is applied, and steps 2–4
   repeated on corrected positions, when it is significant: a shift beyond
   3 standard uncertainties and beyond a quarter of the median half-window
   (:data:`CALIBRATION_FRACTION`), or a stretch whose 95 % interval
   excludes zero and that moves the range ends by more than that quarter.
   ``True`` always applies it, ``False`` never (``--no-calibration``).
6. Peak assignment and interference warnings
   (:mod:`~workbench.matching.interference`).

Energy axis (XRF): ``match_peaks`` takes ``tolerance_per_peak`` (detector
resolution per peak, from an instrument description) and ``excluded_peaks``
(artefact peaks: escape, sum, diffraction, tube lines) with
``peak_labels``; excluded peaks are kept in the report, labelled, and never
matched.

Everything is deterministic: the same input and parameters give the same
result, and :func:`workbench.matching.report.result_json` the same bytes.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import polars as pl

from workbench.datamodel import PeakList
from workbench.errors import ValueRangeError
from workbench.matching.calibration import ScaleCheck, estimate_scale
from workbench.matching.evidence import EvidencePass, ObservedLines
from workbench.matching.interference import (
    PeakAssignment,
    assign_peaks,
    interference_warnings,
)
from workbench.matching.observed import (
    broad_dips,
    check_pair_budget,
    dedupe_peaks,
    observed_lines,
)
from workbench.matching.params import (
    BAND_WIDTH_FACTOR,
    CALIBRATION_FRACTION,
    MAX_CANDIDATE_PAIRS,
    RARE_RADIOACTIVE,
    MatchParameters,
)
from workbench.matching.passes import choose_model, first_pass, second_pass
from workbench.matching.reference import ReferenceIndex
from workbench.matching.response import ResponseFit
from workbench.matching.sourcemodels import (
    SOURCE_MODELS,
)
from workbench.matching.temperature import TemperatureEstimate, estimate_temperature
from workbench.matching.xray_scale import (
    applied_before,
    apply_matched_scale,
    corrected_energy_peaks,
    matched_scale,
    scale_warning,
    xray_record,
)
from workbench.xray.energy_scale import EnergyScale

__all__ = [
    "BAND_WIDTH_FACTOR",
    "CALIBRATION_FRACTION",
    "MAX_CANDIDATE_PAIRS",
    "RARE_RADIOACTIVE",
    "MatchParameters",
    "MatchResult",
    "build_index",
    "match_peaks",
]


@dataclass
class MatchResult:
    """Everything the engine found; ``report()`` makes the schema-1 JSON record."""

    peaks: PeakList
    observed: ObservedLines
    index: ReferenceIndex
    evidence: EvidencePass
    assignments: list[PeakAssignment]
    warnings: list[dict[str, object]]
    temperature: TemperatureEstimate | None
    working_temperature_K: float
    scale: ScaleCheck
    parameters: MatchParameters
    lte: dict[str, object] | None = None
    xray: dict[str, Any] | None = None
    source_model: dict[str, object] = field(default_factory=dict)
    response: ResponseFit = field(default_factory=ResponseFit)
    notes: list[dict[str, object]] = field(default_factory=list)
    peak_labels: dict[int, str] = field(default_factory=dict)

    def report(self) -> dict[str, Any]:
        """The result as the versioned JSON-ready dictionary."""
        from workbench.matching.report import build_report

        return build_report(self)


_INDEX_CACHE: dict[tuple, ReferenceIndex] = {}


def build_index(
    sets: Sequence[Any],
    axis: str,
    medium: str | None,
    elements: Sequence[str] | None = None,
    max_ion: int | None = 2,
    exclude: Sequence[str] = (),
) -> ReferenceIndex:
    """Reference index for these sets, cached by set ids, hashes and the other arguments."""
    els = tuple(sorted(elements)) if elements else None
    exc = tuple(sorted(set(exclude) - set(els or ())))
    key = (tuple((s.id, s.sha256) for s in sets), axis, medium, els, max_ion, exc)
    index = _INDEX_CACHE.get(key)
    if index is None:
        index = ReferenceIndex.from_sets(
            list(sets), axis, medium, els, max_ion=max_ion, exclude=exc
        )
        if len(_INDEX_CACHE) >= 16:
            _INDEX_CACHE.pop(next(iter(_INDEX_CACHE)))
        _INDEX_CACHE[key] = index
    return index


def _scale_pairs(
    obs: ObservedLines, ev_pass: EvidencePass, index: ReferenceIndex, strong_fraction: float
) -> tuple[np.ndarray, np.ndarray]:
    o, r, used = [], [], set()
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label):
        if ev.level < 2:
            continue
        unique = set(ev.unique_lines)
        for line, peak in zip(ev.found_lines, ev.found_peaks, strict=True):
            if line in unique and peak not in used and ev_pass.strengths[line] >= strong_fraction:
                used.add(peak)
                o.append(obs.position[peak])
                r.append(index.position[line])
    return np.array(o), np.array(r)


def _significant(scale: ScaleCheck, obs: ObservedLines) -> bool:
    """Whether a scale error is large enough to apply by default (module docstring)."""
    if scale.shift is None:
        return False
    tol = float(np.median(obs.half_window))
    limit = CALIBRATION_FRACTION * tol
    if abs(scale.shift) > max(3.0 * (scale.shift_uncertainty or 0.0), limit):
        return True
    if scale.stretch and scale.stretch_interval and scale.centre is not None:
        lo, hi = scale.stretch_interval
        reach = float(np.max(np.abs(obs.position[[0, -1]] - scale.centre)))
        if (lo > 0 or hi < 0) and abs(scale.stretch) * reach > limit:
            return True
    return False


def match_peaks(
    peaks: PeakList,
    sets: Sequence[Any],
    params: MatchParameters | None = None,
    *,
    tolerance_per_peak: np.ndarray | None = None,
    excluded_peaks: np.ndarray | Sequence[int] | None = None,
    peak_labels: dict[int, str] | None = None,
) -> MatchResult:
    """Match observed lines against reference sets.

    Parameters
    ----------
    peaks : PeakList
        Observed lines (sorted by position).
    sets : sequence of ReferenceSet
        Reference sets on the same axis as the peaks.
    params : MatchParameters, optional
        Settings; defaults when omitted.
    tolerance_per_peak : numpy.ndarray, optional
        Half-window per peak (axis unit), overriding ``params.tolerance``
        (e.g. detector resolution at each energy, from an instrument model).
    excluded_peaks : array of int or bool, optional
        Peaks never matched (artefacts: escape, sum, diffraction peaks).
    peak_labels : dict of int to str, optional
        Label per peak index shown in the report (e.g. "Si escape of Fe Kα").

    Returns
    -------
    MatchResult
        Evidence, verdicts, assignments and warnings; ``.report()`` gives the
        versioned JSON-ready dictionary.
    """
    params = params or MatchParameters()
    if peaks.mode != params.mode:
        raise ValueRangeError(
            f"the peak list holds {peaks.mode} lines but the match was asked in {params.mode} mode",
            f"use --mode {peaks.mode}, or find the peaks again in {params.mode} mode",
        )
    notes: list[dict[str, object]] = []
    deduped, n_merged = dedupe_peaks(peaks)
    if n_merged:
        if tolerance_per_peak is not None or excluded_peaks is not None or peak_labels:
            raise ValueRangeError(
                f"the peak list repeats {n_merged} position(s) and per-peak settings were given",
                "remove the repeated rows before passing per-peak tolerances or labels",
            )
        notes.append(
            {
                "kind": "duplicate_peaks",
                "message": f"{n_merged} row(s) repeated a position already in the list and were "
                "merged (the most intense kept)",
                "elements": [],
                "lines": [],
            }
        )
        peaks = deduped
    labels = dict(peak_labels or {})
    broad = broad_dips(peaks, params)
    if broad is not None:
        ex = np.zeros(peaks.table.height, dtype=bool)
        if excluded_peaks is not None:
            e0 = np.asarray(excluded_peaks)
            ex[e0 if e0.dtype == bool else e0.astype(np.int64)] = True
        excluded_peaks = ex | broad
        for i in np.flatnonzero(broad).tolist():
            labels.setdefault(i, "broad dip (molecular band or blend): not used as evidence")
        notes.append(
            {
                "kind": "broad_dips",
                "message": f"{int(broad.sum())} dip(s) wider than {BAND_WIDTH_FACTOR:g}× the "
                "median width were treated as bands (molecular, e.g. telluric O2/H2O, or "
                "blends) and not used as evidence for any element",
                "elements": [],
                "lines": [],
            }
        )
    index = build_index(
        sets, peaks.axis, peaks.medium, params.elements, params.max_ion, params.exclude_elements
    )
    xray = None
    if (
        peaks.axis == "energy"
        and not peaks.extra.get("xray_prepared")
        and tolerance_per_peak is None
        and excluded_peaks is None
    ):
        # X-ray physics (workbench.xray): artefact peaks out, detector-resolution
        # widths in, energy scale checked; unexcitable lines dropped below.
        from workbench.xray.prepare import prepare_energy_peaks

        ref_species = np.asarray(index.species_names, dtype=object)[index.species]
        shown_peaks = peaks  # before X-ray preparation: re-run from here (step 5)
        peaks, xray = prepare_energy_peaks(
            peaks,
            params.instrument,
            (ref_species, index.position, index.rel_intensity * index.subshell_weight),
            apply_scale=params.apply_calibration,
        )
    obs = observed_lines(peaks, params, tolerance_per_peak, excluded_peaks)
    x_range = peaks.extra.get("x_range") if isinstance(peaks.extra, dict) else None
    if x_range:
        lo, hi = float(x_range[0]), float(x_range[1])
    else:
        lo = float(np.min(obs.position - obs.half_window))
        hi = float(np.max(obs.position + obs.half_window))
    gaps = peaks.extra.get("x_gaps") if isinstance(peaks.extra, dict) else None
    gaps = tuple((float(a), float(b)) for a, b in gaps or () if b > lo and a < hi)
    obs = replace(obs, axis_range=(lo, hi), axis_gaps=gaps)
    if gaps and peaks.axis != "energy":
        shown = ", ".join(f"{a:.6g}–{b:.6g}" for a, b in gaps[:5])
        unit = peaks.position_column.rsplit("_", 1)[-1]  # wavelength_nm -> nm
        notes.append(
            {
                "kind": "sampling_gaps",
                "message": f"the spectrum's sampling skips {len(gaps)} part(s) of the axis "
                f"({shown}{', ...' if len(gaps) > 5 else ''} {unit}); "
                "a line there, or within a resolution element of one, was not counted missing",
                "elements": [],
                "lines": [],
            }
        )
    in_range = (index.position >= lo) & (index.position <= hi)
    if xray is not None:
        el_line = np.asarray(index.species_element, dtype=object)[index.species]
        in_range &= xray.reference_mask(el_line, index.transition, index.position)
    if not np.any(in_range):
        unit = "nm" if peaks.axis == "wavelength" else "eV"
        notes.append(
            {
                "kind": "out_of_reference_range",
                "message": f"no reference line lies in the observed range {lo:g}–{hi:g} {unit}: "
                "nothing can be identified (check the unit and the axis, or choose a reference "
                "set that covers this range)",
                "elements": [],
                "lines": [],
            }
        )
    check_pair_budget(obs, index, in_range)

    working_T = params.temperature_K or (
        params.default_temperature_K if params.mode == "emission" else 5800.0
    )
    model, why, strengths, first = choose_model(obs, index, params, working_T, in_range)
    ev_pass, response = second_pass(obs, index, params, model, in_range, strengths, first)
    if xray is not None and xray.spectrum is not None and model == "x-ray":
        # X-ray: unresolved overlaps settled by a fit of the families' line
        # patterns to the spectrum (workbench.matching.xray_overlap).
        from workbench.matching.xray_overlap import settle_overlaps

        ev_pass.xray_overlaps = settle_overlaps(
            ev_pass,
            obs,
            index,
            xray.instrument,
            xray.spectrum,
            xray.artefact_energies(),
            sigma_dex=SOURCE_MODELS[model].sigma_dex,
            strong_fraction=params.strong_fraction,
        )
    temperature: TemperatureEstimate | None = None
    if (
        model == "lte-plasma"
        and params.mode == "emission"
        and params.temperature_K is None
        and params.estimate_temperature
    ):
        temperature = estimate_temperature(obs, index, ev_pass)
        t_est = temperature.temperature_K
        if (
            t_est is not None
            and 2000.0 <= t_est <= 50_000.0
            and abs(t_est - working_T) > 0.1 * working_T
        ):
            working_T = float(t_est)
            strengths, first = first_pass(obs, index, params, model, working_T, in_range)
            ev_pass, response = second_pass(
                obs, index, params, model, in_range, strengths, first, response
            )

    unit = "nm" if peaks.axis == "wavelength" else "eV"
    o, r = _scale_pairs(obs, ev_pass, index, params.strong_fraction)
    scale = estimate_scale(o, r, unit, applied=False)
    apply = params.apply_calibration
    if apply is None:
        apply = _significant(scale, obs)
    if xray is not None:
        # X-ray: the energy-scale checks of workbench.xray (before matching)
        # and workbench.matching.xray_scale (after it, from the decided
        # families' blend maxima) decide; this generic check pairs peaks with
        # single lines and reads blend offsets of 10-30 eV as a scale error,
        # so it is reported, never applied.
        apply = False
        before = applied_before(peaks, xray.scale)
        xscale = matched_scale(obs, ev_pass, index, before)
        if apply_matched_scale(xscale, before, params.apply_calibration):
            return _xray_rerun(shown_peaks, sets, params, xscale, xray, notes, labels)
    else:
        xscale = None
    if apply and scale.shift is not None:
        corrected = scale.correct(obs.position)
        new_table = peaks.table.with_columns(pl.Series(peaks.position_column, corrected))
        extra = dict(peaks.extra)
        # The axis' ends and gaps move with the peaks, into the corrected frame.
        if extra.get("x_range"):
            extra["x_range"] = tuple(scale.correct(np.asarray(extra["x_range"], float)).tolist())
        if extra.get("x_gaps"):
            extra["x_gaps"] = tuple(
                tuple(scale.correct(np.asarray(g, float)).tolist()) for g in extra["x_gaps"]
            )
        new_peaks = PeakList(new_table, peaks.axis, peaks.medium, peaks.source, peaks.mode, extra)
        inner = match_peaks(
            new_peaks,
            sets,
            replace(params, apply_calibration=False),
            tolerance_per_peak=tolerance_per_peak,
            excluded_peaks=excluded_peaks,
            peak_labels=labels,
        )
        how = "asked" if params.apply_calibration else "significant, applied by default"
        inner.scale = ScaleCheck(
            scale.n_pairs,
            scale.shift,
            scale.shift_uncertainty,
            scale.stretch,
            scale.stretch_interval,
            scale.centre,
            True,
            scale.message + f" ({how}; --no-calibration turns this off)",
        )
        inner.peaks = peaks
        inner.xray = xray.to_dict() | {"warnings": xray.warnings} if xray else inner.xray
        # Notes the inner run makes again from the same peaks are kept once (its own).
        again = {n["kind"] for n in inner.notes} & {"broad_dips", "sampling_gaps"}
        inner.notes = [n for n in notes if n["kind"] not in again] + inner.notes
        return inner

    assignments = assign_peaks(obs, ev_pass, params.share_ratio)
    warnings = interference_warnings(
        obs, index, ev_pass, assignments, strong_fraction=params.strong_fraction
    )
    if xray is not None and ev_pass.xray_overlaps:
        from workbench.matching.xray_overlap import annotate_warnings

        annotate_warnings(warnings, ev_pass.xray_overlaps)
    lte = None
    if temperature is not None and temperature.temperature_K is not None:
        lte = _lte_check(temperature, params)
    return MatchResult(
        peaks=peaks,
        observed=obs,
        index=index,
        evidence=ev_pass,
        assignments=assignments,
        warnings=warnings,
        temperature=temperature,
        working_temperature_K=working_T,
        scale=scale,
        parameters=params,
        lte=lte,
        xray=xray_record(xray, xscale) if xray else None,
        source_model={
            "name": model,
            "sigma_dex": SOURCE_MODELS[model].sigma_dex,
            "description": SOURCE_MODELS[model].description,
            "chosen_by": why,
        },
        response=response,
        notes=notes,
        peak_labels=labels,
    )


#: Re-runs of an XRF match on corrected energies at most: a wrong family
#: called on the drifted scale can bias the first reading, which the second
#: match, on a scale nearer the truth, no longer calls (a fixed point).
MAX_XRAY_RERUNS: int = 2


def _xray_rerun(
    shown: PeakList,
    sets: Sequence[Any],
    params: MatchParameters,
    xscale: Any,
    xray: Any,
    notes: list[dict[str, object]],
    labels: dict[int, str],
) -> MatchResult:
    """Match again on energies corrected by the scale after matching (module docstring, 5).

    The peak list as given is corrected and prepared again (artefacts,
    widths), with the check before matching reported but not applied; the
    scale is measured again on the new match, from the energies shown, and
    when it still differs significantly the match is run once more
    (:data:`MAX_XRAY_RERUNS`).
    """
    how = "asked" if params.apply_calibration else "significant, applied by default"
    inner_params = replace(params, apply_calibration=False)
    current = xscale
    for run in range(1, MAX_XRAY_RERUNS + 1):
        inner = match_peaks(corrected_energy_peaks(shown, current), sets, inner_params)
        again = inner.xray.get("energy_scale_matched") if inner.xray else None
        # After the last run a new reading is not taken up: ``current`` must
        # stay the correction the returned match was made on.
        if again is None or params.apply_calibration is True or run == MAX_XRAY_RERUNS:
            break
        measured = EnergyScale.from_dict(again)
        if not apply_matched_scale(measured, current, None):
            break
        current = measured
    applied = replace(current, applied=True)
    rec = dict(inner.xray or {})
    rec["energy_scale"] = xray.scale.to_dict()  # the check before matching, on the shown axis
    rec["energy_scale_matched"] = applied.to_dict()
    kept = [w for w in rec.get("warnings", []) if w.get("kind") != "energy_scale"]
    rec["warnings"] = [*kept, scale_warning(applied, how)]
    inner.xray = rec
    inner.notes = notes + inner.notes
    inner.peak_labels = {**labels, **inner.peak_labels}
    inner.parameters = params
    return inner


def _lte_check(temperature: TemperatureEstimate, params: MatchParameters) -> dict[str, object]:
    from workbench.physics.lte import check_mcwhirter

    # The largest gap relevant to the Boltzmann plot is bounded by the span of
    # upper-level energies used; it is the conservative choice.
    delta = float(temperature.energy_span_eV or 0.0)
    check = check_mcwhirter(temperature.temperature_K, params.electron_density_per_cm3, delta)
    return {
        "criterion": "McWhirter",
        "delta_E_eV": delta,
        "required_electron_density_per_cm3": float(check.required_per_cm3),
        "given_electron_density_per_cm3": params.electron_density_per_cm3,
        "satisfied": check.satisfied,
        "message": check.message,
    }
