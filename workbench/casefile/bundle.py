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
fingerprint) arrive *imported* and untrusted; only a recorded act of a local
administrator (``workbench keys trust``) makes them count in this store.
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
    bundle_entries,
    file_hashes,
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
from workbench.casefile.casecheck import check_case_data
from workbench.casefile.casedata import CaseData, load_case_data
from workbench.casefile.hashing import canonical_json, utc_now
from workbench.casefile.validate import check_records
from workbench.errors import CaseFileError, InputError

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
    data = load_case_data(store, store.get_case(case_number).case_number)
    entries = bundle_entries(data, store.file_bytes)
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
    case_number = data.case["case_number"]
    exists = store.connection.execute(
        "SELECT 1 FROM cases WHERE case_number=?", (case_number,)
    ).fetchone()
    if exists:
        mine = records_of(load_case_data(store, case_number))
        if canonical_json(mine) == canonical_json(records_of(data)):
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


def _insert(conn: Any, data: CaseData, source: str) -> None:
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
        led("findings_sheets", cur.lastrowid)
