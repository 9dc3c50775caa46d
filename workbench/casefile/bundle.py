"""Case bundles: one deterministic zip holding everything about a case.

The layout (entries, manifest, records, files) is in
:mod:`~workbench.casefile.bundle_format`; reading an untrusted zip safely is in
:mod:`~workbench.casefile.bundle_read`. This module exports and imports.

:func:`import_bundle` checks everything *before* writing anything: entry names
(no traversal, nothing unexpected), sizes, the manifest and its hash,
completeness both ways, every entry's hash, every file's name = its hash,
every record hash and custody chain (with the same code as ``custody
verify``), every field against the rules of direct entry
(:mod:`workbench.casefile.validate`), signatures, and that every file is
referenced. Zip bombs are refused before anything is unpacked (declared sizes
and each entry's compression ratio), and reading is capped at the declared
size. Then it writes all rows in one transaction, with the files staged
beside the store and moved into place only after the commit (a refusal
removes them): all or nothing in both the database and ``files/``.

Keys carried by a bundle (``records/analysts.json``: name, role, public key,
fingerprint; the signers' and the reviewers') arrive *imported* and untrusted;
only a recorded act of a local administrator (``workbench keys trust``) makes
them count in this store.

Format 3 also carries the analyst's decisions (``records/decisions.json``) and
the technical reviews (``records/reviews.json``, the reviewers' signature
files under ``files/``), so that a sheet moved to another lab keeps its
countersignature and the decisions ``findings verify --store`` checks against
(:mod:`~workbench.casefile.bundle_review`). On import they are held to the
rules of direct entry, every decision chain is re-walked with the store's own
code, every review is re-hashed and found in its ``reviewed`` custody event,
the decisions printed on each signed sheet must be the ones carried, and each
approval's signature files must verify against the reviewer's key in the
bundle; a refusal names the record (``decision 2 on analysis 1a2b…``,
``review by <name> of findings sheet 9f8e…``). Export runs the same checks
and refuses a store whose decisions or reviews are broken. A version-2
bundle (no decisions, no reviews) is still imported as before; a case that came
in one with a ``reviewed`` custody event (its review left behind) and holds no
decisions or reviews is exported as version 2 again, byte for byte as it came.
"""

from __future__ import annotations

import json
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from workbench.casefile.bundle_format import (
    BUNDLE_FORMAT,
    FORMAT_VERSION,
    BundleData,
    bundle_entries,
    file_hashes,
    load_bundle_data,
    records_of,
    zip_bytes,
)
from workbench.casefile.bundle_read import (
    MAX_BUNDLE_BYTES,
    MAX_ENTRIES,
    MAX_ENTRY_BYTES,
    MAX_RATIO,
    bad_bundle,
    case_data_from_records,
    check_bundle_analysts,
    parse_entries,
    read_entries,
)
from workbench.casefile.bundle_review import (
    DECISIONS_ENTRY,
    REVIEWS_ENTRY,
    came_in_format_2,
    check_decision_fields,
    decision_review_problems,
    insert_decisions_and_reviews,
)
from workbench.casefile.casecheck import check_case_data
from workbench.casefile.hashing import canonical_json, utc_now
from workbench.casefile.validate import check_records
from workbench.errors import CaseFileError, InputError, WorkbenchError

__all__ = [
    "BUNDLE_FORMAT",
    "MAX_BUNDLE_BYTES",
    "MAX_ENTRIES",
    "MAX_ENTRY_BYTES",
    "MAX_RATIO",
    "ImportResult",
    "export_bundle",
    "import_bundle",
]


@dataclass(frozen=True)
class ImportResult:
    """Outcome of :func:`import_bundle`."""

    case_number: str
    status: str  # "imported" or "already present"
    counts: dict[str, int]

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return {"case_number": self.case_number, "status": self.status, "counts": self.counts}


def export_bundle(store: Any, case_number: str, out_path: Path | str) -> Path:
    """Write a case to one deterministic zip.

    Parameters
    ----------
    store : CaseStore
        The open store.
    case_number : str
        The case.
    out_path : Path or str
        Where to write (an existing file is refused: nothing is overwritten).

    Returns
    -------
    Path
        The bundle written.

    Raises
    ------
    StoreIntegrityError
        If the case fails verification or a stored file does not match its hash
        (a broken case is not exported).
    """
    from workbench.errors import StoreIntegrityError

    out = Path(out_path)
    if out.exists():
        raise CaseFileError(
            f"{out} already exists", "choose a new file name; bundles are never overwritten"
        )
    report = store.verify(case_number)
    if not report.ok:
        raise StoreIntegrityError(
            f"case {case_number} fails verification: {report.first_break.describe()}",
            "run 'workbench custody verify' and restore the store before exporting",
        )
    data = load_bundle_data(store, store.get_case(case_number).case_number)
    problems = decision_review_problems(data, _stored_file(store))
    version = FORMAT_VERSION
    if problems and came_in_format_2(data, problems):
        # Its reviews were left behind by the format-2 bundle it came in: pass it on as
        # it came (format 2, the same bytes), never as a format-3 bundle missing reviews.
        version = 2
    elif problems:
        raise StoreIntegrityError(
            f"case {case_number}: {problems[0][1]}",
            "restore the store from backup before exporting",
        )
    entries = bundle_entries(data, store.file_bytes, version)
    payload = zip_bytes(entries)
    out.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".zip", dir=out.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(payload)
            fh.flush()
            os.fsync(fh.fileno())
        if out.exists():
            raise CaseFileError(f"{out} appeared while writing", "choose a new file name")
        os.replace(tmp, out)
        tmp = ""
    finally:
        if tmp and os.path.exists(tmp):
            os.unlink(tmp)
    return out


def import_bundle(
    path: Path | str,
    store: Any,
    *,
    max_entry_bytes: int = MAX_ENTRY_BYTES,
    max_total_bytes: int = MAX_BUNDLE_BYTES,
    max_entries: int = MAX_ENTRIES,
) -> ImportResult:
    """Verify a bundle completely, then import its case into ``store``.

    Parameters
    ----------
    path : Path or str
        The bundle.
    store : CaseStore
        Destination store.
    max_entry_bytes, max_total_bytes, max_entries : int
        Size limits.

    Returns
    -------
    ImportResult
        ``status`` is ``"already present"`` when the store holds an identical case.

    Raises
    ------
    BundleError
        Naming the entry and what is wrong; nothing is written.
    CaseFileError
        If the store holds a different case with the same number.
    """
    path = Path(path)
    entries = read_entries(path, max_entry_bytes, max_total_bytes, max_entries)
    records, files = parse_entries(path, entries)
    data = case_data_from_records(path, records, files)
    try:
        check_records(data)
    except InputError as exc:
        raise bad_bundle(path, "records/", f"a field is not valid: {exc.problem}") from exc
    check_bundle_analysts(path, data)
    try:
        check_decision_fields(data)
    except InputError as exc:
        entry = REVIEWS_ENTRY if exc.problem.startswith("review") else DECISIONS_ENTRY
        raise bad_bundle(path, entry, f"a field is not valid: {exc.problem}") from exc
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise bad_bundle(path, "records/", f"records malformed ({exc!r})") from exc
    referenced = file_hashes(records)
    for sha in sorted(set(files) - referenced):
        raise bad_bundle(path, f"files/{sha}", "file not referenced by any record")
    try:
        breaks, counts, _w, _s = check_case_data(data, files.get)
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise bad_bundle(path, "records/", f"records malformed ({exc})") from exc
    if breaks:
        b = breaks[0]
        raise bad_bundle(path, "records/", f"verification failed: {b.describe()}")
    try:
        problems = decision_review_problems(data, files.get)
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise bad_bundle(path, "records/", f"records malformed ({exc!r})") from exc
    for entry, problem in problems[:1]:
        raise bad_bundle(path, entry, f"verification failed: {problem}")
    counts = {**counts, "decisions": len(data.decisions), "reviews": len(data.reviews)}
    case_number = data.case["case_number"]
    exists = store.connection.execute(
        "SELECT 1 FROM cases WHERE case_number=?", (case_number,)
    ).fetchone()
    if exists:
        version = data.format_version
        mine = records_of(load_bundle_data(store, case_number), version)
        if canonical_json(mine) == canonical_json(records_of(data, version)):
            return ImportResult(case_number, "already present", counts)
        raise CaseFileError(
            f"case {case_number} already exists in {store.root} and differs from the bundle",
            "import into another store, or compare the two with 'case show'; nothing was imported",
        )
    for fp, a in data.analysts.items():
        row = store.connection.execute(
            "SELECT public_key_pem FROM analysts WHERE fingerprint=?", (fp,)
        ).fetchone()
        if row is not None and row[0].strip() != str(a["public_key_pem"]).strip():
            raise bad_bundle(path, "records/analysts.json", f"key {fp} differs from the store's")
    source = f"case {case_number}, bundle {path.name}"
    staging = store.files.stage()
    try:
        for sha in sorted(referenced):
            staging.put(files[sha])
        store._write(lambda conn: _insert(conn, data, source))
    except BaseException:
        staging.discard()
        raise
    # Committed: the rows name these files; move them into place.
    staging.commit()
    return ImportResult(case_number, "imported", counts)


def _stored_file(store: Any) -> Any:
    """``sha256 -> bytes or None`` over the store's files (None when missing)."""

    def get(sha: str) -> bytes | None:
        try:
            return bytes(store.file_bytes(sha))
        except WorkbenchError:
            return None

    return get


def _insert(conn: Any, data: BundleData, source: str) -> None:
    from workbench.casefile import ledger
    from workbench.casefile.analysts import insert_imported_analyst

    now = utc_now()

    def led(table: str, row_id: int) -> None:
        ledger.append(conn, table, row_id, "insert", now)

    c = data.case
    cur = conn.execute(
        "INSERT INTO cases (case_number, title, requesting_party, status, created_at, "
        "record_hash, status_log) VALUES (?,?,?,?,?,?,?)",
        (
            c["case_number"],
            c["title"],
            c["requesting_party"],
            c["status"],
            c["created_at"],
            c["record_hash"],
            json.dumps(c["status_log"]),
        ),
    )
    case_id = cur.lastrowid
    led("cases", case_id)
    item_ids: dict[str, int] = {}
    for it in data.items:
        cur = conn.execute(
            "INSERT INTO items (case_id, item_number, description, parent_item_id, "
            "seal_numbers, storage_location, created_at, record_hash) VALUES (?,?,?,?,?,?,?,?)",
            (
                case_id,
                it["item_number"],
                it["description"],
                item_ids.get(it.get("parent_item_number") or ""),
                json.dumps(list(it["seal_numbers"])),
                it["storage_location"],
                it["created_at"],
                it["record_hash"],
            ),
        )
        item_ids[it["item_number"]] = cur.lastrowid
        led("items", cur.lastrowid)
    cols = (
        "seq",
        "kind",
        "at",
        "actor",
        "from_party",
        "to_party",
        "location",
        "seal_state",
        "seal_number",
        "note",
        "corrects_seq",
        "ref_kind",
        "ref_key",
        "ref_hash",
        "recorded_at",
        "prev_hash",
        "hash",
    )
    for it in data.items:
        for e in data.events[it["item_number"]]:
            cur = conn.execute(
                f"INSERT INTO custody_events (item_id, {', '.join(cols)}) "
                f"VALUES (?{', ?' * len(cols)})",
                (item_ids[it["item_number"]], *(e.get(k) for k in cols)),
            )
            led("custody_events", cur.lastrowid)
    meas_ids: dict[str, int] = {}
    for m in data.measurements:
        cur = conn.execute(
            "INSERT INTO measurements (item_id, sha256, filename, size_bytes, technique, "
            "instrument, settings, operator, measured_at, recorded_at, record_hash) "
            "VALUES (?,?,?,?,?,?,?,?,?,?,?)",
            (
                item_ids[m["item_number"]],
                m["sha256"],
                m["filename"],
                m["size_bytes"],
                m["technique"],
                m["instrument"],
                canonical_json(m["settings"]).decode("utf-8"),
                m["operator"],
                m["measured_at"],
                m["recorded_at"],
                m["record_hash"],
            ),
        )
        meas_ids[m["record_hash"]] = cur.lastrowid
        led("measurements", cur.lastrowid)
    analysis_ids: dict[str, int] = {}
    for a in data.analyses:
        cur = conn.execute(
            "INSERT INTO analyses (measurement_id, parameters, reference_sets, result_json, "
            "result_sha256, software_version, analyst, created_at, record_hash) "
            "VALUES (?,?,?,?,?,?,?,?,?)",
            (
                meas_ids[a["measurement_hash"]],
                canonical_json(a["parameters"]).decode("utf-8"),
                canonical_json(a["reference_sets"]).decode("utf-8"),
                a["result_json"],
                a["result_sha256"],
                a["software_version"],
                a["analyst"],
                a["created_at"],
                a["record_hash"],
            ),
        )
        analysis_ids[a["record_hash"]] = cur.lastrowid
        led("analyses", cur.lastrowid)
    for fp, a in sorted(data.analysts.items()):
        if conn.execute("SELECT 1 FROM analysts WHERE fingerprint=?", (fp,)).fetchone():
            continue  # already known here: its local provenance and trust stay as they are
        insert_imported_analyst(conn, {**a, "fingerprint": fp}, source, now)
    sheet_ids: dict[str, int] = {}
    for f in data.findings:
        cur = conn.execute(
            "INSERT INTO findings_sheets (analysis_id, analyst_fingerprint, analyst, pdf_sha256, "
            "json_sha256, signature_sha256, record_sha256, issued_at, recorded_at, record_hash) "
            "VALUES (?,?,?,?,?,?,?,?,?,?)",
            (
                analysis_ids[f["analysis_hash"]],
                f["analyst_fingerprint"],
                f["analyst"],
                f["pdf_sha256"],
                f["json_sha256"],
                f["signature_sha256"],
                f["record_sha256"],
                f["issued_at"],
                f["recorded_at"],
                f["record_hash"],
            ),
        )
        sheet_ids[f["record_hash"]] = cur.lastrowid
        led("findings_sheets", cur.lastrowid)
    insert_decisions_and_reviews(conn, data, analysis_ids, sheet_ids, led)
