"""What the app's pages need from the case store, beside the store's own API.

Each function opens nothing on its own (the page passes the store it opened
for this script run, since SQLite connections stay in one thread) and only
reads, reshapes or forwards to :class:`workbench.casefile.store.CaseStore`
and the findings library.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from workbench.errors import StoreIntegrityError
from workbench.matching.presentation import MatchView

if TYPE_CHECKING:
    from workbench.casefile.records import AnalysisRecord, FindingsSheetRecord
    from workbench.casefile.store import CaseStore

__all__ = [
    "StoredOutcome",
    "analysis_report",
    "chain_status",
    "draft_key",
    "draft_sheet",
    "env_store",
    "latest_analysis",
    "open_store",
    "reopen_analysis",
    "resolve_root",
    "save_analysis",
    "sheet_files",
    "store_root_from_argv",
]


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
def open_store(root: Path | str | None) -> Iterator[CaseStore]:
    """Open the case store for one script run (SQLite connections stay in one thread)."""
    from workbench.casefile.store import CaseStore

    store = CaseStore.open(root)
    try:
        yield store
    finally:
        store.close()


def chain_status(store: CaseStore, case_number: str) -> dict[str, Any]:
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


def latest_analysis(
    store: CaseStore, case_number: str, measurement_ids: Sequence[int] | None = None
) -> AnalysisRecord | None:
    """The most recent stored analysis of a case (of the given measurements, if any), or None."""
    found = store.list_analyses(case_number)
    if measurement_ids is not None:
        wanted = {int(m) for m in measurement_ids}
        found = [a for a in found if a.measurement_id in wanted]
    return found[-1] if found else None


def analysis_report(analysis: AnalysisRecord) -> dict[str, Any]:
    """The stored engine result of an analysis as a dict (StoreIntegrityError if not JSON)."""
    try:
        return json.loads(bytes(analysis.result_json).decode("utf-8"))
    except (UnicodeDecodeError, ValueError) as exc:
        raise StoreIntegrityError(
            f"analysis #{analysis.id}: the stored result is not JSON ({exc})",
            "re-run the analysis",
        ) from exc


@dataclass(frozen=True)
class StoredOutcome:
    """A saved analysis re-opened for display: the stored result, read-only."""

    analysis_id: int
    case_number: str
    item_number: str
    analyst: str
    created_at: str
    view: MatchView


def reopen_analysis(store: CaseStore, analysis_id: int) -> StoredOutcome:
    """Read a saved analysis for read-only display (its result bytes exactly as stored)."""
    a = store.get_analysis(int(analysis_id))
    return StoredOutcome(
        analysis_id=int(a.id),
        case_number=str(a.case_number),
        item_number=str(a.item_number),
        analyst=str(a.analyst),
        created_at=str(a.created_at),
        view=MatchView.from_report(analysis_report(a), bytes(a.result_json)),
    )


def save_analysis(
    store: CaseStore, measurement_id: int, view: MatchView, parameters: dict[str, Any], analyst: str
) -> AnalysisRecord:
    """Store the analysis of a stored measurement (exact JSON bytes, parameters with edits)."""
    from workbench import __version__

    return store.add_analysis(
        int(measurement_id),
        parameters=parameters,
        reference_sets=list(view.report.get("reference_sets") or []),
        result_json=view.json_bytes,
        software_version=__version__,
        analyst=analyst,
    )


def draft_sheet(
    store: CaseStore,
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


def sheet_files(store: CaseStore, sheet: FindingsSheetRecord) -> dict[str, bytes]:
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
