"""Word the parts of a findings sheet that are not conclusions.

Each function turns store or engine data into short sentences or rows of
plain text: the case and its items, the custody events as a table, the
method in one paragraph, the limits that apply, the parameters, the
analyst's decisions. Nothing here prints a Python or JSON form (no ``None``,
``[]``, ``true``): absent values are left out or said in words.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from typing import Any

from workbench.findings.wording import custody_status, short_time

__all__ = [
    "ACTION_WORDS",
    "custody_rows",
    "decision_rows",
    "item_words",
    "limits",
    "method_paragraph",
    "parameter_rows",
    "plain",
    "temperature_words",
]

_HEX64 = re.compile(r"\b[0-9a-f]{64}\b")

#: How each decision action reads on the sheet.
ACTION_WORDS: dict[str, str] = {
    "accept_element": "accepted the call",
    "reject_element": "rejected the call",
    "accept_line": "accepted the line assignment",
    "reject_line": "struck the line assignment",
    "add_element": "added the element by hand",
    "show_on_sheet": "put on the sheet",
    "leave_off_sheet": "left off the sheet",
    "reverse": "reversed",
}


def plain(value: Any) -> str:
    """Say a value in words: lists joined by commas, mappings as ``key value``, yes/no.

    Parameters
    ----------
    value : Any
        Plain JSON data.

    Returns
    -------
    str
        Never ``None``, ``[]``, ``{}``, ``true`` or ``false``; ``"not set"``
        for an absent value and ``"none"`` for an empty list.
    """
    if value is None:
        return "not set"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        if not math.isfinite(value):
            return "not set"
        return f"{value:g}"
    if isinstance(value, int | str):
        return str(value)
    if isinstance(value, Mapping):
        parts = [f"{str(k).replace('_', ' ')} {plain(v)}" for k, v in sorted(value.items())]
        return "; ".join(parts) if parts else "none"
    if isinstance(value, Sequence):
        return ", ".join(plain(v) for v in value) if value else "none"
    return str(value)


_EVENT_WORDS = {
    "received": "received",
    "transferred": "transferred",
    "sealed": "sealed",
    "opened": "opened",
    "sub-sampled": "sub-sampled",
    "analysed": "analysed",
    "reported": "reported",
    "reviewed": "reviewed",
    "returned": "returned",
    "disposed": "disposed of",
    "note": "note",
    "correction": "correction",
}


def custody_rows(events: Sequence[Mapping[str, Any]]) -> list[dict[str, str]]:
    """Custody events as rows of ``when``, ``action``, ``holder`` and ``details``.

    Parameters
    ----------
    events : sequence of mapping
        The store's custody events of the item, in order.

    Returns
    -------
    list of dict
        Plain-text rows; hashes stay in the store.
    """
    rows = []
    for e in events:
        details = []
        if e.get("from_party"):
            details.append(f"from {e['from_party']}")
        if e.get("to_party") and e.get("to_party") != e.get("actor"):
            details.append(f"to {e['to_party']}")
        if e.get("location"):
            details.append(f"at {e['location']}")
        kind = e.get("kind") or e.get("event") or ""
        if kind in ("received", "sealed", "opened") and e.get("seal_number"):
            details.append(f"seal {e['seal_number']}")
        if e.get("note"):
            # Full digests are printed once in the appendix; here the first 12 digits
            # are enough to tell files apart.
            details.append(_HEX64.sub(lambda m: m.group(0)[:12] + "…", str(e["note"])))
        if e.get("corrects_seq"):
            details.append(f"corrects event {e['corrects_seq']}")
        rows.append(
            {
                "seq": str(e.get("seq", "")),
                "item": str(e.get("item_number") or ""),
                "when": short_time(e.get("at")),
                "action": _EVENT_WORDS.get(str(kind), str(kind)),
                "holder": str(e.get("to_party") or e.get("actor") or ""),
                "by": str(e.get("actor") or ""),
                "details": "; ".join(details),
            }
        )
    return rows


def item_words(item: Mapping[str, Any]) -> dict[str, str]:
    """An item as ``reference``, ``description`` and ``status`` (custody status in words)."""
    out = {
        "reference": str(item.get("reference", "")),
        "description": str(item.get("description", "")),
        "status": custody_status(item),
    }
    if item.get("parent_item_number"):
        out["description"] += f" (taken from item {item['parent_item_number']})"
    return out


def temperature_words(temperature: Mapping[str, Any] | None) -> str:
    """One sentence on the plasma temperature used (empty when none applies)."""
    if not isinstance(temperature, Mapping):
        return ""
    est = temperature.get("estimate") if isinstance(temperature.get("estimate"), Mapping) else {}
    working = temperature.get("working_temperature_K")
    t = est.get("temperature_K")
    if isinstance(t, int | float):
        text = (
            f"Expected line strengths use a temperature of {t:,.0f} K ± "
            f"{est.get('uncertainty_K') or 0:,.0f} K from a Boltzmann plot of "
            f"{est.get('species')} ({est.get('n_lines')} lines, r² "
            f"{est.get('r_squared') or 0:.2f})."
        )
    elif isinstance(temperature.get("given_K"), int | float):
        text = (
            f"Expected line strengths use the given temperature of {temperature['given_K']:,.0f} K."
        )
    elif isinstance(working, int | float):
        text = f"Expected line strengths use a default temperature of {working:,.0f} K."
    else:
        return ""
    lte = temperature.get("lte")
    if isinstance(lte, Mapping) and lte.get("satisfied") is not True:
        text += " Local thermodynamic equilibrium is not established for this plasma."
    return text


def method_paragraph(
    measurement: Mapping[str, Any],
    analysis: Mapping[str, Any],
    result: Mapping[str, Any],
    axis: str,
    unit: str,
) -> str:
    """The method in one paragraph, for a reader who is not a spectroscopist."""
    tech = str(measurement.get("technique") or "spectroscopic")
    inp = result.get("input") or {}
    refs = analysis.get("reference_sets") or result.get("reference_sets") or []
    ref_words = ", ".join(f"{r.get('id')} (version {r.get('version')})" for r in refs) or "none"
    if axis == "wavelength":
        medium = inp.get("medium") or "medium not stated"
        if "medium not stated; assumed air" in (inp.get("notes") or ()):
            # The reader's assumption (workbench.io.resolve), not the file's word.
            medium = "air, assumed: the file does not state the medium"
        scale = f"wavelengths in nm ({medium})"
    else:
        scale = "photon energies in eV"
    what = "spectrum" if inp.get("kind") == "spectrum" else "peak list"
    text = (
        f"The {tech} {what} {inp.get('name', '')} was recorded with "
        f"{measurement.get('instrument') or 'an unrecorded instrument'}"
    )
    if measurement.get("measured_at"):
        text += f" on {short_time(measurement['measured_at'])[:10]}"
    text += (
        f". Its peaks were compared, by a program, with the tabulated lines of every element in "
        f"the reference data {ref_words}, on a scale of {scale}. An element is called "
        "established, probable or possible according to the weight of its evidence: how "
        "unlikely it is that its matched lines fall where they do by coincidence, allowing "
        "for every element tried; how closely they sit on its tabulated lines; and how much "
        "its lines that should have been seen but were not count against it. Otherwise it "
        "is not supported. Where an element shows in two ion stages, their evidence may be "
        "pooled; the class then says so."
    )
    return text


def limits(result: Mapping[str, Any], axis: str, unit: str) -> list[str]:
    """The limits that apply: detection, resolution and the source model."""
    out = []
    pf = (result.get("input") or {}).get("peak_finding") or {}
    snr = pf.get("min_snr") or (result.get("parameters") or {}).get("detection_snr")
    if isinstance(snr, int | float):
        out.append(
            f"Detection: only peaks at least {snr:g} times the noise were used; an element "
            "whose lines are weaker than that cannot be seen, so absence of a call is not proof "
            "of absence."
        )
    tol = sorted(
        float(ln[f"tolerance_{unit}"])
        for ln in result.get("lines") or []
        if isinstance(ln.get(f"tolerance_{unit}"), int | float)
    )
    if tol:
        mid = tol[len(tol) // 2]
        width = f"{mid:.3f} nm" if unit == "nm" else f"{mid:.0f} eV"
        out.append(
            f"Resolution: lines closer than about {width} to an observed peak cannot be told "
            "apart; such overlaps are settled with other, clean lines of each element."
        )
    if axis == "wavelength":
        t = temperature_words(result.get("temperature"))
        out.append(
            "Source model: expected relative line strengths assume a plasma in thermal "
            "equilibrium. " + t
        )
    else:
        out.append(
            "Source model: expected relative line strengths come from the tabulated X-ray "
            "data; absorption by the sample and the layers above it (matrix effects) is not "
            "corrected, so strengths show presence, not amount or depth."
        )
    return out


def parameter_rows(parameters: Mapping[str, Any]) -> list[list[str]]:
    """Matching parameters as ``[name, value in words]`` rows, sorted by name."""
    return [
        [str(k).replace("_", " "), plain(v)]
        for k, v in sorted(parameters.items())
        if v is not None and v != [] and v != {}
    ]


def decision_rows(decisions: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """The analyst's decisions in order, worded, with what reversed them."""
    reversed_by = {
        int(d["reverses"]): int(d["seq"]) for d in decisions if d.get("action") == "reverse"
    }
    rows = []
    for d in decisions:
        seq = int(d["seq"])
        target = str(d.get("target", ""))
        if d.get("action") in ("accept_line", "reject_line"):
            sp, _, lid = target.partition("|")
            target = f"{sp} line {lid.rsplit(':', 1)[-1]}"
        what = ACTION_WORDS.get(str(d.get("action")), str(d.get("action")))
        if d.get("action") == "add_element" and d.get("lines"):
            lines = ", ".join(
                f"{x.get('position'):g}" + (f" ({x['label']})" if x.get("label") else "")
                for x in d["lines"]
            )
            what += f", with lines at {lines}"
        status = f"reversed by decision {reversed_by[seq]}" if seq in reversed_by else "in force"
        if d.get("action") == "reverse":
            status = "in force"
        rows.append(
            {
                "seq": seq,
                "when": short_time(d.get("decided_at")),
                "by": str(d.get("analyst", "")),
                "target": target,
                "action": d.get("action"),
                "what": what,
                "reason": str(d.get("reason", "")),
                "status": status,
                "record_hash": str(d.get("record_hash", "")),
            }
        )
    return rows
