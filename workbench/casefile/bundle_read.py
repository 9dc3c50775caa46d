"""Reading an untrusted case bundle: zip limits, manifest, entries and records.

Nothing here writes. :func:`read_entries` refuses unsafe or unexpected entry
names and zip bombs (declared sizes, each entry's compression ratio) before
anything is unpacked, and never reads more than a header declares;
:func:`parse_entries` checks the manifest, its hash, completeness both ways
and every entry's hash; :func:`case_data_from_records` turns the records into
:class:`~workbench.casefile.bundle_format.BundleData` for the same checks as
``custody verify``; both bundle format versions 2 and 3 are read (2 carries no
decisions or reviews); :func:`check_bundle_analysts` checks each carried key against its
fingerprint. Every refusal is a :class:`~workbench.errors.BundleError` naming
the entry (:func:`bad_bundle`).
"""

from __future__ import annotations

import json
import lzma
import struct
import zipfile
import zlib
from pathlib import Path
from typing import Any

from workbench.casefile.bundle_format import (
    BUNDLE_FORMAT,
    NAME_OK,
    READABLE_VERSIONS,
    BundleData,
    records_in,
)
from workbench.casefile.hashing import sha256_hex
from workbench.errors import BundleError

__all__ = [
    "MAX_BUNDLE_BYTES",
    "MAX_ENTRIES",
    "MAX_ENTRY_BYTES",
    "MAX_RATIO",
    "bad_bundle",
    "case_data_from_records",
    "check_bundle_analysts",
    "parse_entries",
    "read_entries",
]

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


def bad_bundle(path: Path, entry: str | None, problem: str, remedy: str = "") -> BundleError:
    """Return the BundleError for a refused bundle, naming the entry; nothing is imported."""
    where = f"{path.name}" + (f", entry {entry!r}" if entry else "")
    return BundleError(
        f"bundle {where}: {problem}",
        (remedy or "obtain an intact copy of the bundle from its sender")
        + "; nothing was imported",
    )


def read_entries(path: Path, max_entry: int, max_total: int, max_entries: int) -> dict[str, bytes]:
    """Read every entry of a bundle zip, refusing unsafe names, excess sizes and zip bombs first."""
    try:
        zf = zipfile.ZipFile(path)
    except FileNotFoundError as exc:
        raise BundleError(f"bundle {path} does not exist", "check the path") from exc
    except _READ_ERRORS as exc:
        raise bad_bundle(path, None, f"not a readable zip archive, or truncated ({exc})") from exc
    with zf:
        infos = zf.infolist()
        if len(infos) > max_entries:
            raise bad_bundle(path, None, f"{len(infos)} entries, more than the limit {max_entries}")
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
                raise bad_bundle(
                    path,
                    name,
                    "unsafe entry name (absolute path or '..')",
                    "do not import this bundle; it tries to write outside its place",
                )
            if not NAME_OK.match(name):
                raise bad_bundle(path, name, "unexpected entry (not part of the bundle format)")
            if name in names:
                raise bad_bundle(path, name, "entry appears twice")
            names.add(name)
            if info.file_size > max_entry:
                raise bad_bundle(
                    path, name, f"entry is {info.file_size} bytes, over the limit {max_entry}"
                )
            total += info.file_size
            if total > max_total:
                raise bad_bundle(path, name, f"bundle expands beyond {max_total} bytes")
            ratio = info.file_size / max(info.compress_size, 1)
            if info.file_size > _RATIO_FLOOR and ratio > MAX_RATIO:
                raise bad_bundle(
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
                raise bad_bundle(path, info.filename, f"entry cannot be read ({exc})") from exc
            if len(data) != info.file_size:
                raise bad_bundle(path, info.filename, "entry size differs from its header")
            out[info.filename] = data
    return out


def parse_entries(path: Path, entries: dict[str, bytes]) -> tuple[dict[str, Any], dict[str, bytes]]:
    """Check the manifest and every entry's hash; return ``(records, files by SHA-256)``."""
    for required in ("manifest.json", "manifest.sha256"):
        if required not in entries:
            raise bad_bundle(path, required, "missing (every bundle has a manifest and its hash)")
    mbytes = entries["manifest.json"]
    expected = entries["manifest.sha256"].decode("ascii", "replace").strip()
    if sha256_hex(mbytes) != expected:
        raise bad_bundle(
            path,
            "manifest.json",
            f"SHA-256 is {sha256_hex(mbytes)}, manifest.sha256 says {expected}",
        )
    try:
        manifest = json.loads(mbytes.decode("utf-8"))
        listed = {e["name"]: e for e in manifest["entries"]}
        if manifest["format"] != BUNDLE_FORMAT:
            raise ValueError(f"format {manifest['format']!r}")
        version = manifest["format_version"]
        if isinstance(version, bool) or version not in READABLE_VERSIONS:
            raise ValueError(
                f"format version {version!r} is not one of {READABLE_VERSIONS} (a "
                "version-1 bundle carries no status log; export it again with this version)"
            )
    except (ValueError, KeyError, TypeError, UnicodeDecodeError, RecursionError) as exc:
        raise bad_bundle(path, "manifest.json", f"malformed ({exc})") from exc
    present = set(entries) - {"manifest.json", "manifest.sha256"}
    for name in sorted(present - set(listed)):
        raise bad_bundle(path, name, "extra entry not listed in the manifest")
    for name in sorted(set(listed) - present):
        raise bad_bundle(path, name, "listed in the manifest but missing")
    for name in sorted(listed):
        data = entries[name]
        if sha256_hex(data) != listed[name].get("sha256"):
            raise bad_bundle(
                path,
                name,
                f"SHA-256 is {sha256_hex(data)}, the manifest says "
                f"{listed[name].get('sha256')} (altered)",
            )
        if len(data) != listed[name].get("size_bytes"):
            raise bad_bundle(path, name, "size differs from the manifest")
        if name.startswith("files/") and sha256_hex(data) != name[6:]:
            raise bad_bundle(path, name, "file content does not match its name")
    records: dict[str, Any] = {"format_version": version}
    wanted = records_in(version)
    for name in sorted(n for n in listed if n.startswith("records/")):
        if name[len("records/") : -len(".json")] not in wanted:
            raise bad_bundle(path, name, f"not part of bundle format version {version}")
    for r in wanted:
        name = f"records/{r}.json"
        if name not in entries:
            raise bad_bundle(path, name, "missing")
        try:
            records[r] = json.loads(entries[name].decode("utf-8"))
        except (ValueError, UnicodeDecodeError, RecursionError) as exc:
            raise bad_bundle(path, name, f"not valid JSON ({exc})") from exc
        want = dict if r == "case" else list
        if not isinstance(records[r], want) or (
            want is list and not all(isinstance(x, dict) for x in records[r])
        ):
            raise bad_bundle(
                path, name, f"should hold a JSON {'object' if want is dict else 'list'}"
            )
    if records["case"].get("case_number") != manifest.get("case_number"):
        raise bad_bundle(path, "records/case.json", "case number differs from the manifest")
    files = {n[6:]: b for n, b in entries.items() if n.startswith("files/")}
    return records, files


def case_data_from_records(
    path: Path, records: dict[str, Any], files: dict[str, bytes]
) -> BundleData:
    """Return a bundle's records as :class:`BundleData` (structure checked, nothing verified)."""
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
        raise bad_bundle(path, "records/", f"records malformed ({exc})") from exc
    return BundleData(
        case=dict(records["case"]),
        items=[dict(i) for i in records["items"]],
        events=events,
        measurements=[dict(m) for m in records["measurements"]],
        analyses=analyses,
        findings=[dict(f) for f in records["findings_sheets"]],
        analysts=analysts,
        decisions=[dict(d) for d in records.get("decisions", [])],
        reviews=[dict(r) for r in records.get("reviews", [])],
        format_version=records["format_version"],
    )


def check_bundle_analysts(path: Path, data: BundleData) -> None:
    """Check that every carried public key matches its fingerprint."""
    from cryptography.hazmat.primitives import serialization

    for fp, a in data.analysts.items():
        try:
            key = serialization.load_pem_public_key(str(a["public_key_pem"]).encode("ascii"))
            raw = key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
        except (ValueError, TypeError, KeyError) as exc:
            raise bad_bundle(
                path, "records/analysts.json", f"public key of {fp} unreadable"
            ) from exc
        if "SHA256:" + sha256_hex(raw) != fp:
            raise bad_bundle(path, "records/analysts.json", f"public key does not match {fp}")
