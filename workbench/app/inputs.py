"""Reading an input for the app and keeping the record of the user's peak-table edits.

:func:`load_input` is the one place the app calls the readers, so a faster
reader (or one with a progress callback) can be swapped in here alone. The
edit record (:func:`peak_edits`, :func:`apply_peak_edits`) is plain
bookkeeping of what the user changed in the table.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from workbench.datamodel import PeakList, Spectrum
from workbench.errors import InputError, ValueRangeError

__all__ = ["LoadedInput", "apply_peak_edits", "load_input", "peak_edits", "table_rows"]


@dataclass
class LoadedInput:
    """An input read for the app: the original bytes and what the readers made of them."""

    data: bytes
    name: str
    options: dict[str, Any]
    peaks: PeakList  # as detected or read, before edits
    spectrum: Spectrum | None = None
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
    columns: str | None = None,
    block: str | None = None,
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
    columns : str, optional
        Column choices ``"ROLE=HEADER,..."`` (the CLI's ``--columns``;
        :func:`workbench.io.columns.parse_column_choices`).
    block : str, optional
        The JCAMP-DX block or workbook sheet to read (the CLI's ``--block``;
        :func:`workbench.io.parse_block_choice`).

    Returns
    -------
    LoadedInput
    """
    from workbench.io import parse_block_choice, read_any
    from workbench.io.columns import parse_column_choices
    from workbench.matching.analyse import peaks_from_spectrum

    if not data:
        raise InputError(f"{name}: nothing to read (0 bytes)", "upload a file or paste a table")
    kw: dict[str, Any] = {"name": name, "unit": unit or None, "medium": medium or None}
    if kind:
        kw["kind"] = kind
    options = {"unit": unit or None, "medium": medium or None, "kind": kind or None, "mode": mode}
    # The reader's choices, kept as given with the reading options.
    cols_text = (columns or "").strip()
    if cols_text:
        kw["columns"] = parse_column_choices(cols_text)
        options["columns"] = cols_text
    part = parse_block_choice(block)
    if part is not None:
        kw["block"] = part
        options["block"] = part
    got = read_any(bytes(data), mode=mode, **kw)
    if isinstance(got, Spectrum):
        pk: dict[str, Any] = {}
        if min_snr:
            pk["min_snr"] = float(min_snr)
            options["min_snr"] = float(min_snr)
        # The same peak finding as analyse_input (tests/app/test_runs.py checks that the
        # app and the CLI give the same bytes on the same file).
        peaks = peaks_from_spectrum(got, mode, pk)
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


def apply_peak_edits(peaks: PeakList, edits: Sequence[Mapping[str, Any]]) -> PeakList:
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
