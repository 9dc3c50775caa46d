"""Checking one case's records, files and signatures (store or bundle alike).

:func:`check_case_data` recomputes every record hash (``altered-record``),
finds each record in a custody event of its item (``unchained-record``) and
each event's record among the records (``missing-record``), re-hashes every
file and analysis result (``file-missing``, ``file-replaced``,
``altered-result``), replays every custody chain
(:mod:`~workbench.casefile.chaincheck`) and verifies every findings-sheet
signature via :mod:`workbench.crypto` (``signature-invalid``).
"""

from __future__ import annotations

from collections.abc import Callable

from workbench.casefile.breaks import Break, Unreadable, record_hash
from workbench.casefile.casedata import CaseData
from workbench.casefile.chaincheck import check_chain
from workbench.casefile.custody import check_status_log
from workbench.casefile.hashing import sha256_hex
from workbench.casefile.records import (
    ANALYSIS_HASH_FIELDS,
    CASE_HASH_FIELDS,
    FINDINGS_HASH_FIELDS,
    ITEM_HASH_FIELDS,
    MEASUREMENT_HASH_FIELDS,
)
from workbench.errors import WorkbenchError

__all__ = ["check_case_data"]


def check_case_data(
    data: CaseData, get_blob: Callable[[str], bytes | None]
) -> tuple[list[Break], dict[str, int], list[str], list[str]]:
    """Check one case's data; return (breaks, counts, warnings, signature notes).

    Parameters
    ----------
    data : CaseData
        The case.
    get_blob : callable
        ``sha256 -> bytes or None`` (None when the file is missing).
    """
    out: list[Break] = []
    warnings: list[str] = []
    sig_notes: list[str] = []
    cn = data.case["case_number"]
    counts = {
        "cases": 1,
        "items": len(data.items),
        "events": 0,
        "measurements": 0,
        "analyses": 0,
        "findings_sheets": 0,
        "files": 0,
        "signatures": 0,
    }
    found = record_hash(data.case, CASE_HASH_FIELDS)
    if found != data.case["record_hash"]:
        out.append(
            Break(
                "altered-record",
                cn,
                None,
                None,
                None,
                "case record",
                "the case record does not match its hash",
                data.case["record_hash"],
                found,
            )
        )
    if "status_log" in data.case:
        why = check_status_log(
            data.case["status_log"], data.case["record_hash"], data.case["status"]
        )
        if why is not None:
            out.append(
                Break(
                    "altered-record",
                    cn,
                    None,
                    None,
                    None,
                    "case status log",
                    why,
                )
            )
    # sub-sampled events in parents, keyed by child item number
    parent_events: dict[str, dict] = {}
    for evs in data.events.values():
        for e in evs:
            if e.get("kind") == "sub-sampled" and e.get("ref_kind") == "sub-sample":
                parent_events.setdefault(str(e.get("ref_key")), e)
    chained: dict[tuple[str, str, str], dict] = {}
    for item in data.items:
        num = item["item_number"]
        fields = {**item, "case_hash": data.case["record_hash"]}
        found = record_hash(fields, ITEM_HASH_FIELDS)
        if found != item["record_hash"]:
            out.append(
                Break(
                    "altered-record",
                    cn,
                    num,
                    None,
                    None,
                    f"item {num}",
                    "the item record does not match its hash",
                    item["record_hash"],
                    found,
                )
            )
        counts["events"] += check_chain(data, item, out, parent_events)
        for e in data.events.get(num, []):
            if e.get("ref_kind") in ("measurement", "analysis", "findings"):
                chained[(num, e["ref_kind"], e.get("ref_hash") or "")] = e
    seen_refs: set[tuple[str, str, str]] = set()
    checked_files: dict[str, bool] = {}

    def check_file(sha: str, num: str, what: str) -> bytes | None:
        data_bytes = get_blob(sha)
        if sha not in checked_files:
            counts["files"] += 1
        if data_bytes is None:
            out.append(
                Break(
                    "file-missing",
                    cn,
                    num,
                    None,
                    None,
                    f"{what} file {sha[:12]}…",
                    "the stored file is missing",
                    sha,
                    "no file",
                )
            )
            checked_files[sha] = False
            return None
        digest = sha256_hex(data_bytes)
        if digest != sha:
            out.append(
                Break(
                    "file-replaced",
                    cn,
                    num,
                    None,
                    None,
                    f"{what} file files/{sha[:2]}/{sha[2:]}",
                    "the stored file's content does not match its SHA-256",
                    sha,
                    digest,
                )
            )
            checked_files[sha] = False
            return None
        checked_files[sha] = True
        return data_bytes

    def check_record(rec: dict, names: tuple[str, ...], kind: str, what: str) -> None:
        num = rec["item_number"]
        found = record_hash(rec, names)
        if found != rec["record_hash"]:
            out.append(
                Break(
                    "altered-record",
                    cn,
                    num,
                    None,
                    None,
                    what,
                    f"the {kind} record does not match its hash",
                    rec["record_hash"],
                    found,
                )
            )
        key = (num, kind, rec["record_hash"])
        ev = chained.get(key)
        if ev is None:
            out.append(
                Break(
                    "unchained-record",
                    cn,
                    num,
                    None,
                    None,
                    what,
                    f"no custody event of item {num} names this {kind} record "
                    "(replaced or inserted)",
                    None,
                    rec["record_hash"],
                )
            )
        else:
            seen_refs.add(key)

    meas_hashes = set()
    for m in data.measurements:
        counts["measurements"] += 1
        what = f"measurement {m.get('_id', m['record_hash'][:12])} ({m['filename']})"
        check_record(m, MEASUREMENT_HASH_FIELDS, "measurement", what)
        content = check_file(m["sha256"], m["item_number"], "measurement")
        if content is not None and len(content) != m["size_bytes"]:
            out.append(
                Break(
                    "altered-record",
                    cn,
                    m["item_number"],
                    None,
                    None,
                    what,
                    "size_bytes differs from the file",
                    str(len(content)),
                    str(m["size_bytes"]),
                )
            )
        meas_hashes.add(m["record_hash"])
    analysis_hashes = set()
    for a in data.analyses:
        counts["analyses"] += 1
        what = f"analysis {a.get('_id', a['record_hash'][:12])}"
        result = a.get("result_json")
        digest = sha256_hex(result) if result is not None else None
        if digest != a["result_sha256"]:
            out.append(
                Break(
                    "altered-result",
                    cn,
                    a["item_number"],
                    None,
                    None,
                    what,
                    "the stored result does not match its SHA-256",
                    a["result_sha256"],
                    digest,
                )
            )
        check_record(a, ANALYSIS_HASH_FIELDS, "analysis", what)
        if a["measurement_hash"] not in meas_hashes:
            out.append(
                Break(
                    "missing-record",
                    cn,
                    a["item_number"],
                    None,
                    None,
                    what,
                    "the measurement it analyses is missing",
                    a["measurement_hash"],
                    None,
                )
            )
        analysis_hashes.add(a["record_hash"])
    from workbench import crypto

    for f in data.findings:
        counts["findings_sheets"] += 1
        num = f["item_number"]
        what = f"findings sheet {f.get('_id', f['record_hash'][:12])}"
        check_record(f, FINDINGS_HASH_FIELDS, "findings", what)
        if f["analysis_hash"] not in analysis_hashes:
            out.append(
                Break(
                    "missing-record",
                    cn,
                    num,
                    None,
                    None,
                    what,
                    "the analysis it reports is missing",
                    f["analysis_hash"],
                    None,
                )
            )
        blobs = [
            check_file(f[k], num, k.replace("_sha256", ""))
            for k in ("pdf_sha256", "json_sha256", "signature_sha256", "record_sha256")
        ]
        if any(b is None for b in blobs):
            continue
        analyst = data.analysts.get(f["analyst_fingerprint"])
        pem = analyst["public_key_pem"].encode("ascii") if analyst else None
        revoked_at = analyst.get("revoked_at") if analyst else None
        revoked_before = revoked_at is not None and revoked_at <= f["recorded_at"]
        try:
            if analyst is not None and not isinstance(analyst.get("public_key_pem"), str):
                raise Unreadable("the analyst's public key is not text")
            crypto.verify_sheet(
                blobs[0],
                blobs[1],
                blobs[3],
                pem,
                revoked=revoked_before,
                expected_fingerprint=f["analyst_fingerprint"],
            )
            crypto.verify_raw_pdf_signature(blobs[0], blobs[2], pem)
            counts["signatures"] += 1
            sig_notes.append("ok")
            if analyst is not None and analyst.get("trusted") in (0, False):
                warnings.append(
                    f"{what}: signature intact, but key {f['analyst_fingerprint']} "
                    f"({analyst.get('name')}) is {analyst.get('provenance')} and not trusted "
                    "in this store ('workbench keys trust')"
                )
        except WorkbenchError as exc:
            out.append(Break("signature-invalid", cn, num, None, None, what, exc.problem))
            sig_notes.append("failed")
        except Unreadable as exc:
            out.append(Break("unreadable-record", cn, num, None, None, what, str(exc)))
            sig_notes.append("failed")
        if revoked_at is not None and not revoked_before:
            warnings.append(
                f"{what}: key {f['analyst_fingerprint']} was revoked at "
                f"{revoked_at}, after the sheet was recorded"
            )
    for (num, kind, ref), ev in chained.items():
        if (num, kind, ref) not in seen_refs:
            out.append(
                Break(
                    "missing-record",
                    cn,
                    num,
                    ev["seq"],
                    ev.get("id"),
                    f"{kind} record",
                    f"the custody event names a {kind} record that is not stored",
                    ref,
                    None,
                )
            )
    return out, counts, warnings, sig_notes
