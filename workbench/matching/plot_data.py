"""Plot data of a match result: stick spectra, reference lines, zoom and marked spans.

What the side-by-side stick plot draws, as plain Python values: the
observed lines as sticks scaled to the strongest, each listed species'
reference lines with their expected strength, the spans of interference
warnings to shade, a zoom range around a warning, and the Boltzmann-plot
fit line. Like :mod:`workbench.matching.presentation` (tables, summaries,
warning groups; it re-exports these names), nothing here decides anything.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any, TypedDict

import numpy as np

__all__ = [
    "INTERFERENCE_KINDS",
    "ObservedStick",
    "ReferenceLine",
    "boltzmann_fit_line",
    "interference_spans",
    "observed_sticks",
    "reference_lines",
    "report_reference_lines",
    "zoom_range",
]

#: Warning kinds that are interferences (grouped by observed line, marked on the plot).
INTERFERENCE_KINDS: frozenset[str] = frozenset({"unresolved_overlap", "reference_overlap"})


class ObservedStick(TypedDict):
    """One observed line as a stick: position, height relative to the strongest (0–1)."""

    position: float
    height: float
    status: str
    assigned_to: str


class ReferenceLine(TypedDict):
    """One reference line of a species with its expected strength relative to the species' top."""

    species: str
    ion_stage: str
    position: float
    expected_rel: float
    line_id: str
    transition: str | None


def _warning_positions(w: Mapping[str, Any], u: str) -> list[float]:
    pos = [float(p) for p in (w.get("positions") or []) if isinstance(p, int | float)]
    for key in ("observed", f"observed_{u}"):
        if isinstance(w.get(key), int | float):
            pos.append(float(w[key]))
    return [p for p in pos if math.isfinite(p)]


def interference_spans(report: Mapping[str, Any]) -> list[tuple[float, float, str]]:
    """Position spans of the interference warnings, padded by the median match window."""
    u = report["input"]["unit"]
    lines = report.get("lines") or []
    tol = [ln.get(f"tolerance_{u}") for ln in lines if ln.get(f"tolerance_{u}")]
    pad = float(np.median(tol)) if tol else 0.0
    spans = []
    for w in report.get("warnings") or []:
        if w.get("kind") not in INTERFERENCE_KINDS:
            continue
        pos = _warning_positions(w, u)
        if pos:
            label = " / ".join(str(s) for s in w.get("elements") or [])
            spans.append((min(pos) - pad, max(pos) + pad, label))
    return spans


def zoom_range(
    report: Mapping[str, Any], *, species: str | None = None, warning_index: int | None = None
) -> tuple[float, float] | None:
    """X range showing one species' matched and missing lines, or one warning's lines."""
    u = report["input"]["unit"]
    pos: list[float] = []
    if species is not None:
        for el in report.get("elements") or []:
            if el["species"] == species:
                pos += [float(m[f"reference_{u}"]) for m in el.get("matched_lines") or []]
                pos += [float(m[f"observed_{u}"]) for m in el.get("matched_lines") or []]
                pos += [float(m[f"reference_{u}"]) for m in el.get("missing_lines") or []]
    if warning_index is not None:
        warnings = report.get("warnings") or []
        if 0 <= warning_index < len(warnings):
            pos += _warning_positions(warnings[warning_index], u)
            lines = report.get("lines") or []
            tol = [ln.get(f"tolerance_{u}") for ln in lines if ln.get(f"tolerance_{u}")]
            if tol and pos:
                # A warning's lines sit within one window: show a few windows around them.
                pad = 4.0 * float(np.median(tol))
                pos += [min(pos) - pad, max(pos) + pad]
    pos = [p for p in pos if math.isfinite(p)]
    if not pos:
        return None
    lo, hi = min(pos), max(pos)
    pad = max(0.05 * (hi - lo), 2e-4 * max(abs(hi), 1e-9), 1e-6)
    if hi - lo < 1e-3 * max(abs(hi), 1e-9):
        pad = max(pad, 2e-3 * max(abs(hi), 1e-9))
    return lo - pad, hi + pad


# ----------------------------------------------------------------------------- sticks


def observed_sticks(report: Mapping[str, Any]) -> list[ObservedStick]:
    """Observed lines as sticks (height = intensity / strongest; 1 when unknown).

    On an energy axis the strongest includes the labelled artefact peaks, so
    that sticks and artefact marks (:func:`workbench.matching.xrf_view.artefact_marks`)
    share one scale.
    """
    u = report["input"]["unit"]
    lines = report.get("lines") or []
    if report.get("xray"):
        from workbench.matching.xrf_view import artefact_top

        top = artefact_top(report)
    else:
        inten = [ln.get("intensity") for ln in lines]
        finite = [abs(v) for v in inten if isinstance(v, int | float) and math.isfinite(v)]
        top = max(finite) if finite else 0.0
    out: list[ObservedStick] = []
    for ln in lines:
        v = ln.get("intensity")
        ok = isinstance(v, int | float) and math.isfinite(v) and top > 0
        out.append(
            {
                "position": float(ln[f"observed_{u}"]),
                "height": float(abs(v) / top) if ok else 1.0,
                "status": str(ln.get("status")),
                "assigned_to": ", ".join(ln.get("assigned_to") or []),
            }
        )
    return out


def reference_lines(
    result: Any, species: Sequence[str], min_rel: float = 0.01
) -> list[ReferenceLine]:
    """Reference lines of the chosen species in the observed range, with expected strengths.

    Strengths are the engine's (``result.evidence.strengths``), normalised to
    the strongest in-range line of each species.

    Parameters
    ----------
    result : MatchResult
        The engine's result.
    species : sequence of str
        Species labels (``"Fe I"``, ``"Pb L"``).
    min_rel : float
        Lines weaker than this fraction of the species' strongest are left out.

    Returns
    -------
    list of ReferenceLine
    """
    idx = result.index
    ev = result.evidence
    names = list(idx.species_names)
    code_of = {n: i for i, n in enumerate(names)}
    base = ev.in_range & np.isfinite(ev.strengths)
    out: list[ReferenceLine] = []
    for sp in species:
        code = code_of.get(sp)
        if code is None:
            continue
        sel = base & (idx.species == code)
        if not np.any(sel):
            continue
        top = float(np.max(ev.strengths[sel]))
        if top <= 0:
            continue
        fam = idx.species_family[code]
        stage = fam if fam else (sp.split(" ", 1)[1] if " " in sp else str(idx.species_ion[code]))
        for i in np.flatnonzero(sel).tolist():
            rel = float(ev.strengths[i]) / top
            if rel < min_rel:
                continue
            out.append(
                {
                    "species": sp,
                    "ion_stage": str(stage),
                    "position": float(idx.position[i]),
                    "expected_rel": rel,
                    "line_id": str(idx.line_id[i]),
                    "transition": idx.transition[i],
                }
            )
    return out


def report_reference_lines(
    report: Mapping[str, Any], species: Sequence[str]
) -> list[ReferenceLine]:
    """Reference lines of the chosen species as a saved report lists them (matched + missing).

    Same shape as :func:`reference_lines`; strengths are the report's
    ``expected_rel`` rescaled to the strongest listed line of each species.
    """
    u = report["input"]["unit"]
    out: list[ReferenceLine] = []
    wanted = set(species)
    for el in report.get("elements") or []:
        sp = el.get("species")
        if sp not in wanted:
            continue
        listed = list(el.get("matched_lines") or []) + list(el.get("missing_lines") or [])
        rel = [m.get("expected_rel") for m in listed]
        top = max((float(v) for v in rel if isinstance(v, int | float) and v > 0), default=0.0)
        stage = el.get("family") or (sp.split(" ", 1)[1] if " " in sp else "")
        seen: set[str] = set()
        for m, r in zip(listed, rel, strict=True):
            pos = m.get(f"reference_{u}")
            key = str(m.get("line_id") or pos)
            if not isinstance(pos, int | float) or key in seen:
                continue
            seen.add(key)
            out.append(
                {
                    "species": str(sp),
                    "ion_stage": str(stage),
                    "position": float(pos),
                    "expected_rel": float(r) / top if top and isinstance(r, int | float) else 1.0,
                    "line_id": str(m.get("line_id") or ""),
                    "transition": m.get("transition"),
                }
            )
    return out


def boltzmann_fit_line(report: Mapping[str, Any]) -> tuple[list[float], list[float]] | None:
    """End points of the engine's fitted Boltzmann line over the range of its points.

    The line is ``y = intercept + slope_per_eV · E`` with the engine's slope
    and intercept (``temperature.estimate.plot``); nothing is fitted here.
    ``None`` when the report carries no fit.
    """
    est = (report.get("temperature") or {}).get("estimate") or {}
    plot = est.get("plot") or {}
    x = [float(v) for v in plot.get("E_upper_eV") or []]
    slope, intercept = plot.get("slope_per_eV"), plot.get("intercept")
    if len(x) < 2 or not isinstance(slope, int | float) or not isinstance(intercept, int | float):
        return None
    if not (math.isfinite(slope) and math.isfinite(intercept)):
        return None
    x0, x1 = min(x), max(x)
    return [x0, x1], [float(intercept) + float(slope) * x0, float(intercept) + float(slope) * x1]
