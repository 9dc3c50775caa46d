"""Decisions and technical reviews in a case bundle: field rules, checks and import rows.

A bundle of format 3 carries the analyst's decisions on each analysis
(``records/decisions.json``) and the technical reviews of the findings sheets
(``records/reviews.json``), with each approving reviewer's signature files
under ``files/``. Nothing here writes until :func:`insert_decisions_and_reviews`
runs inside the import's one transaction.

:func:`check_decision_fields` applies the rules of direct entry
(:func:`workbench.casefile.decisions.append_decision` and
:func:`~workbench.casefile.decisions.add_review` with the refusals of
:func:`workbench.findings.review.review_sheet` that the records can show).
:func:`decision_review_problems` then re-walks every decision chain with the
store's own code (:func:`~workbench.casefile.decisions.check_decision_chain`),
re-hashes every review, finds each review in a ``reviewed`` custody event of
the sheet's item (and each such event's review among the records), checks
that the decisions printed on a signed sheet are the ones carried, and
verifies each approval's signature files against the reviewer's key carried in
the bundle. Every problem names its record: ``decision 3 on analysis
1a2b3c4d5e6f… (item 1.1)`` or ``review by <name> of findings sheet 9f8e…``.
Export runs the same checks on the store's rows and refuses a broken case.
"""

from __future__ import annotations

import base64
import binascii
import json
import math
from collections.abc import Callable
from typing import Any

from workbench.casefile.bundle_format import BundleData
from workbench.casefile.decisions import (
    DECISION_ACTIONS,
    REVIEW_HASH_FIELDS,
    check_decision_chain,
)
from workbench.casefile.hashing import normalise_time, record_hash
from workbench.casefile.validate import check_text
from workbench.errors import InputError, WorkbenchError

__all__ = [
    "DECISIONS_ENTRY",
    "REVIEWS_ENTRY",
    "analysis_name",
    "came_in_format_2",
    "check_decision_fields",
    "decision_name",
    "decision_review_problems",
    "insert_decisions_and_reviews",
    "review_name",
]

DECISIONS_ENTRY = "records/decisions.json"
REVIEWS_ENTRY = "records/reviews.json"
_HEX = frozenset("0123456789abcdef")


def _is_hex(value: Any) -> bool:
    return isinstance(value, str) and len(value) == 64 and set(value) <= _HEX


def _is_int(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _item_of(records: list[dict[str, Any]], digest: Any) -> str:
    for r in records:
        if r.get("record_hash") == digest:
            return f" (item {str(r.get('item_number'))[:64]})"
    return ""


def analysis_name(data: BundleData, analysis_hash: Any) -> str:
    """Name an analysis for a message: its hash (shortened) and its item."""
    return f"analysis {str(analysis_hash)[:12]}…" + _item_of(data.analyses, analysis_hash)


def decision_name(data: BundleData, d: dict[str, Any]) -> str:
    """Name a decision for a message: its number, its analysis and the analysis's item."""
    return f"decision {d.get('seq')!r} on {analysis_name(data, d.get('analysis_hash'))}"


def review_name(data: BundleData, r: dict[str, Any]) -> str:
    """Name a review for a message: the reviewer, the sheet and the sheet's item."""
    sh = r.get("sheet_hash")
    who = str(r.get("reviewer"))[:80]
    return f"review by {who} of findings sheet {str(sh)[:12]}…" + _item_of(data.findings, sh)


def _text(rec: dict[str, Any], key: str, where: str, *, required: bool = True) -> None:
    # Direct entry strips text before storing it: a stored value is already stripped.
    value = rec.get(key)
    checked = check_text(value, f"{where} {key}", required=required, max_len=10000)
    if checked != value and not (value == "" and not required):
        raise InputError(f"{where} {key} is not in the stored form", "export it again")


def _time(rec: dict[str, Any], key: str, where: str) -> None:
    value = rec.get(key)
    if not isinstance(value, str) or normalise_time(value, f"{where} {key}") != value:
        raise InputError(f"{where} {key} {value!r} is not a stored UTC time", "export it again")


def _json_finite(value: Any) -> bool:
    if isinstance(value, float):
        return math.isfinite(value)
    if isinstance(value, dict):
        return all(isinstance(k, str) and _json_finite(v) for k, v in value.items())
    if isinstance(value, list):
        return all(_json_finite(v) for v in value)
    return value is None or isinstance(value, str | int | bool)


def check_decision_fields(data: BundleData) -> None:
    """Apply the rules of direct entry to every carried decision and review.

    Raises
    ------
    InputError
        Naming the record and the field that direct entry would have refused.
    """
    analyses = {a["record_hash"] for a in data.analyses}
    for d in data.decisions:
        where = decision_name(data, d)
        if not _is_hex(d.get("analysis_hash")) or d["analysis_hash"] not in analyses:
            raise InputError(
                f"{where} is about an analysis the bundle does not carry", "export the case again"
            )
        if not _is_int(d.get("seq")):
            raise InputError(f"{where} seq must be an integer", "export it again")
        if d.get("action") not in DECISION_ACTIONS:
            raise InputError(f"{where} action {d.get('action')!r}", f"use {DECISION_ACTIONS}")
        for k in ("target", "reason", "analyst"):
            _text(d, k, where)
        lines = d.get("lines")
        if not isinstance(lines, list) or not all(isinstance(x, dict) for x in lines):
            raise InputError(f"{where} lines must be a list of objects", "export it again")
        if not _json_finite(lines):
            raise InputError(
                f"{where} lines hold a value that is not finite JSON", "export the case again"
            )
        if d.get("reverses") is not None and not _is_int(d["reverses"]):
            raise InputError(f"{where} reverses must be a decision number", "export the case again")
        _time(d, "decided_at", where)
        for k in ("prev_hash", "record_hash"):
            if not _is_hex(d.get(k)):
                raise InputError(f"{where} {k} is not a SHA-256 hex digest", "export it again")
    sheets = {f["record_hash"]: f for f in data.findings}
    approved: set[str] = set()
    seen: set[Any] = set()
    for r in data.reviews:
        where = review_name(data, r)
        if not isinstance(r.get("record_hash"), str) or r["record_hash"] in seen:
            raise InputError(f"{where} appears twice", "export the case again")
        seen.add(r["record_hash"])
        sheet = sheets.get(r["sheet_hash"]) if _is_hex(r.get("sheet_hash")) else None
        if sheet is None:
            raise InputError(
                f"{where} is of a findings sheet the bundle does not carry", "export the case again"
            )
        fp = r.get("reviewer_fingerprint")
        reviewer = data.analysts.get(fp) if isinstance(fp, str) else None
        if reviewer is None:
            raise InputError(
                f"{where}: the reviewer's key {fp!r} is not carried", "export the case again"
            )
        _text(r, "reviewer", where)
        if r["reviewer"] != reviewer.get("name"):
            raise InputError(
                f"{where}: reviewer is not the name registered to {fp}", "export the case again"
            )
        if fp == sheet.get("analyst_fingerprint") or r["reviewer"] == sheet.get("analyst"):
            raise InputError(
                f"{where}: the analyst cannot review their own analysis", "export the case again"
            )
        if r.get("outcome") not in ("approved", "returned"):
            raise InputError(f"{where} outcome {r.get('outcome')!r}", "use approved or returned")
        _text(r, "comments", where, required=r["outcome"] == "returned")
        digests = (r.get("signature_sha256"), r.get("record_sha256"))
        if r["outcome"] == "approved" and not all(_is_hex(x) for x in digests):
            raise InputError(
                f"{where}: an approval without its signature files", "export the case again"
            )
        if r["outcome"] == "returned" and digests != (None, None):
            raise InputError(
                f"{where}: a returned sheet carries no signature", "export the case again"
            )
        if r["sheet_hash"] in approved:
            raise InputError(
                f"{where}: the sheet had already been approved", "export the case again"
            )
        if r["outcome"] == "approved":
            approved.add(r["sheet_hash"])
        _time(r, "reviewed_at", where)
        if not _is_hex(r.get("record_hash")):
            raise InputError(
                f"{where} record_hash is not a SHA-256 hex digest", "export the case again"
            )


def _named_reviewer(json_bytes: bytes) -> str | None:
    try:
        content = json.loads(bytes(json_bytes).decode("utf-8"))
    except (UnicodeDecodeError, ValueError, RecursionError):
        return None
    rev = content.get("reviewer") if isinstance(content, dict) else None
    named = rev.get("fingerprint") if isinstance(rev, dict) else None
    return named if isinstance(named, str) else None


def _printed_decisions(json_bytes: bytes) -> list[tuple[Any, Any]]:
    """The (seq, record_hash) of each decision a sheet of this workbench prints."""
    try:
        content = json.loads(bytes(json_bytes).decode("utf-8"))
    except (UnicodeDecodeError, ValueError, RecursionError):
        return []
    printed = content.get("decisions") if isinstance(content, dict) else None
    if not isinstance(printed, list):
        return []
    return [(d.get("seq"), d.get("record_hash")) for d in printed if isinstance(d, dict)]


def _review_signature_problem(
    data: BundleData, r: dict[str, Any], get_file: Callable[[str], bytes | None]
) -> str | None:
    """Why an approval's signature files do not countersign its sheet (None when they do)."""
    from workbench import crypto

    sheet = next(f for f in data.findings if f["record_hash"] == r["sheet_hash"])
    raw = get_file(r["signature_sha256"])
    review_record = get_file(r["record_sha256"])
    if raw is None or review_record is None:
        return "its signature files are missing"
    pdf, js = get_file(sheet["pdf_sha256"]), get_file(sheet["json_sha256"])
    analyst_record = get_file(sheet["record_sha256"])
    if pdf is None or js is None or analyst_record is None:
        return "the reviewed sheet's files are missing"
    pem = str(data.analysts[r["reviewer_fingerprint"]]["public_key_pem"]).encode("ascii")
    try:
        rec = crypto.parse_signature_record(review_record)
        if rec["key_fingerprint"] == crypto.parse_signature_record(analyst_record).get(
            "key_fingerprint"
        ):
            return "the review signature is made with the analyst's own key"
        named = _named_reviewer(js)
        if named is not None and named != r["reviewer_fingerprint"]:
            return f"the sheet names the reviewer {named}, not {r['reviewer_fingerprint']}"
        crypto.verify_sheet(
            pdf, js, review_record, pem, expected_fingerprint=r["reviewer_fingerprint"]
        )
        if raw != base64.b64decode(rec["signature_pdf"], validate=True):
            return "the raw review signature file is not the signature in the review record"
        crypto.verify_raw_pdf_signature(pdf, raw, pem)
    except WorkbenchError as exc:
        return f"review signature invalid: {exc.problem}"
    except (binascii.Error, ValueError, KeyError, TypeError) as exc:
        return f"review signature unreadable ({exc})"
    return None


def decision_review_problems(
    data: BundleData, get_file: Callable[[str], bytes | None]
) -> list[tuple[str, str]]:
    """Check carried decisions and reviews; return ``(entry, sentence)`` per problem.

    Parameters
    ----------
    data : BundleData
        The case (fields already checked by :func:`check_decision_fields`).
    get_file : callable
        ``sha256 -> bytes or None``.

    Returns
    -------
    list of (str, str)
        The bundle entry and one sentence naming the record; empty when intact.
    """
    out: list[tuple[str, str]] = []
    if data.format_version < 3:
        return out  # a version-2 bundle carries neither decisions nor reviews
    by_analysis: dict[str, list[dict[str, Any]]] = {}
    for d in data.decisions:
        by_analysis.setdefault(d["analysis_hash"], []).append(d)
    for ah, chain in by_analysis.items():
        for problem in check_decision_chain(chain, ah):
            # the store's sentence names the decision; add its analysis and item
            out.append((DECISIONS_ENTRY, f"{problem} (on {analysis_name(data, ah)})"))
    carried = {(d["analysis_hash"], d["seq"]): d["record_hash"] for d in data.decisions}
    for f in data.findings:
        js = get_file(f["json_sha256"])
        for seq, digest in _printed_decisions(js or b""):
            if not _is_int(seq) or carried.get((f["analysis_hash"], seq)) != digest:
                out.append(
                    (
                        DECISIONS_ENTRY,
                        f"decision {seq!r} printed on signed findings sheet "
                        f"{f['record_hash'][:12]}… is not the one carried for its analysis",
                    )
                )
    reviewed_events: dict[str, dict[str, Any]] = {}
    for evs in data.events.values():
        for e in evs:
            # 'reviewed' is a store-only kind: add_review writes one per review
            if e.get("kind") == "reviewed" or e.get("ref_kind") == "review":
                reviewed_events[str(e.get("ref_hash"))] = e
    seen: set[str] = set()
    for r in data.reviews:
        where = review_name(data, r)
        found = record_hash(r, REVIEW_HASH_FIELDS)
        if found != r["record_hash"]:
            out.append((REVIEWS_ENTRY, f"{where} was altered after it was recorded"))
        sheet = next(f for f in data.findings if f["record_hash"] == r["sheet_hash"])
        ev = reviewed_events.get(r["record_hash"])
        if (
            ev is None
            or ev.get("item_number") != sheet["item_number"]
            or ev.get("ref_key") != sheet["pdf_sha256"]
        ):
            out.append(
                (REVIEWS_ENTRY, f"{where}: no 'reviewed' custody event of its item names it")
            )
        else:
            seen.add(r["record_hash"])
        if r["outcome"] == "approved":
            why = _review_signature_problem(data, r, get_file)
            if why is not None:
                out.append((REVIEWS_ENTRY, f"{where}: {why}"))
    for ref, ev in reviewed_events.items():
        if ref not in seen:
            out.append(
                (
                    "records/events.json",
                    f"custody event {ev.get('seq')!r} of item {ev.get('item_number')!r} names "
                    f"a review {ref[:12]}… that the bundle does not carry",
                )
            )
    return out


def insert_decisions_and_reviews(
    conn: Any,
    data: BundleData,
    analysis_ids: dict[str, int],
    sheet_ids: dict[str, int],
    led: Callable[[str, int], None],
) -> None:
    """Write the carried decisions and reviews (inside the import's transaction)."""
    for d in data.decisions:
        cur = conn.execute(
            "INSERT INTO analysis_decisions (analysis_id, seq, action, target, lines, reverses, "
            "reason, analyst, decided_at, prev_hash, record_hash) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
            (
                analysis_ids[d["analysis_hash"]],
                d["seq"],
                d["action"],
                d["target"],
                # the text form append_decision stores
                json.dumps(d["lines"], sort_keys=True, ensure_ascii=False),
                d["reverses"],
                d["reason"],
                d["analyst"],
                d["decided_at"],
                d["prev_hash"],
                d["record_hash"],
            ),
        )
        led("analysis_decisions", int(cur.lastrowid))
    for r in data.reviews:
        cur = conn.execute(
            "INSERT INTO sheet_reviews (sheet_id, reviewer_fingerprint, reviewer, outcome, "
            "comments, signature_sha256, record_sha256, reviewed_at, record_hash) "
            "VALUES (?,?,?,?,?,?,?,?,?)",
            (
                sheet_ids[r["sheet_hash"]],
                r["reviewer_fingerprint"],
                r["reviewer"],
                r["outcome"],
                r["comments"],
                r["signature_sha256"],
                r["record_sha256"],
                r["reviewed_at"],
                r["record_hash"],
            ),
        )
        led("sheet_reviews", int(cur.lastrowid))


def came_in_format_2(data: BundleData, problems: list[tuple[str, str]]) -> bool:
    """Whether the only problem is 'reviewed' events whose reviews a format-2 import left out.

    Such a case holds no decision or review at all (export passes it on as
    format 2; anything recorded since would be lost there, so it is refused).
    ``custody verify`` reports it as a warning rather than a break. Callers
    check first that there are problems at all.
    """
    dangling = all(entry == "records/events.json" for entry, _ in problems)
    return dangling and not data.decisions and not data.reviews
