"""The case-bundle layout: which entries a case becomes, and how the zip is written.

Layout (entries sorted, timestamps fixed at 1980-01-01, mode 0644)::

    manifest.json            {"format", "format_version", "case_number",
                              "entries": [{"name", "sha256", "size_bytes"}, ...]}
    manifest.sha256          hex SHA-256 of manifest.json, then a newline
    records/case.json        the case
    records/items.json       items and sub-samples
    records/events.json      every custody event (with prev_hash and hash)
    records/measurements.json, records/analyses.json, records/findings_sheets.json
    records/analysts.json    analysts who signed or reviewed sheets (with public keys)
    records/decisions.json   the analyst's decisions on each analysis (hash-chained)
    records/reviews.json     technical reviews of the sheets (approvals countersigned)
    files/<sha256>           original files, analysis results, sheets, signatures
                             (the analyst's and the reviewers')

Format version 3 added ``decisions.json`` and ``reviews.json``; a version-2
bundle (:data:`READABLE_VERSIONS`) has neither and is still read.

Records carry natural keys and hashes, never local row ids, so the same case
exported twice gives the same bytes and an imported case keeps its hashes.

:func:`bundle_entries` turns a case's :class:`~workbench.casefile.casedata.CaseData`
into these entries and :func:`zip_bytes` writes them as one deterministic zip;
:func:`records_of` is also what an import compares with a case already stored.
"""

from __future__ import annotations

import io
import json
import re
import zipfile
from dataclasses import dataclass, field
from typing import Any

from workbench.casefile.casedata import CaseData, load_case_data
from workbench.casefile.hashing import canonical_json, sha256_hex

__all__ = [
    "ANALYST_FIELDS",
    "BUNDLE_FORMAT",
    "DECISION_FIELDS",
    "FORMAT_VERSION",
    "NAME_OK",
    "READABLE_VERSIONS",
    "RECORDS",
    "REVIEW_FIELDS",
    "BundleData",
    "bundle_entries",
    "file_hashes",
    "load_bundle_data",
    "records_in",
    "records_of",
    "with_decisions_and_reviews",
    "zip_bytes",
]

BUNDLE_FORMAT = "workbench-case-bundle"
#: 2 adds the case's hash-chained status log to records/case.json; 3 adds the
#: analyst's decisions and the technical reviews (records/decisions.json, reviews.json).
FORMAT_VERSION = 3
#: Versions an import reads (a version-2 bundle carries no decisions or reviews).
READABLE_VERSIONS = (2, 3)
#: Fields of an analyst that travel in a bundle (trust and status are the store's own).
ANALYST_FIELDS = ("fingerprint", "name", "role", "public_key_pem")

RECORDS = (
    "case",
    "items",
    "events",
    "measurements",
    "analyses",
    "findings_sheets",
    "analysts",
    "decisions",
    "reviews",
)
#: The records each readable version carries.
_RECORDS_BY_VERSION = {2: RECORDS[:-2], 3: RECORDS}
#: Fields of a decision that travel (the analysis by its hash, never a row id).
DECISION_FIELDS = (
    "analysis_hash",
    "seq",
    "action",
    "target",
    "lines",
    "reverses",
    "reason",
    "analyst",
    "decided_at",
    "prev_hash",
    "record_hash",
)
#: Fields of a review that travel (the sheet by its hash, never a row id).
REVIEW_FIELDS = (
    "sheet_hash",
    "reviewer_fingerprint",
    "reviewer",
    "outcome",
    "comments",
    "signature_sha256",
    "record_sha256",
    "reviewed_at",
    "record_hash",
)
NAME_OK = re.compile(
    r"^(manifest\.json|manifest\.sha256|records/(" + "|".join(RECORDS) + r")\.json"
    r"|files/[0-9a-f]{64})$"
)
_FIXED_TIME = (1980, 1, 1, 0, 0, 0)


@dataclass
class BundleData(CaseData):
    """A case as it travels: :class:`CaseData` plus decisions and reviews (format 3)."""

    decisions: list[dict[str, Any]] = field(default_factory=list)
    reviews: list[dict[str, Any]] = field(default_factory=list)
    format_version: int = FORMAT_VERSION


def records_in(version: int) -> tuple[str, ...]:
    """Return the record names a bundle of ``version`` carries (KeyError if unreadable)."""
    return _RECORDS_BY_VERSION[version]


def load_bundle_data(store: Any, case_number: str) -> BundleData:
    """Read a case as it travels: its rows, its decisions and reviews, and their analysts.

    Decisions are ordered by analysis, then ``seq``; reviews by sheet, then
    row id (the order they were made). The reviewers' keys join the signers'.
    """
    return with_decisions_and_reviews(store, load_case_data(store, case_number))


def with_decisions_and_reviews(store: Any, data: CaseData) -> BundleData:
    """Add a case's decisions, reviews and reviewers' keys to its rows read already.

    :func:`load_bundle_data` without reading the case's rows again (``custody
    verify`` has them).
    """
    conn = store.connection
    decisions: list[dict[str, Any]] = []
    for a in data.analyses:
        for r in conn.execute(
            "SELECT * FROM analysis_decisions WHERE analysis_id=? ORDER BY seq", (a["_id"],)
        ):
            d = {k: r[k] for k in DECISION_FIELDS if k != "analysis_hash"}
            d["lines"] = json.loads(d["lines"])
            decisions.append({"analysis_hash": a["record_hash"], **d})
    reviews: list[dict[str, Any]] = []
    analysts = dict(data.analysts)
    for f in data.findings:
        for r in conn.execute(
            "SELECT * FROM sheet_reviews WHERE sheet_id=? ORDER BY id", (f["_id"],)
        ):
            reviews.append({"sheet_hash": f["record_hash"], **{k: r[k] for k in REVIEW_FIELDS[1:]}})
            fp = r["reviewer_fingerprint"]
            if fp not in analysts:
                row = conn.execute("SELECT * FROM analysts WHERE fingerprint=?", (fp,)).fetchone()
                if row is not None:
                    analysts[fp] = {k: row[k] for k in row.keys() if k != "id"}
    return BundleData(
        case=data.case,
        items=data.items,
        events=data.events,
        measurements=data.measurements,
        analyses=data.analyses,
        findings=data.findings,
        analysts=analysts,
        decisions=decisions,
        reviews=reviews,
    )


def _strip(rec: dict[str, Any], *drop: str) -> dict[str, Any]:
    return {k: v for k, v in rec.items() if k not in drop and k != "_id"}


def records_of(data: CaseData, version: int = FORMAT_VERSION) -> dict[str, Any]:
    """Return a case's records as they travel in a bundle of ``version`` (no row ids).

    Version 2 carries neither decisions nor reviews, and only the signers' keys.
    """
    events = []
    for item in data.items:
        events += [_strip(e, "id") for e in data.events.get(item["item_number"], [])]
    analysts = sorted(data.analysts.items())
    if version < 3:
        signers = {f["analyst_fingerprint"] for f in data.findings}
        analysts = [(fp, a) for fp, a in analysts if fp in signers]
    out = {
        "case": dict(data.case),
        "items": [_strip(i) for i in data.items],
        "events": events,
        "measurements": [_strip(m) for m in data.measurements],
        "analyses": [_strip(a, "result_json") for a in data.analyses],
        "findings_sheets": [_strip(f) for f in data.findings],
        "analysts": [{k: a[k] for k in ANALYST_FIELDS} for _, a in analysts],
        "decisions": [{k: d[k] for k in DECISION_FIELDS} for d in getattr(data, "decisions", [])],
        "reviews": [{k: r[k] for k in REVIEW_FIELDS} for r in getattr(data, "reviews", [])],
    }
    return {k: out[k] for k in records_in(version)}


def file_hashes(records: dict[str, Any]) -> set[str]:
    """Return the SHA-256 of every file the records name (reviewers' signatures included)."""
    out = {m["sha256"] for m in records["measurements"]}
    out |= {a["result_sha256"] for a in records["analyses"]}
    for f in records["findings_sheets"]:
        out |= {f["pdf_sha256"], f["json_sha256"], f["signature_sha256"], f["record_sha256"]}
    for r in records.get("reviews", []):
        out |= {r[k] for k in ("signature_sha256", "record_sha256") if r.get(k) is not None}
    return out


def zip_bytes(entries: dict[str, bytes]) -> bytes:
    """Return the entries as one deterministic zip (sorted, fixed time and mode)."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for name in sorted(entries):
            info = zipfile.ZipInfo(name, date_time=_FIXED_TIME)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.create_system = 3
            info.external_attr = 0o100644 << 16
            zf.writestr(info, entries[name], compresslevel=6)
    return buf.getvalue()


def bundle_entries(data: CaseData, read: Any, version: int = FORMAT_VERSION) -> dict[str, bytes]:
    """Return every entry of a case's bundle, manifest last; ``read(sha)`` gives a stored file."""
    records = records_of(data, version)
    entries: dict[str, bytes] = {
        f"records/{name}.json": canonical_json(records[name]) for name in records_in(version)
    }
    results = {a["result_sha256"]: a["result_json"] for a in data.analyses}
    for sha in sorted(file_hashes(records)):
        entries[f"files/{sha}"] = results[sha] if sha in results else read(sha)
    manifest = {
        "format": BUNDLE_FORMAT,
        "format_version": version,
        "case_number": data.case["case_number"],
        "entries": [
            {"name": n, "sha256": sha256_hex(b), "size_bytes": len(b)}
            for n, b in sorted(entries.items())
        ],
    }
    manifest_bytes = canonical_json(manifest)
    entries["manifest.json"] = manifest_bytes
    entries["manifest.sha256"] = (sha256_hex(manifest_bytes) + "\n").encode("ascii")
    return entries
