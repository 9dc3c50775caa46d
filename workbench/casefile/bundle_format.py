"""The case-bundle layout: which entries a case becomes, and how the zip is written.

Layout (entries sorted, timestamps fixed at 1980-01-01, mode 0644)::

    manifest.json            {"format", "format_version", "case_number",
                              "entries": [{"name", "sha256", "size_bytes"}, ...]}
    manifest.sha256          hex SHA-256 of manifest.json, then a newline
    records/case.json        the case
    records/items.json       items and sub-samples
    records/events.json      every custody event (with prev_hash and hash)
    records/measurements.json, records/analyses.json, records/findings_sheets.json
    records/analysts.json    analysts who signed sheets (with public keys)
    files/<sha256>           original files, analysis results, sheets, signatures

Records carry natural keys and hashes, never local row ids, so the same case
exported twice gives the same bytes and an imported case keeps its hashes.

:func:`bundle_entries` turns a case's :class:`~workbench.casefile.casedata.CaseData`
into these entries and :func:`zip_bytes` writes them as one deterministic zip;
:func:`records_of` is also what an import compares with a case already stored.
"""

from __future__ import annotations

import io
import re
import zipfile
from typing import Any

from workbench.casefile.casedata import CaseData
from workbench.casefile.hashing import canonical_json, sha256_hex

__all__ = [
    "ANALYST_FIELDS",
    "BUNDLE_FORMAT",
    "FORMAT_VERSION",
    "NAME_OK",
    "RECORDS",
    "bundle_entries",
    "file_hashes",
    "records_of",
    "zip_bytes",
]

BUNDLE_FORMAT = "workbench-case-bundle"
#: 2 adds the case's hash-chained status log to records/case.json.
FORMAT_VERSION = 2
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
)
NAME_OK = re.compile(
    r"^(manifest\.json|manifest\.sha256|records/(" + "|".join(RECORDS) + r")\.json"
    r"|files/[0-9a-f]{64})$"
)
_FIXED_TIME = (1980, 1, 1, 0, 0, 0)


def _strip(rec: dict[str, Any], *drop: str) -> dict[str, Any]:
    return {k: v for k, v in rec.items() if k not in drop and k != "_id"}


def records_of(data: CaseData) -> dict[str, Any]:
    """Return a case's records as they travel in a bundle (natural keys, no row ids)."""
    events = []
    for item in data.items:
        events += [_strip(e, "id") for e in data.events.get(item["item_number"], [])]
    return {
        "case": dict(data.case),
        "items": [_strip(i) for i in data.items],
        "events": events,
        "measurements": [_strip(m) for m in data.measurements],
        "analyses": [_strip(a, "result_json") for a in data.analyses],
        "findings_sheets": [_strip(f) for f in data.findings],
        "analysts": [{k: a[k] for k in ANALYST_FIELDS} for _, a in sorted(data.analysts.items())],
    }


def file_hashes(records: dict[str, Any]) -> set[str]:
    """Return the SHA-256 of every file the records name."""
    out = {m["sha256"] for m in records["measurements"]}
    out |= {a["result_sha256"] for a in records["analyses"]}
    for f in records["findings_sheets"]:
        out |= {f["pdf_sha256"], f["json_sha256"], f["signature_sha256"], f["record_sha256"]}
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


def bundle_entries(data: CaseData, read: Any) -> dict[str, bytes]:
    """Return every entry of a case's bundle, manifest last; ``read(sha)`` gives a stored file."""
    records = records_of(data)
    entries: dict[str, bytes] = {
        f"records/{name}.json": canonical_json(records[name]) for name in RECORDS
    }
    results = {a["result_sha256"]: a["result_json"] for a in data.analyses}
    for sha in sorted(file_hashes(records)):
        entries[f"files/{sha}"] = results[sha] if sha in results else read(sha)
    manifest = {
        "format": BUNDLE_FORMAT,
        "format_version": FORMAT_VERSION,
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
