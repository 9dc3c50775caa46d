"""Canonical content of a findings sheet, built from plain data.

The content dictionary is what the sheet *says*; the PDF is one rendering of
it and the canonical JSON (:func:`canonical_json`) is the other. Both are
signed. Building is deterministic: the same inputs give the same dictionary
and the same JSON bytes.

Floats are rounded to :data:`SIGNIFICANT_DIGITS` significant digits when the
content is built, so that the JSON does not depend on the last bits of a
floating-point computation; ``json.dumps`` then writes each rounded float by
Python's shortest round-trip ``repr``, which is reproducible.

Everything a user typed (names, notes, limitations) is kept as plain text and
never interpreted as markup by the renderer.

Format 2 (``workbench-findings/2``) holds what the report prints, already in
words: ``summary`` and ``evidence`` (:mod:`workbench.findings.conclusions`),
``decisions``, ``method``, ``limits``, ``custody`` rows, ``parameters`` as
name/value pairs (:mod:`workbench.findings.sections`); the full engine result
stays in the store, identified by ``analysis.result_sha256``.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime
from typing import Any

from workbench.errors import InputError, ValueRangeError

__all__ = [
    "CAUTIONS",
    "CONTENT_FORMAT",
    "SIGNIFICANT_DIGITS",
    "build_sheet_content",
    "canonical_json",
    "normalise_value",
    "position_keys",
    "utc_timestamp",
]

#: Format id written into every sheet's content.
CONTENT_FORMAT: str = "workbench-findings/2"

#: Significant digits kept for every float in the content (enough for 0.0001 nm at 1000 nm).
SIGNIFICANT_DIGITS: int = 10

#: The standing cautions printed on every sheet (the lab's own limitations come in addition).
CAUTIONS: tuple[str, ...] = (
    "This sheet reports what an automated line-matching program found. A qualified "
    "examiner must review it, and it must be interpreted under the laboratory's own "
    "accredited procedures before anyone relies on it.",
    "Finding a chemical element says nothing by itself about which compound, material or "
    "product was present.",
    "Line matching is a screening step. It does not take the place of confirmatory "
    "methods required by the laboratory's procedures.",
    "Where a finding could affect a person's liberty or legal position, it must be reviewed "
    "and confirmed under the laboratory's procedures before it is reported onward.",
)


def utc_timestamp(value: str | datetime | None = None) -> str:
    """Return a UTC time as ``YYYY-MM-DDTHH:MM:SSZ``.

    Parameters
    ----------
    value : str or datetime or None
        An aware datetime, an ISO 8601 string with an offset or ``Z``, or
        ``None`` for the current time.

    Returns
    -------
    str
        The time in UTC, to the second.

    Raises
    ------
    ValueRangeError
        If the value is naive (no time zone) or not ISO 8601.
    """
    if value is None:
        moment = datetime.now(UTC)
    elif isinstance(value, datetime):
        moment = value
    elif isinstance(value, str):
        text = value.strip()
        if text.endswith(("Z", "z")):
            text = text[:-1] + "+00:00"
        try:
            moment = datetime.fromisoformat(text)
        except ValueError as exc:
            raise ValueRangeError(
                f"time {value!r} is not an ISO 8601 date-time",
                "write it like 2026-03-14T09:30:00Z",
            ) from exc
    else:
        raise ValueRangeError(f"time {value!r} is not a date-time", "give an ISO 8601 string")
    if moment.tzinfo is None or moment.utcoffset() is None:
        raise ValueRangeError(
            f"time {value!r} has no time zone",
            "give the time in UTC with a 'Z' suffix (2026-03-14T09:30:00Z) or an offset",
        )
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _round_sig(x: float, digits: int = SIGNIFICANT_DIGITS) -> float:
    if x == 0.0:
        return 0.0
    return float(f"{x:.{digits - 1}e}")


def normalise_value(value: Any, where: str = "content") -> Any:
    """Turn a value into plain JSON data with rounded floats.

    Parameters
    ----------
    value : Any
        Mappings, sequences, str, int, float, bool, None, bytes (decoded as
        UTF-8 JSON if possible, else hex) or numpy scalars.
    where : str
        Path of the value, for error messages.

    Returns
    -------
    Any
        The normalised value (dict keys are str; tuples become lists).

    Raises
    ------
    ValueRangeError
        For NaN or infinite floats, or values that have no JSON form.
    """
    if value is None or isinstance(value, bool | str):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ValueRangeError(
                f"{where} is {value}, which has no place on a findings sheet",
                "fix the analysis so that it gives finite numbers, or leave the value out",
            )
        return _round_sig(value)
    if hasattr(value, "item") and callable(value.item) and not isinstance(value, Mapping):
        try:
            return normalise_value(value.item(), where)  # numpy scalar
        except (TypeError, ValueError):
            pass
    if isinstance(value, bytes | bytearray):
        try:
            return normalise_value(json.loads(bytes(value).decode("utf-8")), where)
        except (UnicodeDecodeError, json.JSONDecodeError):
            return bytes(value).hex()
    if isinstance(value, datetime):
        return utc_timestamp(value)
    if isinstance(value, Mapping):
        return {str(k): normalise_value(v, f"{where}.{k}") for k, v in value.items()}
    if isinstance(value, Sequence):
        return [normalise_value(v, f"{where}[{i}]") for i, v in enumerate(value)]
    raise ValueRangeError(
        f"{where} holds a {type(value).__name__}, which has no JSON form",
        "pass plain numbers, strings, lists and dictionaries",
    )


def canonical_json(content: Mapping[str, Any]) -> bytes:
    """Serialise content canonically.

    Sorted keys, compact separators, ``ensure_ascii=False``, UTF-8, no NaN.
    Floats should already be rounded (:func:`build_sheet_content` does it).

    Parameters
    ----------
    content : mapping
        The sheet content.

    Returns
    -------
    bytes
        UTF-8 JSON.
    """
    try:
        text = json.dumps(
            content, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
        )
    except (TypeError, ValueError) as exc:
        raise ValueRangeError(
            f"sheet content cannot be written as canonical JSON ({exc})",
            "build the content with build_sheet_content()",
        ) from exc
    return text.encode("utf-8")


def _text(value: Any, what: str) -> str:
    if value is None:
        return ""
    if not isinstance(value, str):
        raise InputError(f"{what} must be text, got {type(value).__name__}", "pass a string")
    # Normalise line ends only; the words themselves are kept exactly.
    return value.replace("\r\n", "\n").replace("\r", "\n")


def position_keys(result: Mapping[str, Any]) -> tuple[str, str]:
    """Return the axis kind and unit of a matching result.

    Parameters
    ----------
    result : mapping
        The matching engine's result JSON (schema_version 1).

    Returns
    -------
    tuple of str
        ``("wavelength", "nm")`` or ``("energy", "eV")``.
    """
    inp = result.get("input") or {}
    unit = str(inp.get("unit") or "").strip()
    if inp.get("axis") == "wavelength" or unit == "nm":
        return "wavelength", "nm"
    if unit in ("eV", "keV") or inp.get("axis") == "energy" or inp.get("kind") == "energy":
        return "energy", "eV"
    for el in result.get("elements") or []:
        for m in el.get("matched_lines") or []:
            if "observed_eV" in m:
                return "energy", "eV"
            if "observed_nm" in m:
                return "wavelength", "nm"
    return "wavelength", "nm"


def _pick(src: Mapping[str, Any] | None, keys: Sequence[str]) -> dict[str, Any]:
    if not src:
        return {}
    return {k: src[k] for k in keys if k in src and src[k] is not None}


def _finding(el: Mapping[str, Any], unit: str) -> dict[str, Any]:
    """One species in the JSON's compact list (the full result stays in the store)."""
    return {
        "species": el.get("species"),
        "element": str(el.get("element", "?")),
        "verdict": str(el.get("verdict", "")),
        "verdict_level": el.get("verdict_level"),
        "score": el.get("score"),
        "n_matched": len(el.get("matched_lines") or []),
        "n_missing": len(el.get("missing_lines") or []),
    }


def _text_or_empty(value: Any) -> str:
    return "" if value is None else str(value)


def build_sheet_content(
    *,
    lab: Mapping[str, Any],
    case: Mapping[str, Any],
    item: Mapping[str, Any],
    custody: Sequence[Mapping[str, Any]],
    measurement: Mapping[str, Any],
    analysis: Mapping[str, Any],
    analyst: Mapping[str, Any],
    notes: str,
    limitations: str,
    issued_at: str | datetime,
    supplements: Sequence[Mapping[str, Any]] = (),
    decisions: Sequence[Mapping[str, Any]] = (),
    question: str = "",
    elements_asked: Sequence[str] = (),
    reviewer: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """Assemble the canonical content of a findings sheet.

    Parameters
    ----------
    lab : mapping
        The laboratory: ``name`` (required), optionally ``address``,
        ``accreditation``, ``unit``.
    case, item : mapping
        Case and item records (the store's records as dicts).
    custody : sequence of mapping
        Chain-of-custody events of the item, in recorded order.
    measurement : mapping
        Measurement record: technique, instrument, settings, ...
    analysis : mapping
        Analysis record: ``id``, ``parameters``, ``reference_sets`` and
        ``result`` (the matching engine's result JSON as a dict).
    analyst : mapping
        ``name``, ``role`` and ``fingerprint`` of the signing analyst.
    notes, limitations : str
        The analyst's free text, kept verbatim.
    issued_at : str or datetime
        Issue time (UTC or with an offset).
    supplements : sequence of mapping, optional
        Further results to report, each ``{"kind", "title", "text", "data"}``
        (``text`` is printed, ``data`` kept in the JSON).
    decisions : sequence of mapping, optional
        The analyst's decisions on the analysis, in order
        (:meth:`workbench.casefile.decisions.DecisionRecord.to_dict`).
    question : str, optional
        The question the examination answers, in the requester's terms.
    elements_asked : sequence of str, optional
        Elements the question asks about: those not concluded are reported
        as looked for and not found.
    reviewer : mapping, optional
        ``name``, ``role`` and ``fingerprint`` of the technical reviewer who
        is to countersign the sheet.

    Returns
    -------
    dict
        Plain JSON data; pass it to :func:`canonical_json` and
        :func:`workbench.findings.sheet.render_pdf`.

    Raises
    ------
    InputError
        If the lab has no name, the analysis has no result, the analyst
        has no name or fingerprint, or the reviewer is the analyst.
    ValueRangeError
        If a number is NaN or infinite.
    """
    from workbench.findings.conclusions import build_conclusions
    from workbench.findings.decisions import effective_calls, with_species
    from workbench.findings.sections import (
        custody_rows,
        decision_rows,
        item_words,
        limits,
        method_paragraph,
        parameter_rows,
        plain,
        temperature_words,
    )

    if not isinstance(lab, Mapping) or not str(lab.get("name") or "").strip():
        raise InputError("the laboratory has no name", "give the lab's name (--lab-name)")
    result = analysis.get("result") if isinstance(analysis, Mapping) else None
    if isinstance(result, bytes | bytearray | str):
        try:
            result = json.loads(result)
        except json.JSONDecodeError as exc:
            raise InputError(
                f"the analysis result is not JSON ({exc})", "re-run the analysis"
            ) from exc
    if not isinstance(result, Mapping):
        raise InputError(
            "the analysis has no result to report", "run the analysis before issuing a sheet"
        )
    for key in ("name", "fingerprint"):
        if not str(analyst.get(key) or "").strip():
            raise InputError(f"the analyst record has no {key}", "register the analyst's key first")
    if reviewer is not None and reviewer.get("fingerprint") == analyst.get("fingerprint"):
        raise InputError(
            "the technical reviewer named is the analyst", "name a second registered analyst"
        )
    result = with_species(result)
    axis, unit = position_keys(result)
    decisions = [dict(d) for d in decisions]
    calls = effective_calls(result, decisions)
    asked = [str(e).strip() for e in elements_asked if str(e).strip()]
    concl = build_conclusions(result, calls, unit, asked)
    shown = {c.element for c in calls}
    findings = [
        _finding(el, unit)
        for el in result.get("elements") or []
        if isinstance(el, Mapping)
        and ((el.get("verdict_level") or 0) >= 1 or str(el.get("element")) in shown)
    ]
    findings.sort(key=lambda f: (-(f["verdict_level"] or 0), str(f["species"])))
    overlap = ("unresolved_overlap", "reference_overlap")
    other_warnings = [
        str(w.get("message", ""))
        for w in result.get("warnings") or []
        if isinstance(w, Mapping)
        # overlaps (X-ray families ruled out on their own lines among them) are
        # worded per element; temperature and LTE under the limits
        and w.get("kind") not in (*overlap, "temperature", "lte", "overlap_ruled_out")
    ]
    xray = result.get("xray") if axis == "energy" else None
    ref_sets = analysis.get("reference_sets") or result.get("reference_sets") or []
    parameters = analysis.get("parameters") or result.get("parameters") or {}
    inp = result.get("input") or {}
    calibration = (
        result.get("calibration") if isinstance(result.get("calibration"), Mapping) else {}
    )
    analysis_part = {
        "id": analysis.get("id", analysis.get("analysis_id")),
        "created_at": _text_or_empty(analysis.get("created_at")),
        "analysed_by": analysis.get("analyst") if isinstance(analysis.get("analyst"), str) else "",
        "record_hash": analysis.get("record_hash"),
        "result_sha256": _text_or_empty(analysis.get("result_sha256")),
        "software_version": _text_or_empty(result.get("software_version")),
        "schema_version": result.get("schema_version"),
        "input": {
            k: inp[k] for k in ("name", "sha256", "size_bytes", "kind", "format") if k in inp
        },
        "parameters": parameter_rows(parameters),
        "reference_sets": [
            {k: str(r.get(k, "")) for k in ("id", "version", "sha256")}
            for r in ref_sets
            if isinstance(r, Mapping)
        ],
        "calibration": _text_or_empty(calibration.get("message")),
        "temperature": temperature_words(result.get("temperature")) if axis == "wavelength" else "",
    }
    meas = dict(measurement)
    measurement_part = {
        "technique": _text_or_empty(meas.get("technique")),
        "instrument": _text_or_empty(meas.get("instrument")),
        "settings": plain(meas.get("settings") or {}),
        "filename": _text_or_empty(meas.get("filename")),
        "sha256": _text_or_empty(meas.get("sha256")),
        "operator": _text_or_empty(meas.get("operator")),
        "measured_at": _text_or_empty(meas.get("measured_at")),
    }
    case_part = {
        "reference": str(case.get("reference", case.get("case_number", ""))),
        "title": _text_or_empty(case.get("title")),
        "requesting_party": _text_or_empty(case.get("requesting_party")),
    }
    content = {
        "format": CONTENT_FORMAT,
        "issued_at": utc_timestamp(issued_at),
        "lab": dict(lab),
        "case": case_part,
        "item": item_words(item),
        "custody": custody_rows(custody),
        "measurement": measurement_part,
        "analysis": analysis_part,
        "axis": {"kind": axis, "unit": unit, "medium": inp.get("medium") or ""},
        "question": _text(question, "question"),
        "elements_asked": asked,
        "method": method_paragraph(measurement_part, analysis_part, result, axis, unit),
        "limits": limits(result, axis, unit),
        **concl,
        "findings": findings,
        "decisions": decision_rows(decisions),
        "warnings": other_warnings,
        "analyst": _pick(analyst, ("name", "role", "fingerprint")),
        "notes": _text(notes, "notes"),
        "limitations": _text(limitations, "limitations"),
        "cautions": list(CAUTIONS),
    }
    if isinstance(xray, Mapping):
        content["artefacts"] = _artefacts(xray)
    if reviewer is not None:
        content["reviewer"] = _pick(reviewer, ("name", "role", "fingerprint"))
    if supplements:
        content["supplements"] = [_supplement(s) for s in supplements]
    return normalise_value(content)


def _artefacts(xray: Mapping[str, Any]) -> dict[str, Any]:
    """X-ray artefacts as the sheet prints them (energies to 1 eV; energy axis only).

    ``peaks``: the labelled artefact peaks, one row each; ``without_peak``:
    predicted artefacts with no separate peak, as short ``"1105 eV escape"``
    phrases (one sentence on the sheet, so it keeps to its pages).
    """
    from workbench.matching.xrf_view import artefact_rows, artefact_table

    keys = {
        "Energy (eV)": "energy_eV",
        "Kind": "kind",
        "Origin": "origin",
        "Observed peak height": "observed",
        "Predicted": "predicted",
        "Used as evidence": "evidence",
    }
    rows = artefact_rows(xray)
    table = artefact_table(xray)
    return {
        "peaks": [
            {keys[k]: v for k, v in t.items()}
            for r, t in zip(rows, table, strict=True)
            if r["separated"]
        ],
        "without_peak": [
            f"{t['Energy (eV)']} eV {t['Kind']}"
            for r, t in zip(rows, table, strict=True)
            if not r["separated"]
        ],
    }


def _supplement(sup: Mapping[str, Any]) -> dict[str, Any]:
    from workbench.errors import InputError

    missing = [k for k in ("kind", "title", "text") if not sup.get(k)]
    if missing:
        raise InputError(
            f"a supplementary result lacks {', '.join(missing)}",
            "give kind, title and text (and data) for each supplement",
        )
    return {
        "kind": _text(sup["kind"], "supplement kind"),
        "title": _text(sup["title"], "supplement title"),
        "text": _text(sup["text"], "supplement text"),
        "data": dict(sup.get("data") or {}),
    }
