"""Case bundles: one deterministic zip holding everything about a case.

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

import io
import json
import lzma
import os
import re
import struct
import tempfile
import zipfile
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from workbench.casefile.hashing import canonical_json, sha256_hex, utc_now
from workbench.casefile.validate import check_records
from workbench.casefile.verify import CaseData, check_case_data, load_case_data
from workbench.errors import BundleError, CaseFileError, InputError

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

BUNDLE_FORMAT = "workbench-case-bundle"
#: 2 adds the case's hash-chained status log to records/case.json.
_FORMAT_VERSION = 2
#: Largest single entry accepted on import (uncompressed).
MAX_ENTRY_BYTES: int = 512 * 1024 * 1024
#: Largest total (uncompressed) accepted on import.
MAX_BUNDLE_BYTES: int = 2 * 1024 * 1024 * 1024
#: Most entries accepted on import.
MAX_ENTRIES: int = 100_000
#: Largest compression ratio accepted for an entry over 1 MiB (deflate reaches
#: about 1000:1 on constant data; real spectra and records stay far below 100:1).
MAX_RATIO: int = 200
_RATIO_FLOOR = 1024 * 1024
#: What a damaged or hostile compressed stream can raise while being read.
_READ_ERRORS = (
    zipfile.BadZipFile,
    zipfile.LargeZipFile,
    OSError,
    EOFError,
    ValueError,
    RuntimeError,
    NotImplementedError,
    zlib.error,
    lzma.LZMAError,
    struct.error,
    KeyError,
    IndexError,
    OverflowError,
)
#: Fields of an analyst that travel in a bundle (trust and status are the store's own).
_ANALYST_FIELDS = ("fingerprint", "name", "role", "public_key_pem")

_RECORDS = (
    "case",
    "items",
    "events",
    "measurements",
    "analyses",
    "findings_sheets",
    "analysts",
)
_NAME_OK = re.compile(
    r"^(manifest\.json|manifest\.sha256|records/(" + "|".join(_RECORDS) + r")\.json"
    r"|files/[0-9a-f]{64})$"
)
_FIXED_TIME = (1980, 1, 1, 0, 0, 0)


@dataclass(frozen=True)
class ImportResult:
    """Outcome of :func:`import_bundle`."""

    case_number: str
    status: str  # "imported" or "already present"
    counts: dict[str, int]

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return {"case_number": self.case_number, "status": self.status, "counts": self.counts}


def _strip(rec: dict[str, Any], *drop: str) -> dict[str, Any]:
    return {k: v for k, v in rec.items() if k not in drop and k != "_id"}


def _records_of(data: CaseData) -> dict[str, Any]:
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
        "analysts": [{k: a[k] for k in _ANALYST_FIELDS} for _, a in sorted(data.analysts.items())],
    }


def _file_hashes(records: dict[str, Any]) -> set[str]:
    out = {m["sha256"] for m in records["measurements"]}
    out |= {a["result_sha256"] for a in records["analyses"]}
    for f in records["findings_sheets"]:
        out |= {f["pdf_sha256"], f["json_sha256"], f["signature_sha256"], f["record_sha256"]}
    return out


def _zip_bytes(entries: dict[str, bytes]) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for name in sorted(entries):
            info = zipfile.ZipInfo(name, date_time=_FIXED_TIME)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.create_system = 3
            info.external_attr = 0o100644 << 16
            zf.writestr(info, entries[name], compresslevel=6)
    return buf.getvalue()


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
    entries = _bundle_entries(data, store.file_bytes)
    payload = _zip_bytes(entries)
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


def _bundle_entries(data: CaseData, read: Any) -> dict[str, bytes]:
    records = _records_of(data)
    entries: dict[str, bytes] = {
        f"records/{name}.json": canonical_json(records[name]) for name in _RECORDS
    }
    results = {a["result_sha256"]: a["result_json"] for a in data.analyses}
    for sha in sorted(_file_hashes(records)):
        entries[f"files/{sha}"] = results[sha] if sha in results else read(sha)
    manifest = {
        "format": BUNDLE_FORMAT,
        "format_version": _FORMAT_VERSION,
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


# ---------------------------------------------------------------------- import
def _bad(path: Path, entry: str | None, problem: str, remedy: str = "") -> BundleError:
    where = f"{path.name}" + (f", entry {entry!r}" if entry else "")
    return BundleError(
        f"bundle {where}: {problem}",
        (remedy or "obtain an intact copy of the bundle from its sender")
        + "; nothing was imported",
    )


def _read_entries(path: Path, max_entry: int, max_total: int, max_entries: int) -> dict[str, bytes]:
    try:
        zf = zipfile.ZipFile(path)
    except FileNotFoundError as exc:
        raise BundleError(f"bundle {path} does not exist", "check the path") from exc
    except _READ_ERRORS as exc:
        raise _bad(path, None, f"not a readable zip archive, or truncated ({exc})") from exc
    with zf:
        infos = zf.infolist()
        if len(infos) > max_entries:
            raise _bad(path, None, f"{len(infos)} entries, more than the limit {max_entries}")
        names: set[str] = set()
        total = 0
        for info in infos:
            name = info.filename
            if (
                name.startswith(("/", "\\"))
                or ".." in name.split("/")
                or "\\" in name
                or (len(name) > 1 and name[1] == ":")
            ):
                raise _bad(
                    path,
                    name,
                    "unsafe entry name (absolute path or '..')",
                    "do not import this bundle; it tries to write outside its place",
                )
            if not _NAME_OK.match(name):
                raise _bad(path, name, "unexpected entry (not part of the bundle format)")
            if name in names:
                raise _bad(path, name, "entry appears twice")
            names.add(name)
            if info.file_size > max_entry:
                raise _bad(
                    path, name, f"entry is {info.file_size} bytes, over the limit {max_entry}"
                )
            total += info.file_size
            if total > max_total:
                raise _bad(path, name, f"bundle expands beyond {max_total} bytes")
            ratio = info.file_size / max(info.compress_size, 1)
            if info.file_size > _RATIO_FLOOR and ratio > MAX_RATIO:
                raise _bad(
                    path,
                    name,
                    f"entry expands {ratio:.0f}-fold ({info.compress_size} to {info.file_size} "
                    f"bytes), over the limit {MAX_RATIO} (a zip bomb?)",
                    "do not import this bundle",
                )
        out: dict[str, bytes] = {}
        for info in infos:
            try:
                with zf.open(info) as fh:
                    # Never more than the header declares (+1 to notice a lie).
                    data = fh.read(info.file_size + 1)
            except _READ_ERRORS as exc:
                raise _bad(path, info.filename, f"entry cannot be read ({exc})") from exc
            if len(data) != info.file_size:
                raise _bad(path, info.filename, "entry size differs from its header")
            out[info.filename] = data
    return out


def _parse(path: Path, entries: dict[str, bytes]) -> tuple[dict[str, Any], dict[str, bytes]]:
    for required in ("manifest.json", "manifest.sha256"):
        if required not in entries:
            raise _bad(path, required, "missing (every bundle has a manifest and its hash)")
    mbytes = entries["manifest.json"]
    expected = entries["manifest.sha256"].decode("ascii", "replace").strip()
    if sha256_hex(mbytes) != expected:
        raise _bad(
            path,
            "manifest.json",
            f"SHA-256 is {sha256_hex(mbytes)}, manifest.sha256 says {expected}",
        )
    try:
        manifest = json.loads(mbytes.decode("utf-8"))
        listed = {e["name"]: e for e in manifest["entries"]}
        if manifest["format"] != BUNDLE_FORMAT:
            raise ValueError(f"format {manifest['format']!r}")
        if manifest["format_version"] != _FORMAT_VERSION:
            raise ValueError(
                f"format version {manifest['format_version']!r} is not {_FORMAT_VERSION} (a "
                "version-1 bundle carries no status log; export it again with this version)"
            )
    except (ValueError, KeyError, TypeError, UnicodeDecodeError, RecursionError) as exc:
        raise _bad(path, "manifest.json", f"malformed ({exc})") from exc
    present = set(entries) - {"manifest.json", "manifest.sha256"}
    for name in sorted(present - set(listed)):
        raise _bad(path, name, "extra entry not listed in the manifest")
    for name in sorted(set(listed) - present):
        raise _bad(path, name, "listed in the manifest but missing")
    for name in sorted(listed):
        data = entries[name]
        if sha256_hex(data) != listed[name].get("sha256"):
            raise _bad(
                path,
                name,
                f"SHA-256 is {sha256_hex(data)}, the manifest says "
                f"{listed[name].get('sha256')} (altered)",
            )
        if len(data) != listed[name].get("size_bytes"):
            raise _bad(path, name, "size differs from the manifest")
        if name.startswith("files/") and sha256_hex(data) != name[6:]:
            raise _bad(path, name, "file content does not match its name")
    records: dict[str, Any] = {}
    for r in _RECORDS:
        name = f"records/{r}.json"
        if name not in entries:
            raise _bad(path, name, "missing")
        try:
            records[r] = json.loads(entries[name].decode("utf-8"))
        except (ValueError, UnicodeDecodeError, RecursionError) as exc:
            raise _bad(path, name, f"not valid JSON ({exc})") from exc
        want = dict if r == "case" else list
        if not isinstance(records[r], want) or (
            want is list and not all(isinstance(x, dict) for x in records[r])
        ):
            raise _bad(path, name, f"should hold a JSON {'object' if want is dict else 'list'}")
    if records["case"].get("case_number") != manifest.get("case_number"):
        raise _bad(path, "records/case.json", "case number differs from the manifest")
    files = {n[6:]: b for n, b in entries.items() if n.startswith("files/")}
    return records, files


def _case_data(path: Path, records: dict[str, Any], files: dict[str, bytes]) -> CaseData:
    try:
        events: dict[str, list[dict[str, Any]]] = {i["item_number"]: [] for i in records["items"]}
        for e in records["events"]:
            if e["item_number"] not in events:
                raise ValueError(f"event for unknown item {e['item_number']!r}")
            events[e["item_number"]].append(dict(e))
        for evs in events.values():
            evs.sort(key=lambda e: e["seq"])
        analyses = [
            {**a, "result_json": files.get(a["result_sha256"])} for a in records["analyses"]
        ]
        analysts = {a["fingerprint"]: dict(a) for a in records["analysts"]}
        earlier: set[str] = set()
        for it in records["items"]:
            parent = it.get("parent_item_number")
            if parent is not None and parent not in earlier:
                raise ValueError(
                    f"item {it['item_number']!r} names parent {parent!r}, not listed before it"
                )
            if it["item_number"] in earlier:
                raise ValueError(f"item {it['item_number']!r} appears twice")
            earlier.add(it["item_number"])
        case_number = records["case"]["case_number"]
        for group in ("items", "measurements", "findings_sheets"):
            for rec in records[group]:
                if rec.get("case_number") != case_number:
                    raise ValueError(f"a {group} record belongs to another case")
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise _bad(path, "records/", f"records malformed ({exc})") from exc
    return CaseData(
        case=dict(records["case"]),
        items=[dict(i) for i in records["items"]],
        events=events,
        measurements=[dict(m) for m in records["measurements"]],
        analyses=analyses,
        findings=[dict(f) for f in records["findings_sheets"]],
        analysts=analysts,
    )


def _check_analysts(path: Path, data: CaseData) -> None:
    from cryptography.hazmat.primitives import serialization

    for fp, a in data.analysts.items():
        try:
            key = serialization.load_pem_public_key(str(a["public_key_pem"]).encode("ascii"))
            raw = key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
        except (ValueError, TypeError, KeyError) as exc:
            raise _bad(path, "records/analysts.json", f"public key of {fp} unreadable") from exc
        if "SHA256:" + sha256_hex(raw) != fp:
            raise _bad(path, "records/analysts.json", f"public key does not match {fp}")


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
    entries = _read_entries(path, max_entry_bytes, max_total_bytes, max_entries)
    records, files = _parse(path, entries)
    data = _case_data(path, records, files)
    try:
        check_records(data)
    except InputError as exc:
        raise _bad(path, "records/", f"a field is not valid: {exc.problem}") from exc
    _check_analysts(path, data)
    referenced = _file_hashes(records)
    for sha in sorted(set(files) - referenced):
        raise _bad(path, f"files/{sha}", "file not referenced by any record")
    try:
        breaks, counts, _w, _s = check_case_data(data, files.get)
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise _bad(path, "records/", f"records malformed ({exc})") from exc
    if breaks:
        b = breaks[0]
        raise _bad(path, "records/", f"verification failed: {b.describe()}")
    case_number = data.case["case_number"]
    exists = store.connection.execute(
        "SELECT 1 FROM cases WHERE case_number=?", (case_number,)
    ).fetchone()
    if exists:
        mine = _records_of(load_case_data(store, case_number))
        if canonical_json(mine) == canonical_json(_records_of(data)):
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
            raise _bad(path, "records/analysts.json", f"key {fp} differs from the store's")
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
