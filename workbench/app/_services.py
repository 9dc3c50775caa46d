"""Thin glue between the Streamlit pages and the library.

The pages call only these functions and the library itself; no physics,
matching or store logic lives here either — each function reads, reshapes
or forwards. The peak-table edit record (:func:`peak_edits`,
:func:`apply_peak_edits`) is plain bookkeeping of what the user changed.
"""

from __future__ import annotations

import argparse
import contextlib
import math
import os
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from workbench.errors import InputError, ValueRangeError

__all__ = [
    "INTERFERENCE_KINDS",
    "LoadedInput",
    "StoredOutcome",
    "analysis_parameters",
    "analysis_report",
    "apply_peak_edits",
    "boltzmann_fit_line",
    "chain_status",
    "collections_root",
    "draft_key",
    "draft_sheet",
    "element_levels",
    "interference_spans",
    "latest_analysis",
    "load_input",
    "md_escape",
    "observed_sticks",
    "open_store",
    "parse_ratios",
    "parse_year",
    "peak_edits",
    "reference_lines",
    "reopen_analysis",
    "report_reference_lines",
    "run_matching",
    "save_analysis",
    "store_root_from_argv",
    "table_rows",
    "zoom_range",
]

#: Warning kinds that are interferences (shown as errors, shaded on the stick plot).
INTERFERENCE_KINDS: frozenset[str] = frozenset({"unresolved_overlap", "reference_overlap"})


def md_escape(text: Any) -> str:
    """Escape Markdown so that user text shows literally in headings and captions."""
    out = []
    for ch in "" if text is None else str(text):
        out.append("\\" + ch if ch in "\\`*_{}[]()<>#+-.!|~$:" else ch)
    return "".join(out)


# ----------------------------------------------------------------------------- store


def store_root_from_argv(argv: Sequence[str]) -> Path | None:
    """Return the ``--store PATH`` given to the app script, if any (other args ignored)."""
    p = argparse.ArgumentParser(add_help=False)
    p.add_argument("--store", type=Path, default=None)
    known, _ = p.parse_known_args(list(argv))
    return known.store


def resolve_root(explicit: Path | str | None) -> Path:
    """The store directory: explicit, else ``$WORKBENCH_STORE``, else the repo default."""
    from workbench.casefile.store import resolve_store_root

    return resolve_store_root(explicit)


@contextlib.contextmanager
def open_store(root: Path | str | None) -> Iterator[Any]:
    """Open the case store for one script run (SQLite connections stay in one thread)."""
    from workbench.casefile.store import CaseStore

    store = CaseStore.open(root)
    try:
        yield store
    finally:
        store.close()


def chain_status(store: Any, case_number: str) -> dict[str, Any]:
    """Integrity state of a case: ``ok``, per-item first break, and all break lines.

    Returns
    -------
    dict
        ``{"ok": bool, "items": {item_number: {"seq": int|None, "text": str}},
        "breaks": [str], "signature_check": str}``.
    """
    rep = store.verify(case_number)
    items: dict[str, dict[str, Any]] = {}
    for b in rep.breaks:
        key = str(b.item_number) if b.item_number else ""
        if key not in items:
            items[key] = {"seq": b.seq, "text": b.describe()}
    return {
        "ok": bool(rep.ok),
        "items": items,
        "breaks": [b.describe() for b in rep.breaks],
        "signature_check": rep.signature_check,
    }


# ----------------------------------------------------------------------------- input


@dataclass
class LoadedInput:
    """An input read for the app: the original bytes and what the readers made of them."""

    data: bytes
    name: str
    options: dict[str, Any]
    peaks: Any  # PeakList (as detected or read, before edits)
    spectrum: Any = None  # Spectrum or None
    notes: tuple[str, ...] = ()
    mapping: dict[str, Any] = field(default_factory=dict)

    @property
    def sha256(self) -> str:
        """SHA-256 of the original bytes."""
        return str(self.peaks.source.sha256) if self.peaks.source else ""


def load_input(
    data: bytes,
    name: str,
    *,
    unit: str | None = None,
    medium: str | None = None,
    kind: str | None = None,
    mode: str = "emission",
    min_snr: float | None = None,
) -> LoadedInput:
    """Read a file or pasted text; find peaks when it is a spectrum.

    Parameters
    ----------
    data : bytes
        Exactly what was uploaded or pasted.
    name : str
        File name (or ``"<pasted>"``).
    unit, medium, kind : str, optional
        Overrides for the reader (``None`` lets it decide and say so in the notes).
    mode : {"emission", "absorption"}
        Peaks or dips.
    min_snr : float, optional
        Peak-finding threshold (σ) for spectra.

    Returns
    -------
    LoadedInput
    """
    from workbench.datamodel import Spectrum
    from workbench.io import read_any
    from workbench.peaks import find_peaks

    if not data:
        raise InputError(f"{name}: nothing to read (0 bytes)", "upload a file or paste a table")
    kw: dict[str, Any] = {"name": name, "unit": unit or None, "medium": medium or None}
    if kind:
        kw["kind"] = kind
    got = read_any(bytes(data), mode=mode, **kw)
    options = {"unit": unit or None, "medium": medium or None, "kind": kind or None, "mode": mode}
    if isinstance(got, Spectrum):
        pk: dict[str, Any] = {"mode": mode}
        if min_snr:
            pk["min_snr"] = float(min_snr)
            options["min_snr"] = float(min_snr)
        peaks = find_peaks(got, **pk)
        notes = got.source.notes if got.source else ()
        return LoadedInput(bytes(data), name, options, peaks, got, tuple(notes), {})
    notes = got.source.notes if got.source else ()
    mapping = dict(got.extra.get("mapping") or {}) if isinstance(got.extra, dict) else {}
    return LoadedInput(bytes(data), name, options, got, None, tuple(notes), mapping)


def _plain(v: Any) -> Any:
    if isinstance(v, np.generic):
        v = v.item()
    if isinstance(v, float) and not math.isfinite(v):
        return None
    return v


def table_rows(table: Any) -> list[dict[str, Any]]:
    """Rows of a polars or pandas table as plain dicts (NaN → None)."""
    if hasattr(table, "to_dicts"):
        rows = table.to_dicts()
    else:
        rows = table.to_dict(orient="records")
    return [{str(k): _plain(v) for k, v in r.items()} for r in rows]


def _same(a: Any, b: Any) -> bool:
    a, b = _plain(a), _plain(b)
    if a is None or b is None:
        return a is None and b is None
    if isinstance(a, float) or isinstance(b, float):
        try:
            return float(a) == float(b)
        except (TypeError, ValueError):
            return False
    return a == b


def peak_edits(
    original: Sequence[Mapping[str, Any]], editor_state: Mapping[str, Any] | None
) -> list[dict[str, Any]]:
    """Turn a data-editor state into an explicit edit list with old and new values.

    Parameters
    ----------
    original : sequence of mapping
        The rows shown in the editor (row numbers are 1-based positions in it).
    editor_state : mapping or None
        Streamlit's ``{"edited_rows": {pos: {col: new}}, "added_rows": [...],
        "deleted_rows": [pos, ...]}``.

    Returns
    -------
    list of dict
        In a fixed order: changes (by row, then column), deletions (by row),
        additions (in the order added). Each is ``{"action": "changed", "row",
        "column", "old", "new"}``, ``{"action": "deleted", "row", "old": {row}}``
        or ``{"action": "added", "new": {row}}``. A change back to the old value
        is not an edit.
    """
    state = editor_state or {}
    edits: list[dict[str, Any]] = []
    deleted = sorted({int(i) for i in state.get("deleted_rows", []) or []})
    for pos in sorted(int(k) for k in (state.get("edited_rows") or {})):
        if pos in deleted or not 0 <= pos < len(original):
            continue
        changes = (state.get("edited_rows") or {}).get(pos)
        if changes is None:
            changes = (state.get("edited_rows") or {}).get(str(pos), {})
        for col in sorted(changes):
            old = original[pos].get(col)
            new = _plain(changes[col])
            if not _same(old, new):
                edits.append(
                    {"action": "changed", "row": pos + 1, "column": col, "old": old, "new": new}
                )
    for pos in deleted:
        if 0 <= pos < len(original):
            edits.append({"action": "deleted", "row": pos + 1, "old": dict(original[pos])})
    for row in state.get("added_rows", []) or []:
        clean = {str(k): _plain(v) for k, v in row.items() if not str(k).startswith("_")}
        if any(v is not None for v in clean.values()):
            edits.append({"action": "added", "new": clean})
    return edits


def apply_peak_edits(peaks: Any, edits: Sequence[Mapping[str, Any]]) -> Any:
    """Apply an edit list to a peak list and return the corrected PeakList.

    Rows are renumbered and sorted by position afterwards; a row whose
    position is empty, non-numeric or not positive is refused, naming it.

    Parameters
    ----------
    peaks : PeakList
        The list as read or detected (the edits' row numbers refer to it).
    edits : sequence of mapping
        From :func:`peak_edits`.

    Returns
    -------
    PeakList
        Same axis, medium, source and mode; ``extra["peak_edits"]`` holds the count.
    """
    import polars as pl

    from workbench.datamodel import PeakList

    if not edits:
        return peaks
    original = table_rows(peaks.table)
    columns = list(peaks.table.columns)
    rows: list[dict[str, Any] | None] = [dict(r) for r in original]
    labels = [f"row {i + 1}" for i in range(len(rows))]
    for e in edits:
        if e["action"] == "changed":
            r = rows[int(e["row"]) - 1]
            if r is not None:
                r[str(e["column"])] = e["new"]
    for e in edits:
        if e["action"] == "deleted":
            rows[int(e["row"]) - 1] = None
    added = 0
    for e in edits:
        if e["action"] == "added":
            added += 1
            rows.append({c: e["new"].get(c) for c in columns})
            labels.append(f"added row {added}")
    pos_col = peaks.position_column
    kept: list[dict[str, Any]] = []
    for r, label in zip(rows, labels, strict=True):
        if r is None:
            continue
        v = r.get(pos_col)
        try:
            fv = float(v) if v is not None else math.nan
        except (TypeError, ValueError):
            fv = math.nan
        if not math.isfinite(fv) or fv <= 0:
            raise ValueRangeError(
                f"peak table {label}: column {pos_col!r} is {v!r}",
                f"enter a positive {pos_col} or delete the row",
            )
        kept.append(r)
    if not kept:
        raise ValueRangeError("every peak was deleted", "keep at least one observed line")
    schema = {c: peaks.table.schema[c] for c in columns}
    cleaned: dict[str, list[Any]] = {c: [r.get(c) for r in kept] for c in columns}
    for c in columns:
        if schema[c] == pl.Boolean:
            cleaned[c] = [bool(v) if v is not None else None for v in cleaned[c]]
        elif schema[c].is_numeric():
            vals = []
            for i, v in enumerate(cleaned[c]):
                try:
                    vals.append(float(v) if v is not None else None)
                except (TypeError, ValueError) as exc:
                    raise ValueRangeError(
                        f"peak table: column {c!r} has the non-numeric value {v!r} "
                        f"(row {i + 1} after edits)",
                        "enter a number or leave the cell empty",
                    ) from exc
            cleaned[c] = vals
    table = pl.DataFrame(cleaned, schema=schema).sort(pos_col)
    extra = {k: v for k, v in peaks.extra.items() if k != "baseline"}
    extra["peak_edits"] = len(edits)
    return PeakList(table, peaks.axis, peaks.medium, peaks.source, peaks.mode, extra)


# ----------------------------------------------------------------------------- matching


def build_parameters(
    *,
    tolerance_kind: str,
    tolerance_value: float,
    temperature_K: float | None,
    mode: str,
    elements: Sequence[str] | None = None,
    apply_calibration: bool = False,
) -> Any:
    """MatchParameters from the page's controls (validation is the library's)."""
    from workbench.matching import MatchParameters, ToleranceSpec

    return MatchParameters(
        tolerance=ToleranceSpec(tolerance_kind, float(tolerance_value)),  # type: ignore[arg-type]
        temperature_K=float(temperature_K) if temperature_K else None,
        elements=tuple(sorted(set(elements))) if elements else None,
        mode=mode,  # type: ignore[arg-type]
        apply_calibration=apply_calibration,
    )


def run_matching(peaks: Any, set_ids: Sequence[str], params: Any, spectrum: Any = None) -> Any:
    """Match a (possibly edited) peak list; returns the library's AnalysisOutcome."""
    from workbench.matching.analyse import analyse_peaks

    if not set_ids:
        raise InputError("no reference set chosen", "choose at least one reference set")
    return analyse_peaks(peaks, list(set_ids), params, spectrum=spectrum)


def analysis_parameters(
    params: Any,
    read_options: Mapping[str, Any],
    original_rows: Sequence[Mapping[str, Any]],
    edits: Sequence[Mapping[str, Any]],
    set_ids: Sequence[str],
) -> dict[str, Any]:
    """What is needed to redo the analysis: engine settings, reading, peak table and edits.

    The peak table as read (or detected) always travels as its row count and
    the SHA-256 of its rows' canonical JSON. Its rows themselves are kept when
    the user edited it (the edits refer to them); without edits the table is
    exactly what the stored file gives with the recorded reading options, so
    the digest is enough to check a re-run and the record stays small.
    """
    import hashlib
    import json

    rows = [dict(r) for r in original_rows]
    digest = hashlib.sha256(
        json.dumps(rows, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode()
    ).hexdigest()
    table: dict[str, Any] = {
        "n_rows": len(rows),
        "rows_sha256": digest,
        "edits": [dict(e) for e in edits],
        "n_edits": len(edits),
    }
    if edits:
        table["original_rows"] = rows
    return {
        "engine": params.to_dict(),
        "reference_set_ids": list(set_ids),
        "reading": {k: v for k, v in dict(read_options).items()},
        "peak_table": table,
    }


def save_analysis(
    store: Any, measurement_id: int, outcome: Any, parameters: dict[str, Any], analyst: str
) -> Any:
    """Store the analysis of a stored measurement (exact JSON bytes, parameters with edits)."""
    from workbench import __version__

    return store.add_analysis(
        int(measurement_id),
        parameters=parameters,
        reference_sets=list(outcome.report.get("reference_sets") or []),
        result_json=outcome.json_bytes,
        software_version=__version__,
        analyst=analyst,
    )


def observed_sticks(report: Mapping[str, Any]) -> list[dict[str, Any]]:
    """Observed lines of a report as sticks (height = intensity / strongest; 1 when unknown)."""
    u = report["input"]["unit"]
    lines = report.get("lines") or []
    inten = [ln.get("intensity") for ln in lines]
    finite = [abs(v) for v in inten if v is not None and math.isfinite(v)]
    top = max(finite) if finite else 0.0
    out = []
    for ln in lines:
        v = ln.get("intensity")
        h = abs(v) / top if (v is not None and top > 0) else 1.0
        out.append(
            {
                "position": float(ln[f"observed_{u}"]),
                "height": float(h),
                "status": ln.get("status"),
                "assigned_to": ", ".join(ln.get("assigned_to") or []),
            }
        )
    return out


def reference_lines(
    result: Any, species: Sequence[str], min_rel: float = 0.01
) -> list[dict[str, Any]]:
    """Reference lines of the chosen species in the observed range, with expected strengths.

    Strengths are the engine's (``result.evidence.strengths``), normalised
    to the strongest in-range line of each species.

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
    list of dict
        ``species``, ``ion_stage``, ``position``, ``expected_rel``, ``line_id``, ``transition``.
    """
    idx = result.index
    ev = result.evidence
    names = list(idx.species_names)
    out: list[dict[str, Any]] = []
    for sp in species:
        if sp not in names:
            continue
        code = names.index(sp)
        sel = (idx.species == code) & ev.in_range & np.isfinite(ev.strengths)
        if not np.any(sel):
            continue
        s = ev.strengths[sel]
        top = float(np.max(s)) if s.size else 0.0
        if top <= 0:
            continue
        ion = idx.species_ion[code]
        fam = idx.species_family[code]
        stage = fam if fam else (sp.split(" ", 1)[1] if " " in sp else str(ion))
        for i in np.flatnonzero(sel).tolist():
            rel = float(ev.strengths[i]) / top
            if rel < min_rel:
                continue
            out.append(
                {
                    "species": sp,
                    "ion_stage": stage,
                    "position": float(idx.position[i]),
                    "expected_rel": rel,
                    "line_id": str(idx.line_id[i]),
                    "transition": idx.transition[i],
                }
            )
    return out


@dataclass(frozen=True)
class StoredOutcome:
    """A saved analysis re-opened for display: the stored result, no live engine objects.

    ``result`` is always ``None`` (the page then takes reference lines from
    the report); ``json_bytes`` are the stored bytes exactly.
    """

    analysis_id: int
    case_number: str
    item_number: str
    analyst: str
    created_at: str
    report: dict[str, Any]
    json_bytes: bytes
    result: Any = None


def reopen_analysis(store: Any, analysis_id: int) -> StoredOutcome:
    """Read a saved analysis for read-only display (its result bytes as stored)."""
    a = store.get_analysis(int(analysis_id))
    return StoredOutcome(
        analysis_id=int(a.id),
        case_number=str(a.case_number),
        item_number=str(a.item_number),
        analyst=str(a.analyst),
        created_at=str(a.created_at),
        report=analysis_report(a),
        json_bytes=bytes(a.result_json),
    )


def report_reference_lines(
    report: Mapping[str, Any], species: Sequence[str]
) -> list[dict[str, Any]]:
    """Reference lines of the chosen species as a saved report lists them (matched + missing).

    The same shape as :func:`reference_lines`; the strengths are the report's
    ``expected_rel``, rescaled to the strongest listed line of each species.
    """
    u = report["input"]["unit"]
    out: list[dict[str, Any]] = []
    wanted = set(species)
    for el in report.get("elements") or []:
        sp = el.get("species")
        if sp not in wanted:
            continue
        listed = list(el.get("matched_lines") or []) + list(el.get("missing_lines") or [])
        rel = [m.get("expected_rel") for m in listed]
        top = max((float(v) for v in rel if isinstance(v, int | float) and v > 0), default=0.0)
        stage = sp.split(" ", 1)[1] if " " in sp else ""
        seen: set[str] = set()
        for m, r in zip(listed, rel, strict=True):
            pos = m.get(f"reference_{u}")
            key = str(m.get("line_id") or pos)
            if not isinstance(pos, int | float) or key in seen:
                continue
            seen.add(key)
            out.append(
                {
                    "species": sp,
                    "ion_stage": stage,
                    "position": float(pos),
                    "expected_rel": float(r) / top if top and isinstance(r, int | float) else 1.0,
                    "line_id": str(m.get("line_id") or ""),
                    "transition": m.get("transition"),
                }
            )
    return out


def _warning_positions(w: Mapping[str, Any], u: str) -> list[float]:
    pos = [float(p) for p in (w.get("positions") or []) if p is not None]
    obs = w.get("observed")
    if isinstance(obs, int | float):
        pos.append(float(obs))
    if isinstance(w.get(f"observed_{u}"), int | float):
        pos.append(float(w[f"observed_{u}"]))
    return pos


def interference_spans(report: Mapping[str, Any]) -> list[tuple[float, float, str]]:
    """Position spans of the interference warnings, padded by the match window."""
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
            spans.append((min(pos) - pad, max(pos) + pad, str(w.get("message", ""))))
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
    pos = [p for p in pos if math.isfinite(p)]
    if not pos:
        return None
    lo, hi = min(pos), max(pos)
    pad = max(0.05 * (hi - lo), 2e-4 * max(abs(hi), 1e-9), 1e-6)
    if hi - lo < 1e-3 * max(abs(hi), 1e-9):
        pad = max(pad, 2e-3 * max(abs(hi), 1e-9))
    return lo - pad, hi + pad


def boltzmann_fit_line(report: Mapping[str, Any]) -> tuple[list[float], list[float]] | None:
    """End points of the engine's fitted Boltzmann line over the range of its points.

    The line is ``y = intercept + slope_per_eV · E`` with the slope and
    intercept the engine fitted (``temperature.estimate.plot``); the app draws
    it and computes nothing. ``None`` when the report carries no fit (a result
    stored before the engine gave them, or no estimate).
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


# ----------------------------------------------------------------------------- findings


def draft_sheet(
    store: Any,
    analysis_id: int,
    *,
    lab: Mapping[str, Any],
    analyst_fingerprint: str,
    notes: str,
    limitations: str,
    issued_at: str | None = None,
) -> dict[str, Any]:
    """Unsigned sheet content of a stored analysis (the library's draft, shown before signing).

    The page signs this very content with
    :func:`workbench.findings.issue.sign_and_store_sheet`, so what was previewed
    is what is issued.
    """
    from workbench.findings.issue import draft_sheet_content

    return draft_sheet_content(
        store,
        int(analysis_id),
        analyst_fingerprint=analyst_fingerprint,
        lab=dict(lab),
        notes=notes,
        limitations=limitations,
        issued_at=issued_at,
    )


def draft_key(
    analysis_id: int, analyst_fingerprint: str, lab: Mapping[str, Any], notes: str, limitations: str
) -> tuple[Any, ...]:
    """What a draft was made from, to tell whether the form changed after the preview."""
    return (int(analysis_id), analyst_fingerprint, tuple(sorted(lab.items())), notes, limitations)


# ----------------------------------------------------------------------------- comparison


def latest_analysis(
    store: Any, case_number: str, measurement_ids: Sequence[int] | None = None
) -> Any:
    """The most recent stored analysis of a case (of the given measurements, if any), or None."""
    found = store.list_analyses(case_number)
    if measurement_ids is not None:
        wanted = {int(m) for m in measurement_ids}
        found = [a for a in found if a.measurement_id in wanted]
    return found[-1] if found else None


def analysis_report(analysis: Any) -> dict[str, Any]:
    """The stored engine result of an analysis as a dict (StoreIntegrityError if not JSON)."""
    import json

    from workbench.errors import StoreIntegrityError

    try:
        return json.loads(bytes(analysis.result_json).decode("utf-8"))
    except (UnicodeDecodeError, ValueError) as exc:
        raise StoreIntegrityError(
            f"analysis #{analysis.id}: the stored result is not JSON ({exc})",
            "re-run the analysis",
        ) from exc


def element_levels(report: Mapping[str, Any]) -> dict[str, dict[str, Any]]:
    """Best verdict per element in an engine result: ``{symbol: {"level", "verdict", "species"}}``.

    Elements are sorted by symbol; an element seen in several ion stages keeps
    its strongest verdict and lists every species.
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


def collections_root(where: str, store_root: Path | str) -> Path:
    """Collections folder: ``"store"`` (the case store's) or ``"shared"`` (shipped)."""
    from workbench.compare import shared_collections_root, store_collections_root

    if where == "shared":
        return shared_collections_root()
    if where == "store":
        return store_collections_root(store_root)
    raise InputError(f"unknown collections location {where!r}", "choose 'store' or 'shared'")


def parse_ratios(text: str, medium: str) -> list[Any]:
    """One ratio per line (``Sr:407.771/Ca:393.366``), parsed by the library; blanks skipped."""
    from workbench.compare import parse_ratio

    return [parse_ratio(line.strip(), medium) for line in text.splitlines() if line.strip()]


def parse_year(text: str) -> int | None:
    """A claimed year typed by the user (``1850``, ``-300`` for 300 BC); empty → None."""
    t = (text or "").strip()
    if not t:
        return None
    try:
        return int(t)
    except ValueError as exc:
        raise InputError(
            f"claimed year {t!r} is not a whole number",
            "type a year such as 1850 (negative for BC), or leave it empty",
        ) from exc


def sheet_files(store: Any, sheet: Any) -> dict[str, bytes]:
    """The stored files of an issued sheet, hash-checked by the store."""
    return {
        "pdf": store.file_bytes(sheet.pdf_sha256),
        "json": store.file_bytes(sheet.json_sha256),
        "sig": store.file_bytes(sheet.signature_sha256),
        "sig.json": store.file_bytes(sheet.record_sha256),
    }


def env_store() -> str | None:
    """``$WORKBENCH_STORE`` if set."""
    return os.environ.get("WORKBENCH_STORE") or None
