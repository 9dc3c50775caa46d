"""What the sheet concludes: the summary rows and the evidence per element.

Input is the engine result and the element calls after the analyst's
decisions (:func:`workbench.findings.decisions.effective_calls`); output is
plain data that the PDF prints and the canonical JSON keeps, already worded
(positions formatted, species named), so that both say the same.

Choices, and why
----------------
* Decisive lines: the element's matched lines that no other species shares,
  best-supported ion stage first, strongest expected first (a clean strong
  line is what settles an identification), one per observed peak; shared
  ones, marked, only to make up two.
* Interference bearing on an element: the overlap warnings that involve one
  of its species *and* a competitor the evidence supports (verdict level ≥ 1
  or named by a decision). Overlaps with species the evidence does not
  support are counted, not named.
* The figure of an element shows the region around its strongest decisive
  line, where a reader can see the line, its neighbours and any competitor.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from workbench.findings.decisions import ElementCall, element_of
from workbench.findings.wording import format_delta, format_position, format_rel, line_name
from workbench.matching.presentation import verdict_basis

__all__ = [
    "DECISIVE_LINES",
    "EVIDENCE_LINES",
    "build_conclusions",
]

#: Lines named per element in the summary.
DECISIVE_LINES: int = 3
#: Matched lines printed per element in the evidence (the JSON result keeps all).
EVIDENCE_LINES: int = 5
#: Missing lines printed per element.
MISSING_LINES: int = 4
#: Interference rows printed per element.
INTERFERENCE_ROWS: int = 2

# X-ray families ruled out on their own lines (overlap_ruled_out) are counted
# with the overlaps set aside, as they were before they had a kind of their own.
_OVERLAPS = ("unresolved_overlap", "reference_overlap", "overlap_ruled_out")


def _num(x: Any) -> float | None:
    if isinstance(x, bool) or not isinstance(x, int | float) or not math.isfinite(x):
        return None
    return float(x)


def _peak_key(m: Mapping[str, Any], unit: str) -> Any:
    if isinstance(m.get("peak_index"), int):
        return ("peak", m["peak_index"])
    return ("at", m.get(f"observed_{unit}", m.get("position")))


def _decisive(call: ElementCall, unit: str) -> list[dict[str, Any]]:
    ref = f"reference_{unit}"
    rows = []
    for sp in call.species:
        if sp.get("decision") in ("rejected", "no lines left"):
            continue
        for m in sp.get("matched_lines") or []:
            rows.append((sp["species"], m))
    pool = list(rows)
    level = {
        s["species"]: 3 if s.get("decision") == "accepted" else int(s.get("verdict_level") or 0)
        for s in call.species
    }
    # Lines of the best-supported ion stage or family first, strongest expected
    # first; one line per observed peak (two reference lines under one peak are
    # one piece of evidence).
    pool.sort(
        key=lambda r: (
            bool(r[1].get("shared")),
            -level.get(r[0], 0),
            -(_num(r[1].get("expected_rel")) or 0.0),
            str(r[1].get("line_id")),
        )
    )
    picked, seen = [], set()
    for species, m in pool:
        peak = _peak_key(m, unit)
        if peak in seen:
            continue
        seen.add(peak)
        picked.append((species, m))
    # Clean lines decide; shared ones are named (and marked) only to make up two.
    n_clean = sum(not m.get("shared") for _, m in picked)
    limit = min(DECISIVE_LINES, n_clean) if n_clean >= 2 else 2
    out = []
    for species, m in picked[:limit]:
        pos = m.get(ref, m.get("reference", m.get("position")))
        out.append(
            {
                "species": species,
                "line_id": m.get("line_id") or m.get("label") or "",
                "position": _num(pos),
                "name": line_name(m, species, unit) + (" (shared)" if m.get("shared") else ""),
                "shared": bool(m.get("shared")),
            }
        )
    return out


def _supported(result: Mapping[str, Any], calls: Sequence[ElementCall]) -> set[str]:
    names = {
        str(e["species"])
        for e in result.get("elements") or []
        if isinstance(e, Mapping) and (e.get("verdict_level") or 0) >= 1
    }
    for c in calls:
        names |= {str(s["species"]) for s in c.species}
    return names


def _interference(
    call: ElementCall,
    warnings: Sequence[Mapping[str, Any]],
    supported: set[str],
    decisive: Sequence[Mapping[str, Any]],
    unit: str,
) -> tuple[list[dict[str, Any]], int, list[str]]:
    """(rows per supported competitor, count of other overlaps, competitors on decisive lines)."""
    own = {str(s["species"]) for s in call.species}
    decisive_ids = {str(d["line_id"]) for d in decisive}
    rows: dict[str, dict[str, Any]] = {}
    hidden = 0
    on_decisive: list[str] = []
    for w in warnings:
        if w.get("kind") not in _OVERLAPS:
            continue
        involved = [str(x) for x in w.get("elements") or []]
        mine = [x for x in involved if x in own]
        if not mine:
            continue
        others = [x for x in involved if x not in own and element_of(x) != call.element]
        if not others:
            continue
        settle = w.get("settle") if isinstance(w.get("settle"), Mapping) else {}
        for other in others:
            if other not in supported:
                hidden += 1
                continue
            row = rows.setdefault(
                other,
                {"competitor": other, "positions": [], "settled_by": [], "competitor_clean": []},
            )
            pos = _num(w.get("observed"))
            if pos is None:
                ps = [p for p in (_num(x) for x in w.get("positions") or []) if p is not None]
                pos = ps[0] if ps else None
            if pos is not None:
                row["positions"].append(pos)
            for sp in mine:
                found = (settle.get(sp) or {}).get("found") or []
                row["settled_by"].extend(p for p in (_num(x) for x in found) if p is not None)
            found_other = (settle.get(other) or {}).get("found") or []
            row["competitor_clean"].extend(
                p for p in (_num(x) for x in found_other) if p is not None
            )
            if decisive_ids & {str(x) for x in w.get("lines") or []} and other not in on_decisive:
                on_decisive.append(other)
    gap = 0.01 if unit == "nm" else 5.0

    def distinct(values: Sequence[float], n: int) -> list[float]:
        # Reference lines closer than the printed precision are one line to a reader.
        kept: list[float] = []
        for v in sorted(values):
            if not kept or v - kept[-1] > gap:
                kept.append(v)
        return kept[:n]

    out = []
    for other in sorted(rows):
        r = rows[other]
        out.append(
            {
                "competitor": other,
                "at": ", ".join(format_position(p, unit) for p in distinct(r["positions"], 3))
                + (" …" if len(distinct(r["positions"], 99)) > 3 else ""),
                "n_lines": len(set(r["positions"])),
                "settled_by": ", ".join(
                    format_position(p, unit) for p in distinct(r["settled_by"], 3)
                )
                or "no clean line of its own",
                "competitor_clean": ", ".join(
                    format_position(p, unit) for p in distinct(r["competitor_clean"], 3)
                )
                or "none",
            }
        )
    return out, hidden, on_decisive


def _region(
    result: Mapping[str, Any], call: ElementCall, decisive: Sequence[Mapping[str, Any]], unit: str
) -> dict[str, Any] | None:
    centre = next((d["position"] for d in decisive if d["position"] is not None), None)
    if centre is None:
        return None
    half = 1.5 if unit == "nm" else 800.0
    lo, hi = centre - half, centre + half
    obs_key, ref_key = f"observed_{unit}", f"reference_{unit}"
    observed = []
    competitors = []
    for ln in result.get("lines") or []:
        p = _num(ln.get(obs_key))
        if p is None or not lo <= p <= hi:
            continue
        observed.append([p, _num(ln.get("intensity")) or 0.0])
        for cand in ln.get("candidates") or []:
            q = _num(cand.get(ref_key))
            if q is not None and element_of(str(cand.get("species", ""))) != call.element:
                competitors.append([q, _num(cand.get("expected_rel")) or 0.0])
    reference = []
    for sp in call.species:
        for m in [*(sp.get("matched_lines") or []), *(sp.get("missing_lines") or [])]:
            q = _num(m.get(ref_key, m.get("reference", m.get("position"))))
            if q is not None and lo <= q <= hi:
                reference.append([q, _num(m.get("expected_rel")) or 1.0])
    peak = max((i for _, i in observed), default=0.0) or 1.0
    return {
        "from": lo,
        "to": hi,
        "centre": centre,
        "observed": sorted([p, i / peak] for p, i in observed),
        "reference": sorted(reference),
        "competitors": sorted(competitors),
    }


def _stage_words(s: Mapping[str, Any]) -> str:
    """``"Ca I established"``, with the basis where pooling raised the class."""
    basis = verdict_basis(s)
    text = f"{s['species']} {s.get('verdict', '')}"
    return f"{text} [{basis}]" if basis else text


def _class_words(call: ElementCall) -> str:
    ranked = sorted(call.species, key=lambda s: -int(s.get("verdict_level") or 0))
    live = [s for s in ranked if s.get("decision") not in ("rejected", "no lines left")]
    levels = [_stage_words(s) for s in live]
    text = call.verdict if call.verdict else ""
    if call.added:
        return "added by the analyst"
    if not call.species:
        return "not found; printed at the analyst's choice"
    if call.concluded and not call.engine_concluded:
        text = f"{text}; concluded present by the analyst"
    elif call.engine_concluded and not call.concluded:
        text = f"{text}; not concluded (analyst's decision)"
    elif not call.concluded:
        text = f"{text}; not concluded"
    if len(levels) > 1 or any(verdict_basis(s) for s in live):
        text += " (" + ", ".join(levels) + ")"
    return text


def _evidence_lines(call: ElementCall, unit: str) -> tuple[list[dict[str, Any]], int]:
    obs, ref, dlt = f"observed_{unit}", f"reference_{unit}", f"delta_{unit}"
    rows = []
    for sp in call.species:
        accepted = set(sp.get("accepted_lines") or [])
        for m in sp.get("matched_lines") or []:
            notes = []
            if m.get("shared"):
                notes.append("shared")
            if m.get("split_top"):
                # One line whose top a dip splits (workbench.peaks.split).
                notes.append("split top")
            elif m.get("saturated"):
                notes.append("saturated")
            if m.get("line_id") in accepted:
                notes.append("accepted by analyst")
            if sp.get("added_by_decision"):
                notes.append("assigned by analyst")
            o = _num(m.get(obs, m.get("position")))
            r = _num(m.get(ref, m.get("reference")))
            d = _num(m.get(dlt))
            if d is None and o is not None and r is not None:
                d = o - r
            rows.append(
                {
                    "species": str(m.get("label") or sp["species"])
                    if sp.get("added_by_decision")
                    else sp["species"],
                    "line": str(m.get("transition") or "") if unit == "eV" else "",
                    "reference": format_position(r, unit),
                    "observed": format_position(o, unit),
                    "delta": format_delta(d, unit),
                    "expected_rel": format_rel(m.get("expected_rel")),
                    "observed_rel": format_rel(m.get("observed_rel")),
                    "note": ", ".join(notes),
                    "_key": -(_num(m.get("expected_rel")) or 0.0),
                    "_peak": _peak_key(m, unit),
                }
            )
        for lid in sp.get("rejected_lines") or []:
            rows.append(
                {
                    "species": sp["species"],
                    "line": "",
                    "reference": str(lid).rsplit(":", 1)[-1],
                    "observed": "–",
                    "delta": "–",
                    "expected_rel": "–",
                    "observed_rel": "–",
                    "note": "struck by analyst",
                    "_key": 1.0,
                    "_peak": ("struck", lid),
                }
            )
    rows.sort(key=lambda r: r["_key"])
    distinct, seen = [], set()
    for r in rows:
        if r["_peak"] in seen and r["_key"] != 1.0:
            continue
        seen.add(r["_peak"])
        distinct.append(r)
    shown = distinct[:EVIDENCE_LINES] + [r for r in distinct[EVIDENCE_LINES:] if r["_key"] == 1.0]
    shown.sort(key=lambda r: (r["reference"] == "–", r["reference"]))
    for r in shown:
        r.pop("_key")
        r.pop("_peak")
    return shown, len(rows) - len(shown)


def _missing(call: ElementCall, unit: str) -> tuple[list[str], int]:
    ref = f"reference_{unit}"
    rows = []
    for sp in call.species:
        for m in sp.get("missing_lines") or []:
            rows.append((-(_num(m.get("expected_rel")) or 0.0), sp["species"], m))
    rows.sort(key=lambda r: (r[0], str(r[2].get("line_id"))))
    words = [
        f"{line_name(m, species, unit)} (expected rel. {format_rel(m.get('expected_rel'))})"
        for _, species, m in rows[:MISSING_LINES]
    ]
    _ = ref
    return words, max(0, len(rows) - MISSING_LINES)


def build_conclusions(
    result: Mapping[str, Any],
    calls: Sequence[ElementCall],
    unit: str,
    elements_asked: Sequence[str] = (),
) -> dict[str, Any]:
    """Word the summary and the evidence of a sheet.

    Parameters
    ----------
    result : mapping
        The engine result.
    calls : sequence of ElementCall
        From :func:`~workbench.findings.decisions.effective_calls`.
    unit : str
        ``"nm"`` or ``"eV"``.
    elements_asked : sequence of str
        Elements the question asked about (symbols); those not concluded are
        reported as looked for and not found.

    Returns
    -------
    dict
        ``summary`` (rows), ``evidence`` (one block per element on the
        sheet), ``not_found`` (asked, not concluded), ``also_possible``
        (species called possible and not concluded), ``not_supported_count``.
    """
    warnings = [w for w in result.get("warnings") or [] if isinstance(w, Mapping)]
    supported = _supported(result, calls)
    summary, evidence = [], []
    for call in calls:
        if not call.on_sheet:
            continue
        decisive = _decisive(call, unit)
        rows, hidden, on_decisive = _interference(call, warnings, supported, decisive, unit)
        if on_decisive:
            words = "a decisive line overlaps " + ", ".join(on_decisive) + "; see evidence"
        elif rows:
            words = "decisive lines clear; other lines overlap " + ", ".join(
                sorted({element_of(r["competitor"]) for r in rows})
            )
        else:
            words = "none bearing on it"
        summary.append(
            {
                "element": call.element,
                "species": ", ".join(
                    s["species"]
                    for s in call.species
                    if s.get("decision") not in ("rejected", "no lines left")
                ),
                "class": _class_words(call),
                "concluded": call.concluded,
                "decisive_lines": [d["name"] for d in decisive],
                "interference": words,
                "decisions": list(call.decisions),
            }
        )
        lines, more = _evidence_lines(call, unit)
        missing, more_missing = _missing(call, unit)
        evidence.append(
            {
                "element": call.element,
                "class": _class_words(call),
                "lines": lines,
                "more_lines": more,
                "missing": missing,
                "more_missing": more_missing,
                "interference": rows[:INTERFERENCE_ROWS],
                "more_interference": max(0, len(rows) - INTERFERENCE_ROWS),
                "unsupported_overlaps": hidden,
                "region": _region(result, call, decisive, unit),
            }
        )
    by_symbol = {c.element: c for c in calls}
    species = [e for e in result.get("elements") or [] if isinstance(e, Mapping)]
    not_found = []
    for asked in elements_asked:
        symbol = element_of(asked)
        c = by_symbol.get(symbol)
        if c is not None and c.concluded:
            continue
        mine = [e for e in species if element_of(str(e.get("species", ""))) == symbol]
        if not mine:
            why = "no line of it in the reference data within the measured range"
        else:
            best = max(mine, key=lambda e: int(e.get("verdict_level") or 0))
            n_strong = best.get("n_strong_in_range")
            found = best.get("n_strong_found")
            why = f"{best.get('species')}: {best.get('verdict')}"
            if isinstance(n_strong, int) and isinstance(found, int):
                why += f" ({found} of {n_strong} strong lines in range observed)"
        not_found.append({"element": symbol, "why": why})
    named = {s["species"] for c in calls for s in c.species}
    also = sorted(
        str(e["species"])
        for e in species
        if int(e.get("verdict_level") or 0) == 1
        and not by_symbol.get(element_of(str(e["species"])), ElementCall("")).on_sheet
    )
    not_supported = [
        e
        for e in species
        if int(e.get("verdict_level") or 0) == 0 and str(e.get("species")) not in named
    ]
    return {
        "summary": summary,
        "evidence": evidence,
        "not_found": not_found,
        "also_possible": also,
        "not_supported_count": len(not_supported),
    }
