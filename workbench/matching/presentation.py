"""Shaping a match result for display: plain rows, sticks, tracks and groups.

Everything here reads a result (the schema-1 report, and the engine's
:class:`~workbench.matching.engine.MatchResult` when it is at hand) and
returns plain Python values that any face can draw: the app's tables and
figures, a report writer, a notebook. Nothing decides anything: verdicts,
windows and warnings are the engine's; this module only selects, groups,
orders and formats them.

:class:`MatchView` is the picklable bundle a worker process hands back to
the app after a run (the report, its exact JSON bytes and the reference
lines of every listed species), so no live engine object has to cross a
process boundary.

On an energy axis (X-ray fluorescence) positions are shown to 1 eV and
species are X-ray families (``Pb L``, ``Ti K``); on a wavelength axis to
0.0001 nm with the medium named. X-ray artefact peaks and overlaps in
detector terms are shaped by :mod:`workbench.matching.xrf_view`; stick-plot
data by :mod:`workbench.matching.plot_data` (re-exported here).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from workbench.matching.plot_data import (
    INTERFERENCE_KINDS,
    ObservedStick,
    ReferenceLine,
    boltzmann_fit_line,
    interference_spans,
    observed_sticks,
    reference_lines,
    report_reference_lines,
    zoom_range,
)

__all__ = [
    "INTERFERENCE_KINDS",
    "PROBABLE_LEVEL",
    "InterferenceGroup",
    "MatchView",
    "ObservedStick",
    "ReferenceLine",
    "ResultSummary",
    "axis_title",
    "boltzmann_fit_line",
    "element_levels",
    "element_rows",
    "evidence_rows",
    "format_position",
    "interference_groups",
    "interference_spans",
    "observed_interference_lines",
    "observed_sticks",
    "other_warnings",
    "overlap_text",
    "reference_lines",
    "report_reference_lines",
    "result_summary",
    "unassigned_rows",
    "verdict_basis",
    "warning_species",
    "zoom_range",
]

#: Verdict level from which a call is "probable or better" (engine's levels 0–3).
PROBABLE_LEVEL: int = 2


@dataclass(frozen=True)
class InterferenceGroup:
    """Interference warnings that concern one observed line (or one reference pair).

    Attributes
    ----------
    position : float or None
        The observed line they concern (``None`` for pairs of reference lines).
    species : tuple of str
        Every species named, sorted.
    warning_indices : tuple of int
        Positions of the warnings in ``report["warnings"]`` (0-based).
    messages : tuple of str
        The engine's messages, in the same order.
    touches_probable : bool
        Whether any named species is called probable or better.
    """

    position: float | None
    species: tuple[str, ...]
    warning_indices: tuple[int, ...]
    messages: tuple[str, ...]
    touches_probable: bool


@dataclass(frozen=True)
class ResultSummary:
    """The few facts shown above everything else after a run."""

    unit: str
    axis: str
    medium: str | None
    n_peaks: int
    n_assigned: int
    n_shared: int
    n_unassigned: int
    by_verdict: dict[str, list[str]]
    working_temperature_K: float | None
    temperature_estimated: bool
    temperature_text: str
    calibration_text: str
    calibration_applied: bool


@dataclass(frozen=True)
class MatchView:
    """A finished run ready for display (picklable; no engine objects).

    Attributes
    ----------
    report : dict
        The schema-1 result record.
    json_bytes : bytes
        Its canonical JSON exactly as stored and signed.
    references : tuple of ReferenceLine
        Reference lines of every species the report lists (from the engine's
        evidence when the run was live, from the report when re-opened).
    """

    report: dict[str, Any]
    json_bytes: bytes
    references: tuple[ReferenceLine, ...] = field(default=())

    @classmethod
    def from_outcome(cls, outcome: Any) -> MatchView:
        """Bundle an :class:`~workbench.matching.analyse.AnalysisOutcome` for display."""
        species = [str(el["species"]) for el in outcome.report.get("elements") or []]
        refs = reference_lines(outcome.result, species)
        return cls(outcome.report, bytes(outcome.json_bytes), tuple(refs))

    @classmethod
    def from_report(cls, report: Mapping[str, Any], json_bytes: bytes) -> MatchView:
        """A stored result (reference lines as the report lists them)."""
        species = [str(el["species"]) for el in report.get("elements") or []]
        return cls(dict(report), bytes(json_bytes), tuple(report_reference_lines(report, species)))

    def references_of(self, species: Sequence[str]) -> list[ReferenceLine]:
        """Reference lines of the given species only."""
        wanted = set(species)
        return [r for r in self.references if r["species"] in wanted]


# ----------------------------------------------------------------------------- formatting


def format_position(value: float | None, unit: str) -> str:
    """A position as shown: energies to 1 eV, wavelengths to 0.0001 nm; ``–`` when missing."""
    if value is None or not isinstance(value, int | float) or not math.isfinite(value):
        return "–"
    if unit == "eV":
        return f"{value:,.0f}"
    return f"{value:.4f}"


def axis_title(axis: str, unit: str, medium: str | None) -> str:
    """Axis title naming quantity, medium and unit (``wavelength in air (nm)``)."""
    if axis == "energy":
        return f"photon energy ({unit})"
    where = f" in {medium}" if medium else " (medium not stated)"
    return f"wavelength{where} ({unit})"


# ----------------------------------------------------------------------------- summary and grid


def result_summary(report: Mapping[str, Any]) -> ResultSummary:
    """The facts for the summary line: counts by verdict, temperature, scale check."""
    inp = report["input"]
    s = report["summary"]
    t = report.get("temperature") or {}
    est = t.get("estimate") or {}
    energy = inp.get("axis") == "energy"
    working = t.get("working_temperature_K")
    estimated = bool(est.get("temperature_K"))
    if energy:
        temp_text = "no excitation temperature on an energy axis (X-ray lines)"
    elif estimated:
        temp_text = (
            f"{est['temperature_K']:,.0f} ± {est['uncertainty_K']:,.0f} K estimated from "
            f"{est['n_lines']} {est['species']} lines (Boltzmann plot, R² "
            f"{est['r_squared']:.2f}), used for expected intensities"
        )
    elif t.get("given_K"):
        temp_text = f"{float(t['given_K']):,.0f} K as given"
    else:
        temp_text = f"{float(working or 0):,.0f} K assumed (no estimate from these data)"
    cal = report.get("calibration") or {}
    applied = bool(cal.get("applied"))
    if not cal:
        cal_text = "scale not checked"
    elif applied:
        cal_text = "scale correction applied"
    else:
        cal_text = "scale checked, no correction applied"
    return ResultSummary(
        unit=str(inp["unit"]),
        axis=str(inp.get("axis")),
        medium=inp.get("medium"),
        n_peaks=int(s["n_peaks"]),
        n_assigned=int(s["n_assigned"]),
        n_shared=int(s["n_shared"]),
        n_unassigned=int(s["n_unassigned"]),
        by_verdict={k: list(v) for k, v in (s.get("by_verdict") or {}).items()},
        working_temperature_K=None if energy else (float(working) if working else None),
        temperature_estimated=estimated and not energy,
        temperature_text=temp_text,
        calibration_text=cal_text,
        calibration_applied=applied,
    )


def verdict_basis(el: Mapping[str, Any]) -> str:
    """Why a species has its class, when that is not its own evidence; else ``""``.

    A stage raised by pooling its element's ion stages
    (:mod:`workbench.matching.pooling`; ``own_verdict`` set) shows its own
    small net evidence beside a class it did not earn alone; every face
    says so in these words, e.g. ``"pooled with Ca II: 3.6 dex; alone
    possible, 0.7 dex"``.
    """
    own = el.get("own_verdict")
    if not own:
        return ""
    others = " + ".join(str(s) for s in el.get("pooled_with") or []) or "its other stages"
    pooled = el.get("pooled_evidence_dex")
    pooled_txt = f": {float(pooled):.1f} dex" if isinstance(pooled, int | float) else ""
    alone = el.get("net_evidence_dex")
    alone_txt = f", {float(alone):.1f} dex" if isinstance(alone, int | float) else ""
    return f"pooled with {others}{pooled_txt}; alone {own}{alone_txt}"


def element_rows(report: Mapping[str, Any], *, include_unsupported: bool) -> list[dict[str, Any]]:
    """Element grid rows with human column headers (units in the headers).

    Rows keep the engine's order (strongest verdict first). The hidden key
    ``species`` of each row is the first column so a selection maps back.
    """
    u = report["input"]["unit"]
    out: list[dict[str, Any]] = []
    for el in report.get("elements") or []:
        if not include_unsupported and el["verdict_level"] <= 0:
            continue
        best = sorted(el.get("matched_lines") or [], key=lambda m: -(m.get("expected_rel") or 0))
        out.append(
            {
                "Species": el["species"],
                "Verdict": el["verdict"],
                "Score": round(float(el["score"]), 3),
                "Strong lines found": f"{el['n_strong_found']} of {el['n_strong_in_range']}",
                "Unique lines": int(el["n_unique_found"]),
                "Missing lines": len(el.get("missing_lines") or []),
                "Shared lines": len(el.get("shared_lines") or []),
                "Pattern r": "–" if el.get("pattern_r") is None else f"{el['pattern_r']:.3f}",
                f"Strongest matched ({u})": ", ".join(
                    format_position(m.get(f"reference_{u}"), u) for m in best[:3]
                ),
                # Blank where the class is the species' own; else its basis (pooled stages).
                "Class note": verdict_basis(el),
            }
        )
    return out


def evidence_rows(
    report: Mapping[str, Any], species: str
) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Matched and missing lines of one species with human headers."""
    u = report["input"]["unit"]
    el = next((e for e in report.get("elements") or [] if e["species"] == species), None)
    if el is None:
        return [], []
    matched = [
        {
            f"Observed ({u})": format_position(m.get(f"observed_{u}"), u),
            f"Reference ({u})": format_position(m.get(f"reference_{u}"), u),
            f"Difference ({u})": (
                f"{m.get(f'delta_{u}'):+.0f}" if u == "eV" else f"{m.get(f'delta_{u}'):+.4f}"
            ),
            "Expected relative intensity": _round(m.get("expected_rel")),
            "Observed relative intensity": _round(m.get("observed_rel")),
            "Shared with another species": "yes" if m.get("shared") else "no",
            "Line": m.get("line_id") or "",
        }
        for m in el.get("matched_lines") or []
    ]
    missing = [
        {
            f"Reference ({u})": format_position(m.get(f"reference_{u}"), u),
            "Expected relative intensity": _round(m.get("expected_rel")),
            "Line": m.get("line_id") or "",
        }
        for m in el.get("missing_lines") or []
    ]
    return matched, missing


def unassigned_rows(report: Mapping[str, Any]) -> list[dict[str, Any]]:
    """Observed lines not assigned to exactly one species, with human headers."""
    u = report["input"]["unit"]
    return [
        {
            f"Observed ({u})": format_position(ln[f"observed_{u}"], u),
            "Status": ln["status"],
            "Assigned to": ", ".join(ln.get("assigned_to") or []) or "–",
            "Candidates in window": int(ln.get("n_candidates") or 0),
        }
        for ln in report.get("lines") or []
        if ln["status"] != "assigned"
    ]


def _round(v: Any, nd: int = 3) -> float | None:
    return round(float(v), nd) if isinstance(v, int | float) and math.isfinite(v) else None


def element_levels(report: Mapping[str, Any]) -> dict[str, dict[str, Any]]:
    """Best verdict per element: ``{symbol: {"level", "verdict", "species"}}``, by symbol.

    An element seen in several ion stages (or X-ray families) keeps its
    strongest verdict and lists every species.
    """
    out: dict[str, dict[str, Any]] = {}
    for el in report.get("elements") or []:
        sym = el.get("element")
        level = el.get("verdict_level")
        if not isinstance(sym, str) or not isinstance(level, int | float):
            continue
        cur = out.setdefault(sym, {"level": level, "verdict": el.get("verdict"), "species": []})
        cur["species"].append(el.get("species") or sym)
        if level > cur["level"]:
            cur["level"], cur["verdict"] = level, el.get("verdict")
    return dict(sorted(out.items()))


# ----------------------------------------------------------------------------- warnings


def interference_groups(report: Mapping[str, Any]) -> list[InterferenceGroup]:
    """Interference warnings grouped by the observed line they concern.

    Groups touching a species called probable or better come first, then by
    position; a reference-only overlap (no observed line) is its own group.
    """
    levels = {e["species"]: int(e["verdict_level"]) for e in report.get("elements") or []}
    groups: dict[Any, dict[str, Any]] = {}
    for k, w in enumerate(report.get("warnings") or []):
        if w.get("kind") not in INTERFERENCE_KINDS:
            continue
        obs = w.get("observed")
        key: Any = round(float(obs), 9) if isinstance(obs, int | float) else ("pair", k)
        g = groups.setdefault(key, {"pos": obs, "species": set(), "idx": [], "msg": []})
        g["species"].update(str(s) for s in w.get("elements") or [])
        g["idx"].append(k)
        g["msg"].append(str(w.get("message", "")))
    out = []
    for g in groups.values():
        pos = float(g["pos"]) if isinstance(g["pos"], int | float) else None
        sp = tuple(sorted(g["species"]))
        touches = any(levels.get(s, 0) >= PROBABLE_LEVEL for s in sp)
        out.append(InterferenceGroup(pos, sp, tuple(g["idx"]), tuple(g["msg"]), touches))
    big = math.inf
    out.sort(key=lambda g: (not g.touches_probable, g.position if g.position is not None else big))
    return out


def observed_interference_lines(report: Mapping[str, Any]) -> list[str]:
    """Wavelength-axis overlaps grouped by observed line, one line each (CLI text).

    The engine warns per *pair* of species whose lines share an observed
    line's window; where many species have a line there, the pairs grow as
    n(n − 1)/2 (36 warnings for nine species at Ca I 422.67 nm, 148 in a
    five-gas arc), most of them between species nobody calls. A reader wants
    the line once: the best-supported species there, the others with the
    resolving power that would separate each from it, and their classes.
    Each pair's message, with the lines that would settle it, stays in the
    JSON and in the app. Empty on the energy axis (see
    :func:`workbench.matching.xrf_view.interference_lines`).
    """
    if report.get("xray"):
        return []
    unit = report["input"]["unit"]
    by_species = {str(e["species"]): e for e in report.get("elements") or []}
    warnings = report.get("warnings") or []
    out = []
    for g in interference_groups(report):
        if g.position is None:
            continue
        ref: dict[str, float] = {}
        need: dict[frozenset[str], float] = {}
        for k in g.warning_indices:
            w = warnings[k]
            names = [str(x) for x in w.get("elements") or []]
            for name, pos in zip(names, w.get("positions") or [], strict=False):
                if isinstance(pos, int | float):
                    ref.setdefault(name, float(pos))
            r = w.get("resolving_power_needed")
            if len(names) == 2 and isinstance(r, int | float):
                need[frozenset(names)] = float(r)

        def level(sp: str) -> int:
            return int((by_species.get(sp) or {}).get("verdict_level") or 0)

        ranked = sorted(g.species, key=lambda sp: (-level(sp), sp))
        best = ranked[0]

        def named(sp: str, ref: dict[str, float] = ref) -> str:
            el = by_species.get(sp) or {}
            mark = "*" if verdict_basis(el) else ""
            pos = f" {format_position(ref[sp], unit)}" if sp in ref else ""
            return f"{sp}{pos} ({el.get('verdict', 'not listed')}{mark})"

        others = []
        for sp in ranked[1:]:
            r = need.get(frozenset((best, sp)))
            others.append(named(sp) + (f" R ≥ {r:,.0f}" if r is not None else ""))
        line = f"{format_position(g.position, unit)} {unit}: {named(best)}"
        if others:
            line += " with " + ", ".join(others)
        out.append(line)
    return out


def overlap_text(
    warning: Mapping[str, Any], unit: str, xray: Mapping[str, Any] | None = None
) -> str:
    """One line for an interference warning, positions and separation in the axis unit.

    With the result's ``xray`` record (energy axis) the separation is stated
    against the detector's FWHM there ("resolved / unresolved at this
    detector") and the spectrum fit's decision, if any, is added.
    """
    sp = " / ".join(str(s) for s in warning.get("elements") or []) or "two species"
    positions = [p for p in warning.get("positions") or [] if isinstance(p, int | float)]
    pos = [format_position(p, unit) for p in positions]
    where = " and ".join(pos) + f" {unit}" if pos else ""
    sep = warning.get("separation")
    gap = f", {format_position(sep, unit)} {unit} apart" if isinstance(sep, int | float) else ""
    need = warning.get("resolving_power_needed")
    res = ""
    if unit != "eV" and isinstance(need, int | float) and math.isfinite(need):
        res = f" (separating them needs R ≥ {need:,.0f})"
    elif xray and isinstance(sep, int | float) and positions:
        from workbench.matching.xrf_view import decision_text, detector_overlap_text

        # Families are named sorted, lines in the engine's order: one energy for both.
        mid = sum(positions) / len(positions)
        where = f"{format_position(mid, unit)} {unit}"
        gap = ": " + detector_overlap_text(sep, mid, xray)
        settled = decision_text(warning.get("decision"))
        res = f"; {settled}" if settled else ""
    lead = "lines near" if xray and unit == "eV" else "lines at"
    return f"{sp}: {lead} {where}{gap}{res}".replace(f": {lead}  ", ": ")


def other_warnings(report: Mapping[str, Any]) -> list[tuple[int, str, str]]:
    """Non-interference warnings as ``(index, kind, message)``.

    None about temperature on XRF, and no ``overlap_ruled_out`` note (those
    are listed together by :func:`workbench.matching.xrf_view.ruled_out_lines`).
    """
    energy = report["input"].get("axis") == "energy"
    out = []
    for k, w in enumerate(report.get("warnings") or []):
        kind = str(w.get("kind"))
        if kind in INTERFERENCE_KINDS or (energy and kind in ("temperature", "lte")):
            continue
        if kind == "overlap_ruled_out":  # X-ray: shown together (xrf_view.ruled_out_lines)
            continue
        out.append((k, kind, str(w.get("message", ""))))
    return out


def warning_species(report: Mapping[str, Any], warning_index: int) -> list[str]:
    """The species a warning names (the tracks its "Show" draws)."""
    warnings = report.get("warnings") or []
    if not 0 <= warning_index < len(warnings):
        return []
    return sorted(str(s) for s in warnings[warning_index].get("elements") or [])
