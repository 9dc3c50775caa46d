"""Integrity check of the case store (and of case bundles before import).

:func:`verify_store` re-derives everything that can be re-derived and reports
each break with its exact place:

* every custody chain: sequence numbers 1..n without gaps (``missing-event``),
  each ``prev_hash`` equal to the previous event's hash (``broken-link``, or
  ``reordered`` when it points at another event of the same chain), each
  event's own hash recomputed (``altered-event``), and the custody rules
  replayed (``rule-violation``); a sub-sample's chain must start from its
  parent's ``sub-sampled`` event;
* every case, item, measurement, analysis and findings-sheet record: its hash
  recomputed (``altered-record``) and found in a custody event of its item
  (``unchained-record``), and every event's record present (``missing-record``);
* every analysis's stored result against its SHA-256 (``altered-result``);
* every stored file re-hashed (``file-missing``, ``file-replaced``);
* every findings-sheet signature, via :mod:`workbench.crypto`
  (``signature-invalid``); a valid signature by a key the store does not
  trust (imported, not yet trusted) is a warning;
* the analyst's decisions and the technical reviews, with the checks a
  bundle import makes (:func:`~workbench.casefile.bundle_review.decision_review_problems`):
  each analysis's decision chain re-walked (``broken-decision``), the
  decisions printed on each signed sheet found among those stored, each
  review re-hashed, named by a ``reviewed`` event of its sheet's item and,
  when it approves, its countersignature verified (``broken-review``); a
  ``reviewed`` event whose review is not stored is a warning when the case
  came in a format-2 bundle (which carried no reviews) and holds no
  decision or review, a ``broken-review`` otherwise;
* store-wide, the ledger (:mod:`workbench.casefile.ledger`): every row of
  every covered table against the hash chain of everything written, so a
  deleted, inserted or altered row of *any* table (a whole case or item, an
  analyst, a key event, a status flipped back) is reported with the record's
  identity (``missing-row``, ``unledgered-row``, ``altered-row``,
  ``orphan-row``, ``ledger-gap`` ...);
* the key log (:mod:`workbench.casefile.keylog`) replayed and compared with
  the analysts table (``key-log-broken``, ``key-state-mismatch``);
* values that cannot be read (invalid JSON, a BLOB where text belongs) are
  ``unreadable-record`` breaks, never crashes; SQLite's own integrity check
  runs over every page (``damaged-database``).

Verification only reads: ``custody verify`` opens the store read-only
(:meth:`CaseStore.open_readonly`). Limit: a consistent rewrite of the whole
ledger is detected only against a ledger head kept elsewhere (``--anchor``).
"""

from __future__ import annotations

from typing import Any

from workbench.casefile import ledger
from workbench.casefile.breaks import Break, Unreadable, VerifyReport
from workbench.casefile.bundle_format import with_decisions_and_reviews
from workbench.casefile.bundle_review import (
    DECISIONS_ENTRY,
    came_in_format_2,
    decision_review_problems,
)
from workbench.casefile.casecheck import check_case_data
from workbench.casefile.casedata import CaseData, load_case_data
from workbench.casefile.hashing import sha256_hex
from workbench.casefile.storecheck import has_table, store_breaks
from workbench.errors import WorkbenchError

__all__ = [
    "Break",
    "CaseData",
    "VerifyReport",
    "check_case_data",
    "load_case_data",
    "verify_store",
]


def _summarise_signatures(notes: list[str]) -> str:
    if not notes:
        return "none to check"
    if any(n.startswith("unavailable") for n in notes):
        return next(n for n in notes if n.startswith("unavailable"))
    return "failed" if "failed" in notes else "ok"


def _in_store(sentence: str) -> str:
    # The shared check speaks of a bundle; here the records are the store's.
    return sentence.replace("the bundle does not carry", "this store does not hold")


def _decision_review_breaks(
    store: Any, case: CaseData, get_blob: Any
) -> tuple[list[Break], list[str]]:
    """Breaks (and warnings) of one case's decisions and technical reviews."""
    case_number = str(case.case["case_number"])
    try:
        data = with_decisions_and_reviews(store, case)
        problems = decision_review_problems(data, get_blob)
    except (Unreadable, WorkbenchError, KeyError, TypeError, ValueError, AttributeError) as exc:
        what = str(exc) if isinstance(exc, Unreadable) else f"{type(exc).__name__}: {exc}"
        return [
            Break(
                "unreadable-record",
                case_number,
                None,
                None,
                None,
                f"decisions and reviews of case {case_number}",
                f"a stored value cannot be read ({what})",
            )
        ], []
    if problems and came_in_format_2(data, problems):
        # Came in a format-2 bundle, which carried no reviews: known, not a break.
        return [], [
            f"case {case_number}: {_in_store(p)} (the case came in a format-2 bundle, "
            "which carried no reviews)"
            for _, p in problems
        ]
    out = []
    for entry, problem in problems:
        kind = "broken-decision" if entry == DECISIONS_ENTRY else "broken-review"
        out.append(
            Break(
                kind,
                case_number,
                None,
                None,
                None,
                "decisions" if kind == "broken-decision" else "technical reviews",
                _in_store(problem),
            )
        )
    return out, []


def verify_store(
    store: Any, case_number: str | None = None, *, anchor: tuple[int, str] | None = None
) -> VerifyReport:
    """Verify one case, or the whole store (which also re-hashes every stored file).

    The store-wide ledger and key-log checks run in both cases: a deleted
    record cannot be found by looking only at what is still there.

    Parameters
    ----------
    store : CaseStore
        The open store (read-only is enough; nothing is written).
    case_number : str, optional
        Limit the per-case checks to one case.
    anchor : (int, str), optional
        A ledger head ``(seq, hash)`` recorded earlier outside the store.

    Returns
    -------
    VerifyReport
        The report.
    """
    conn = store.connection
    if case_number is not None:
        numbers = [store.get_case(case_number).case_number]
    else:
        numbers = [r[0] for r in conn.execute("SELECT case_number FROM cases ORDER BY case_number")]

    def get_blob(sha: str) -> bytes | None:
        try:
            path = store.files.path(sha)
        except WorkbenchError:
            return None
        return path.read_bytes() if path.is_file() else None

    breaks: list[Break] = []
    warnings: list[str] = []
    notes: list[str] = []
    totals: dict[str, int] = {}
    for n in numbers:
        try:
            data = load_case_data(store, n)
            b, counts, w, s = check_case_data(data, get_blob)
        except (
            Unreadable,
            WorkbenchError,
            KeyError,
            TypeError,
            ValueError,
            AttributeError,
        ) as exc:
            # A value of the wrong type (a BLOB in a text column) is tampering, not bad input.
            what = str(exc) if isinstance(exc, Unreadable) else f"{type(exc).__name__}: {exc}"
            breaks.append(
                Break(
                    "unreadable-record",
                    str(n),
                    None,
                    None,
                    None,
                    f"case {n}",
                    f"a stored value cannot be read ({what})",
                )
            )
            continue
        breaks += b
        warnings += w
        notes += s
        b, w = _decision_review_breaks(store, data, get_blob)
        breaks += b
        warnings += w
        for k, v in counts.items():
            totals[k] = totals.get(k, 0) + v
    if case_number is None:
        totals.setdefault("files", 0)
        reported = {b.expected for b in breaks if b.kind in ("file-replaced", "file-missing")}
        for name, path in store.files.iter_hashes():
            digest = sha256_hex(path.read_bytes())
            if digest != name and name not in reported:
                breaks.append(
                    Break(
                        "file-replaced",
                        None,
                        None,
                        None,
                        None,
                        f"file files/{name[:2]}/{name[2:]}",
                        "a stored file's content does not match its name",
                        name,
                        digest,
                    )
                )
    # Store-wide breaks come after the per-case ones, which place a change
    # more exactly (the event in its chain); deletions show only here.
    breaks += store_breaks(conn, anchor)
    if not has_table(conn, ledger.LEDGER_TABLE) and not has_table(conn, "key_events"):
        warnings.append(
            "this store predates the ledger (schema 2): a deleted record cannot be detected; "
            "any write command upgrades it"
        )
    return VerifyReport(
        ok=not breaks,
        scope=case_number or "all cases",
        counts=totals,
        breaks=tuple(breaks),
        warnings=tuple(warnings),
        signature_check=_summarise_signatures(notes),
    )
