"""The versioned result record (JSON schema version 2).

Top-level keys: ``schema_version``, ``software_version``, ``data_version``,
``input``, ``parameters``, ``reference_sets``, ``calibration``,
``temperature``, ``evidence_model``, ``elements``, ``lines``, ``warnings``,
``summary``. Schema 2 (issue 9) added ``evidence_model`` and the per-species
evidence fields (groups, net evidence, corrected chance probability,
missing-line penalty, prior, explained-by). Position
keys carry the axis unit in their names (``observed_nm``/``reference_nm``/
``delta_nm`` on a wavelength axis, ``observed_eV``/… on an energy axis); the
medium is in ``input.medium``. The full field list is in
``docs/result-schema.md``.

``observed_rel`` of a matched line is the observed intensity divided by the
species' intensity scale, so it is directly comparable with ``expected_rel``
(both 1 for the strongest expected line when the pattern is perfect).

:func:`result_json` gives canonical bytes: sorted keys, compact separators,
floats to 10 significant digits, NaN as null. The same input and parameters
give byte-identical output. The terminal's text summary of a record is
:func:`workbench.matching.textsummary.summary_text`.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from workbench import canonjson
from workbench.matching.scoring import VERDICTS

if TYPE_CHECKING:
    from workbench.matching.engine import MatchResult

__all__ = [
    "RESPONSE_NOTE_DEX",
    "SCHEMA_VERSION",
    "build_report",
    "canonical",
    "response_note",
    "result_json",
]

SCHEMA_VERSION = 2
_MAX_CANDIDATES = 8


def canonical(obj: Any) -> Any:
    """Convert to plain JSON types with reproducible floats (10 significant digits).

    The number rule is :mod:`workbench.canonjson`'s (one rule for every result).
    """
    return canonjson.normalise(obj)


def result_json(report: dict[str, Any], indent: int | None = None) -> bytes:
    """Canonical JSON bytes of a report (:func:`workbench.canonjson.dumps`)."""
    return canonjson.dumps(report, indent=indent)


def _num(v: float) -> float | None:
    # math.isfinite: the same answer as np.isfinite for a scalar, far cheaper.
    return float(v) if v is not None and math.isfinite(v) else None


def build_report(result: MatchResult) -> dict[str, Any]:
    """Assemble the schema-1 dictionary from a :class:`MatchResult`."""
    from workbench import __version__

    idx = result.index
    obs = result.observed
    ev_pass = result.evidence
    e = ev_pass.strengths
    u = "nm" if idx.axis == "wavelength" else "eV"
    peaks = result.peaks
    source = peaks.source
    pos_obs = peaks.positions  # as given (before any applied calibration)

    elements = []
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: (-v.level, -v.score, v.label)):
        shared = set(ev.shared_lines)
        matched = []
        # Matched lines by reference position (a stable sort, as sorted() is),
        # their fields as Python lists (not a NumPy scalar per value).
        m_line = np.asarray(ev.found_lines, dtype=np.int64)
        m_peak = np.asarray(ev.found_peaks, dtype=np.int64)
        by_pos = np.argsort(idx.position[m_line], kind="stable")
        m_line, m_peak = m_line[by_pos], m_peak[by_pos]
        split_top = (
            obs.split_top[m_peak].tolist() if obs.split_top is not None else [False] * m_peak.size
        )
        for line, peak, lid, x_obs, x_ref, delta, e_rel, inten, sat, split, trans in zip(
            m_line.tolist(),
            m_peak.tolist(),
            idx.line_id[m_line].tolist(),
            pos_obs[m_peak].tolist(),
            idx.position[m_line].tolist(),
            (obs.position[m_peak] - idx.position[m_line]).tolist(),
            e[m_line].tolist(),
            obs.intensity[m_peak].tolist(),
            obs.saturated[m_peak].tolist(),
            split_top,
            idx.transition[m_line].tolist(),
            strict=True,
        ):
            obs_rel = inten / ev.scale if ev.scale and math.isfinite(inten) else None
            matched.append(
                {
                    "line_id": str(lid),
                    f"observed_{u}": _num(x_obs),
                    f"reference_{u}": _num(x_ref),
                    f"delta_{u}": _num(delta),
                    "expected_rel": _num(e_rel),
                    "observed_rel": _num(obs_rel) if obs_rel is not None else None,
                    "peak_index": peak,
                    "shared": line in shared,
                    "saturated": bool(sat),
                    "split_top": bool(split),
                    "transition": trans,
                }
            )
        x_line = np.asarray(ev.missing_lines, dtype=np.int64)
        missing = [
            {
                "line_id": str(lid),
                f"reference_{u}": _num(x_ref),
                "expected_rel": _num(e_rel),
                "predicted_intensity": _num(pred),
            }
            for lid, x_ref, e_rel, pred in zip(
                idx.line_id[x_line].tolist(),
                idx.position[x_line].tolist(),
                e[x_line].tolist(),
                ev.missing_predicted,
                strict=True,
            )
        ]
        elements.append(
            {
                "species": ev.label,
                "element": ev.element,
                "ion": ev.ion,
                "family": ev.family,
                "verdict": ev.verdict,
                "verdict_level": ev.level,
                "score": round(ev.score, 4),
                "found_fraction": round(ev.found_fraction, 4),
                "n_lines_in_range": ev.n_lines_in_range,
                "n_strong_in_range": ev.n_strong_in_range,
                "n_strong_found": ev.n_strong_found,
                "n_unique_found": ev.n_unique_peaks,
                "n_missing_strong": len(ev.missing_strong),
                "n_masked": len(ev.masked_lines),
                "chance_probability": _num(ev.chance_probability),
                "chance_probability_corrected": _num(ev.chance_probability_corrected),
                "net_evidence_dex": round(ev.net_evidence_dex, 4),
                "missing_penalty_dex": round(ev.missing_penalty_dex, 4),
                "prior_dex": round(ev.prior_dex, 4),
                "missing_evidence_available": ev.missing_evidence,
                "n_groups_in_range": ev.n_groups_in_range,
                "n_groups_expected": ev.n_groups_expected,
                "n_groups_found": ev.n_groups_found,
                "explained_by": list(ev.explained_by),
                "pooled_with": list(ev.pooled_with),
                "pooled_evidence_dex": None
                if ev.pooled_evidence_dex is None
                else round(ev.pooled_evidence_dex, 4),
                # The class on its own evidence when pooling raised it, else null.
                "own_verdict": VERDICTS[ev.own_level] if ev.raised_by_pooling else None,
                "own_verdict_level": ev.own_level if ev.raised_by_pooling else None,
                "pattern_r": _num(ev.pattern_r) if ev.pattern_r is not None else None,
                "intensity_scale": _num(ev.scale) if ev.scale is not None else None,
                "intensity_contrast": round(float(ev.contrast), 4),
                "matched_lines": matched,
                "missing_lines": missing,
                "shared_lines": sorted(str(idx.line_id[i]) for i in ev.shared_lines),
            }
        )

    names = idx.species_names
    pairs = ev_pass.pairs
    order = np.lexsort((np.abs(pairs.delta), pairs.obs))
    # Pair and peak fields as Python lists once (not a NumPy scalar per value).
    pair_obs = pairs.obs[order].tolist()
    pair_ref = pairs.ref[order]
    pair_species = [names[c] for c in idx.species[pair_ref].tolist()]
    pair_line_id = [str(v) for v in idx.line_id[pair_ref].tolist()]
    pair_pos = idx.position[pair_ref].tolist()
    pair_delta = pairs.delta[order].tolist()
    pair_e = e[pair_ref].tolist()
    by_peak: dict[int, list[int]] = {}
    for k, p in enumerate(pair_obs):
        by_peak.setdefault(p, []).append(k)
    pos_obs_l = pos_obs.tolist()
    inten_l = obs.intensity.tolist()
    half_l = obs.half_window.tolist()
    lines = []
    for p, asg in enumerate(result.assignments):
        cands = []
        for k in by_peak.get(p, [])[:_MAX_CANDIDATES]:
            cands.append(
                {
                    "species": pair_species[k],
                    "line_id": pair_line_id[k],
                    f"reference_{u}": _num(pair_pos[k]),
                    f"delta_{u}": _num(pair_delta[k]),
                    "expected_rel": _num(pair_e[k]),
                }
            )
        lines.append(
            {
                "index": p,
                f"observed_{u}": _num(pos_obs_l[p]),
                "intensity": _num(inten_l[p]),
                f"tolerance_{u}": _num(half_l[p]),
                "status": asg.status,
                "label": result.peak_labels.get(p),
                "assigned_to": [names[c] for c in asg.species],
                "n_candidates": len(by_peak.get(p, [])),
                "candidates": cands,
            }
        )

    warnings = list(result.warnings)
    warnings.extend(result.notes)
    warnings.extend(_other_warnings(result, u))
    warnings.extend(_prior_data_tests(ev_pass))
    warnings.extend(_contrast_notes(ev_pass))
    warnings.extend(response_note(result.response, result.observed.position, u))
    xray = dict(result.xray) if result.xray else None
    if xray is not None:  # X-ray physics (workbench.xray): artefacts, instrument, exclusions
        warnings.extend(xray.pop("warnings", []))
        # No plasma temperature or LTE on an X-ray energy axis; overlaps in eV
        # of detector resolution, energies to 1 eV.
        from workbench.xray import Instrument
        from workbench.xray.detector import fwhm_eV
        from workbench.xray.wording import xrf_message

        inst = Instrument.from_dict(xray["instrument"])
        warnings = [
            w | {"message": xrf_message(str(w["message"]), lambda e: fwhm_eV(e, inst))}
            for w in warnings
            if w["kind"] not in ("temperature", "lte")
        ]
    warnings.sort(key=lambda w: (str(w["kind"]), str(w["message"])))

    levels = {
        lvl: [el["species"] for el in elements if el["verdict_level"] == lvl] for lvl in VERDICTS
    }
    statuses = [a.status for a in result.assignments]
    return {
        "schema_version": SCHEMA_VERSION,
        "software_version": __version__,
        "data_version": _data_version(result),
        "input": {
            "name": source.name if source else None,
            "sha256": source.sha256 if source else None,
            "size_bytes": source.size_bytes if source else None,
            "kind": source.kind if source else "peak_list",
            "format": source.format if source else None,
            "notes": list(source.notes) if source else [],
            "axis": peaks.axis,
            "unit": u,
            "medium": peaks.medium,
            "mode": peaks.mode,
            "n_peaks": int(pos_obs.size),
            "peak_finding": peaks.extra.get("peak_finding")
            if isinstance(peaks.extra, dict)
            else None,
        },
        "parameters": result.parameters.to_dict()
        | {"tolerance_resolved": obs.tolerance.to_dict() if obs.tolerance else None},
        "reference_sets": [dict(p) for p in idx.provenance],
        "calibration": result.scale.to_dict(),
        "temperature": {
            "working_temperature_K": result.working_temperature_K,
            "given_K": result.parameters.temperature_K,
            "estimate": result.temperature.to_dict() if result.temperature else None,
            "lte": result.lte,
        },
        "evidence_model": {
            "source_model": dict(result.source_model),
            "instrument_response": result.response.to_dict(),
            "n_species_tried": int(ev_pass.n_species_tried),
            "abundance_prior": result.parameters.abundance_prior,
            "missing_line_evidence": bool(obs.detection_limit is not None),
        },
        "elements": elements,
        "lines": lines,
        "warnings": warnings,
        "xray": xray,
        "summary": {
            "n_peaks": int(pos_obs.size),
            "n_assigned": statuses.count("assigned"),
            "n_shared": statuses.count("shared"),
            "n_unassigned": statuses.count("unassigned"),
            "by_verdict": {VERDICTS[lvl]: levels[lvl] for lvl in sorted(VERDICTS, reverse=True)},
        },
    }


def _data_version(result: MatchResult) -> str | None:
    versions = sorted(
        {str(p.get("data_version")) for p in result.index.provenance if p.get("data_version")}
    )
    return ";".join(versions) if versions else None


def _prior_data_tests(ev_pass: Any) -> list[dict[str, object]]:
    """One note per species whose class rests on the absorption prior's data test.

    Under ``absorption`` with an abundance prior, a prior-named species may
    reach "probable" when its data alone pass p ≤ 0.05 on the forward-modelled
    blend positions (``prior_test.absorption_prior_test``), a different figure
    from the plain ``chance_probability`` of its species row; the note names
    both, so a reviewer can see what carried the call.
    """
    out: list[dict[str, object]] = []
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label):
        p_test = ev.groups.get("prior_test_p")
        if p_test is None or ev.prior_dex <= 0.0 or ev.level < 2:
            continue
        out.append(
            {
                "kind": "prior_data_test",
                "message": f"{ev.label} is '{ev.verdict}' with the abundance prior, which "
                f"adds +{ev.prior_dex:.2f} dex to its net evidence; a prior may tip a call "
                f"but not make one, and its data alone pass the prior's test at "
                f"p = {p_test:.3g} (dips at the forward-modelled positions of its "
                f"unresolved blends, chance from the dips that can be matched; the plain "
                f"chance probability of its lines is {ev.chance_probability:.3g})",
                "elements": [ev.label],
                "lines": [],
            }
        )
    return out


def _contrast_notes(ev_pass: Any) -> list[dict[str, object]]:
    """One note per species at "probable" or above whose missing lines were judged at a contrast.

    The missing-line penalty of such a species predicted its weaker lines at
    S^b, b > 1 (:mod:`workbench.matching.contrast`): the note says so, so
    a reviewer sees that its misses were partly excused and why.
    """
    out: list[dict[str, object]] = []
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label):
        listed = ev.missing_penalty_listed_dex
        # Only where the contrast mattered: a tenth of a decade or more.
        if ev.level < 2 or listed is None or ev.missing_penalty_dex - listed < 0.1:
            continue
        out.append(
            {
                "kind": "intensity_contrast",
                "message": f"{ev.label} is '{ev.verdict}'; its missing lines were judged with "
                f"its weaker lines predicted at (relative strength)^{ev.contrast:g}, not at "
                f"their listed ratios: its found lines are its more strongly listed ones and "
                f"its weaker lines are missing together, as a source whose scale is steeper "
                f"than the listing shows them (missing-line penalty "
                f"{ev.missing_penalty_dex:.2f} dex; {listed:.2f} dex at the listed ratios)",
                "elements": [ev.label],
                "lines": [],
            }
        )
    return out


#: A fitted response is reported when it changes predictions by at least
#: this many decades (a factor of 2) somewhere in the spectrum (common
#: practice, no source).
RESPONSE_NOTE_DEX: float = 0.3


def response_note(response: Any, position: np.ndarray, unit: str) -> list[dict[str, object]]:
    """A note when the shared instrument response moved predictions by a factor ≥ 2.

    Every prediction was multiplied by the fitted response
    (:mod:`workbench.matching.response`); where it falls steeply (a
    dichroic, an order-blocking filter, a detector's red end) missing lines
    there were excused by it. The note names the measuring species, the
    number of found lines that fixed it, and where it is lowest over the
    observed span, relative to its highest value.
    """
    if not response.degree or position.size == 0:
        return []
    x = np.linspace(float(np.min(position)), float(np.max(position)), 201)
    log_r = response.log10_at(x)
    drop = float(log_r.max() - log_r.min())
    if drop < RESPONSE_NOTE_DEX:
        return []
    lo = float(x[int(np.argmin(log_r))])
    return [
        {
            "kind": "instrument_response",
            "message": f"predicted intensities include an instrument response fitted on "
            f"{', '.join(response.species)} ({response.n_points} found lines): its "
            f"sensitivity falls to {10.0**-drop:.2g}× of its highest at {lo:.1f} {unit}, "
            f"so lines there are predicted that much weaker and their absence weighs less",
            "elements": list(response.species),
            "lines": [],
        }
    ]


def _other_warnings(result: MatchResult, u: str) -> list[dict[str, object]]:
    out: list[dict[str, object]] = []
    src = result.peaks.source
    for note in src.notes if src else ():
        if "assum" in note.lower():
            out.append({"kind": "input_assumption", "message": note, "elements": [], "lines": []})
    sc = result.scale
    if sc.shift is not None and not sc.applied:
        tol = float(np.median(result.observed.half_window))
        if abs(sc.shift) > max(3 * (sc.shift_uncertainty or 0.0), 0.25 * tol):
            out.append(
                {
                    "kind": "scale_offset",
                    "message": f"{sc.message}: larger than its uncertainty and a quarter of the "
                    f"match window; check the instrument's wavelength calibration or rerun with "
                    f"--apply-calibration",
                    "elements": [],
                    "lines": [],
                }
            )
    if result.observed.detection_limit is None:
        out.append(
            {
                "kind": "no_missing_line_evidence",
                "message": "the peak list has no intensities: missing-line evidence was not "
                "available, so no element can be called 'established' (at most 'probable')",
                "elements": [],
                "lines": [],
            }
        )
    if sc.applied:
        out.append(
            {
                "kind": "scale_corrected",
                "message": f"{sc.message}: observed positions were corrected before matching",
                "elements": [],
                "lines": [],
            }
        )
    lte = result.lte
    if lte is not None and lte.get("satisfied") is not True:
        out.append({"kind": "lte", "message": str(lte["message"]), "elements": [], "lines": []})
    t = result.temperature
    if t is not None and t.temperature_K is None:
        out.append(
            {
                "kind": "temperature",
                "message": t.message + f"; expected intensities use "
                f"{result.working_temperature_K:g} K",
                "elements": [],
                "lines": [],
            }
        )
    unassigned = sum(1 for a in result.assignments if a.status == "unassigned")
    if unassigned:
        out.append(
            {
                "kind": "unassigned_lines",
                "message": f"{unassigned} observed line(s) are explained by no plausible species "
                + (
                    "(molecular bands, elements outside the chosen sets, or artefacts)"
                    if u != "eV"
                    else "(elements outside the chosen sets, or instrument peaks the artefact "
                    "model does not predict)"
                ),
                "elements": [],
                "lines": [],
            }
        )
    return out
