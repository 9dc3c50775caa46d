"""Hostile-tester harness for the case store (issue 11): counts, not assertions.

Re-runs the outside attack run's store categories against whatever
``workbench`` is importable, so the same script measures a checkout of the
base commit and this branch::

    uv run python tests/casefile/attack_harness.py                # this checkout
    PYTHONPATH=/tmp/store-base uv run python tests/casefile/attack_harness.py

It only uses the public API and CLI that both versions share. Categories:

* ``store``: seeded tamperings of every table (triggers dropped, foreign keys
  off): delete each row; change each column of each row; a BLOB in each text
  column; invalid JSON in each JSON column; each 4 KiB page zeroed. A
  tampering *got through* when ``custody verify`` exits 0, and is a
  *traceback* when anything but a WorkbenchError escapes.
* ``flips``: every bit of a signed sheet's ``.sig.json`` and a seeded sample
  of bits of its PDF and JSON; *got through* = verifies as VALID.
* ``bundles``: crafted bundles; *got through* = imported (or an imported key
  verifies a sheet as VALID), or refused leaving files behind.
* ``cli``: verify on a path with no store (creates it?), ``--passphrase``
  echoed.

The suite's own regression tests (test_ledger, test_schema, test_bundle,
test_signing) assert the same properties on this branch.
"""

from __future__ import annotations

import contextlib
import io
import json
import shutil
import sqlite3
import sys
import tempfile
import zipfile
from collections import Counter
from pathlib import Path

import numpy as np

from workbench.casefile import CaseStore, export_bundle, import_bundle
from workbench.cli import main
from workbench.errors import WorkbenchError

CASE = "ATK-2026-0001"
RNG = np.random.default_rng(20261202)


def build(root: Path) -> dict:
    """An invented case with a row in every table, as both versions can write it."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from workbench.findings.signing import sign_sheet

    key = Ed25519PrivateKey.from_private_bytes(bytes([11]) * 32)  # fixed invented key
    pem = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    with CaseStore.open(root) as s:
        s.create_case(CASE, "Invented attack case", "Invented requester")
        s.add_item(CASE, "1", "invented parcel", seal_numbers=["AT-1"], received_by="Ana",
                   received_from="PC Bo", at="2026-02-03T09:00:00Z")  # fmt: skip
        s.add_custody_event(f"{CASE}/1", "opened", "Ana", seal_number="AT-1",
                            at="2026-02-03T10:00:00Z")  # fmt: skip
        s.add_item(CASE, "1.1", "invented chip", parent_item="1", received_by="Ana",
                   at="2026-02-03T10:30:00Z")  # fmt: skip
        m = s.add_measurement(f"{CASE}/1.1", b"wavelength_nm,intensity\n589.0,1200\n",
                              "chip.csv", "LIBS", "Bench", {"gate_us": 1.0}, "Ana",
                              "2026-02-03T11:00:00Z")  # fmt: skip
        a = s.add_analysis(m.id, parameters={"tol_nm": 0.05}, reference_sets=[{"id": "x"}],
                           result_json=b'{"elements":["Na"]}', software_version="0",
                           analyst="Ana")  # fmt: skip
        analyst = s.register_analyst("Ana", "examiner", pem)
        pdf = b"%PDF-1.4\n% invented sheet\n" + bytes(range(256)) + b"\n%%EOF\n"
        js = b'{"finding":"Na present","format":"invented"}'
        signed = sign_sheet(pdf, js, key, signer="Ana", signed_at="2026-02-04T09:00:00Z")
        s.add_findings_sheet(a.id, analyst_fingerprint=analyst.fingerprint, pdf_bytes=pdf,
                             json_bytes=js, signature_raw=signed.signature_raw,
                             signature_record=signed.record,
                             issued_at="2026-02-04T09:00:00Z")  # fmt: skip
        s.set_case_status(CASE, "closed")
    return {"pdf": pdf, "json": js, "record": signed.record, "pem": pem}


def cli(*args: str) -> tuple[str, int | None]:
    """Run the CLI in-process: ('exit', code) or ('traceback', None)."""
    err = io.StringIO()
    try:
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
            code = main(list(args))
    except SystemExit as exc:
        return "exit", int(exc.code or 0)
    except Exception:  # what a user would see as a traceback
        return "traceback", None
    if "Traceback" in err.getvalue():
        return "traceback", None
    return "exit", code


def raw(root: Path) -> sqlite3.Connection:
    conn = sqlite3.connect(root / "cases.sqlite", isolation_level=None)
    conn.execute("PRAGMA foreign_keys=OFF")
    for (name,) in conn.execute("SELECT name FROM sqlite_master WHERE type='trigger'").fetchall():
        conn.execute(f'DROP TRIGGER "{name}"')
    return conn


def tables(conn: sqlite3.Connection) -> list[str]:
    q = "SELECT name FROM sqlite_master WHERE type='table' AND name NOT LIKE 'sqlite_%'"
    return sorted(r[0] for r in conn.execute(q))


def other_value(value: object) -> object:
    """A seeded different value of the same type."""
    if isinstance(value, int) and not isinstance(value, bool):
        return value + int(RNG.integers(1, 5))
    if isinstance(value, float):
        return value + 1.0
    if isinstance(value, bytes):
        b = bytearray(value or b"\x00")
        b[int(RNG.integers(0, len(b)))] ^= 1
        return bytes(b)
    if isinstance(value, str):
        if value == "":
            return "x"
        i = int(RNG.integers(0, len(value)))
        return value[:i] + ("Z" if value[i] != "Z" else "Y") + value[i + 1 :]
    return "x"  # NULL becomes text


def store_tamperings(work: Path, pristine: Path) -> Counter:
    out: Counter = Counter()
    n = 0

    def attempt(label: str, fn) -> None:
        nonlocal n
        n += 1
        root = work / f"t{n}"
        shutil.copytree(pristine, root)
        try:
            fn(root)
        except sqlite3.IntegrityError:
            out[f"{label}: not applicable"] += 1
            shutil.rmtree(root)
            return
        kind, code = cli("custody", "verify", "--store", str(root))
        if kind == "traceback":
            out[f"{label}: traceback"] += 1
        elif code == 0:
            out[f"{label}: got through"] += 1
        elif code == 4:
            out[f"{label}: detected"] += 1
        else:
            out[f"{label}: exit {code}"] += 1
        shutil.rmtree(root)

    conn = sqlite3.connect(pristine / "cases.sqlite")
    layout = {}
    for t in tables(conn):
        cols = [(r[1], r[2].upper()) for r in conn.execute(f'PRAGMA table_info("{t}")')]
        rows = [r[0] for r in conn.execute(f'SELECT rowid FROM "{t}"')]
        layout[t] = (cols, rows)
    conn.close()

    for t, (cols, rows) in layout.items():
        for rid in rows:

            def delete(root, t=t, rid=rid):
                c = raw(root)
                c.execute(f'DELETE FROM "{t}" WHERE rowid=?', (rid,))
                c.close()

            attempt("delete a row", delete)
            for col, _typ in cols:

                def change(root, t=t, rid=rid, col=col):
                    c = raw(root)
                    sel = f'SELECT "{col}" FROM "{t}" WHERE rowid=?'
                    (value,) = c.execute(sel, (rid,)).fetchone()
                    upd = f'UPDATE "{t}" SET "{col}"=? WHERE rowid=?'
                    c.execute(upd, (other_value(value), rid))
                    c.close()

                attempt("change a field", change)
        for col, typ in cols:
            if typ != "TEXT" or not rows:
                continue

            def blob(root, t=t, col=col, rid=rows[0]):
                c = raw(root)
                c.execute(f'UPDATE "{t}" SET "{col}"=? WHERE rowid=?', (b"\x00\xffblob", rid))
                c.close()

            attempt("BLOB in a text field", blob)
    for t, col in [("items", "seal_numbers"), ("measurements", "settings"),
                   ("analyses", "parameters"), ("analyses", "reference_sets")]:  # fmt: skip

        def bad_json(root, t=t, col=col):
            c = raw(root)
            c.execute(f'UPDATE "{t}" SET "{col}"=?', ("{not json",))
            c.close()

        attempt("invalid JSON", bad_json)
    pages = (pristine / "cases.sqlite").stat().st_size // 4096
    for p in range(pages):

        def zero(root, p=p):
            db = root / "cases.sqlite"
            data = bytearray(db.read_bytes())
            data[p * 4096 : (p + 1) * 4096] = bytes(4096)
            db.write_bytes(bytes(data))

        attempt("zeroed 4 KiB page", zero)
    return out


def sheet_flips(info: dict) -> Counter:
    from workbench.findings.signing import verify_sheet

    out: Counter = Counter()

    def check(label: str, pdf: bytes, js: bytes, rec: bytes) -> None:
        try:
            verify_sheet(pdf, js, rec, info["pem"])
        except WorkbenchError:
            out[f"{label}: refused"] += 1
            return
        except Exception:
            out[f"{label}: traceback"] += 1
            return
        out[f"{label}: got through (VALID)"] += 1

    rec = info["record"]
    for bit in range(len(rec) * 8):
        b = bytearray(rec)
        b[bit // 8] ^= 1 << (bit % 8)
        check("flip a .sig.json bit", info["pdf"], info["json"], bytes(b))
    for name in ("pdf", "json"):
        data = info[name]
        for bit in RNG.choice(len(data) * 8, size=min(2000, len(data) * 8), replace=False):
            b = bytearray(data)
            b[int(bit) // 8] ^= 1 << (int(bit) % 8)
            args = {**{k: info[k] for k in ("pdf", "json")}, name: bytes(b)}
            check(f"flip a {name.upper()} bit", args["pdf"], args["json"], rec)
    return out


def _entries(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as zf:
        return {n: zf.read(n) for n in zf.namelist()}


def _write(path: Path, entries: dict[str, bytes], method: int = zipfile.ZIP_DEFLATED) -> Path:
    with zipfile.ZipFile(path, "w", compression=method) as zf:
        for name, data in entries.items():
            zf.writestr(name, data)
    return path


def _remanifest(entries: dict[str, bytes]) -> dict[str, bytes]:
    import hashlib

    def sha(b: bytes) -> str:
        return hashlib.sha256(b).hexdigest()

    manifest = json.loads(entries["manifest.json"])
    manifest["entries"] = [
        {"name": n, "sha256": sha(b), "size_bytes": len(b)}
        for n, b in sorted(entries.items())
        if n not in ("manifest.json", "manifest.sha256")
    ]
    mb = json.dumps(manifest, sort_keys=True, separators=(",", ":")).encode()
    return {**entries, "manifest.json": mb, "manifest.sha256": (sha(mb) + "\n").encode()}


def rehash_records(records: dict) -> None:
    """A careful forger: recompute case, item and event hashes and links after an edit."""
    from workbench.casefile import GENESIS_HASH, event_hash
    from workbench.casefile.hashing import record_hash
    from workbench.casefile.records import CASE_HASH_FIELDS, ITEM_HASH_FIELDS

    case = records["case"]
    case["record_hash"] = record_hash(case, CASE_HASH_FIELDS)
    prev = case["record_hash"]
    for entry in case.get("status_log", []):
        entry["prev_hash"] = prev
        entry["hash"] = record_hash(entry, ("status", "at", "prev_hash"))
        prev = entry["hash"]
    item_hash = {}
    for it in records["items"]:
        it["record_hash"] = record_hash({**it, "case_hash": case["record_hash"]}, ITEM_HASH_FIELDS)
        item_hash[it["item_number"]] = it["record_hash"]
    links: dict[str, str] = {}
    for it in records["items"]:
        num = it["item_number"]
        prev = links.get(num, GENESIS_HASH)
        evs = sorted(
            (x for x in records["events"] if x["item_number"] == num), key=lambda x: x["seq"]
        )
        for n, ev in enumerate(evs):
            sub = ev["kind"] == "sub-sampled" and ev.get("ref_kind") == "sub-sample"
            if n == 0:
                ev["ref_hash"] = item_hash[num]
            if sub:
                ev["ref_hash"] = item_hash[ev["ref_key"]]
            ev["prev_hash"] = prev
            ev["hash"] = event_hash(ev)
            prev = ev["hash"]
            if sub:
                links[ev["ref_key"]] = ev["hash"]


def _dump(data: object) -> bytes:
    return json.dumps(data, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode()


def _edit(entries: dict[str, bytes], record: str, fn, rehash: bool = False) -> dict[str, bytes]:
    names = ("case", "items", "events")
    records = {n: json.loads(entries[f"records/{n}.json"]) for n in names}
    if record not in records:
        records[record] = json.loads(entries[f"records/{record}.json"])
    fn(records[record])
    if rehash:
        rehash_records(records)
    return {**entries, **{f"records/{n}.json": _dump(d) for n, d in records.items()}}


def crafted_bundles(work: Path, pristine: Path, info: dict) -> Counter:
    out: Counter = Counter()
    with CaseStore.open(pristine) as s:
        good = export_bundle(s, CASE, work / "good.zip")
    e = _entries(good)

    def damaged(method: int) -> bytes:
        p = _write(work / f"m{method}.zip", e, method)
        data = bytearray(p.read_bytes())
        with zipfile.ZipFile(p) as zf:
            i = max(zf.infolist(), key=lambda x: x.compress_size)
        start = i.header_offset + 30 + len(i.filename.encode()) + len(i.extra)
        for k in range(start + i.compress_size // 3, start + i.compress_size // 3 + 16):
            data[k] ^= 0x5A
        return bytes(data)

    crafted: dict[str, bytes | dict] = {
        "traversal": {**e, "../../evil.txt": b"x"},
        "extra file": {**e, "files/" + "ab" * 32: b"x"},
        "truncated": good.read_bytes()[: good.stat().st_size // 2],
        "not a zip": b"hello",
        "altered record": {
            **e,
            "records/items.json": e["records/items.json"].replace(b"chip", b"chop"),
        },
        "altered, re-manifested": _remanifest(
            {**e, "records/events.json": e["records/events.json"].replace(b"Ana", b"Eve")}
        ),
        "5 MB title (re-hashed)": _remanifest(
            _edit(e, "case", lambda r: r.update(title="x" * 5_000_000), rehash=True)
        ),
        "seal_numbers as text (re-hashed)": _remanifest(
            _edit(e, "items", lambda r: r[0].update(seal_numbers="AT-1"), rehash=True)
        ),
        "seq as 1.0 (re-hashed)": _remanifest(
            _edit(e, "events", lambda r: r[0].update(seq=1.0), rehash=True)
        ),
        "status changed": _remanifest(_edit(e, "case", lambda r: r.update(status="open"))),
        "forged trust fields": _remanifest(
            _edit(e, "analysts", lambda r: r[0].update(trusted=1, provenance="local"))
        ),
        "damaged deflate": damaged(zipfile.ZIP_DEFLATED),
        "damaged LZMA": damaged(zipfile.ZIP_LZMA),
        "zip bomb (4 x 20 MiB)": {**e, **{f"files/{k:064x}": bytes(20 * 2**20) for k in range(4)}},
    }
    for label, payload in crafted.items():
        dst = work / f"dst-{len(out)}"
        with CaseStore.open(dst) as d:
            d.create_case("OTHER-1", "untouched", "someone")
        before = sorted(p.name for p in (dst / "files").rglob("*") if p.is_file())
        path = work / "crafted.zip"
        if isinstance(payload, dict):
            _write(path, payload)
        else:
            path.write_bytes(payload)
        opened: list[int] = []
        real_open = zipfile.ZipFile.open

        def counting_open(self, *a, _real=real_open, _log=opened, **k):
            _log.append(1)
            return _real(self, *a, **k)

        zipfile.ZipFile.open = counting_open  # type: ignore[method-assign]
        try:
            with CaseStore.open(dst) as d:
                import_bundle(path, d)
                verdict = "got through (imported)"
                if label == "forged trust fields":
                    from workbench.findings.signing import verify_sheet_with_store

                    try:
                        verify_sheet_with_store(d, info["pdf"], info["json"], info["record"])
                        verdict = "got through (imported, key trusted)"
                    except WorkbenchError:
                        verdict = "imported, key still untrusted"
        except WorkbenchError:
            after = sorted(p.name for p in (dst / "files").rglob("*") if p.is_file())
            verdict = "refused" if after == before else "refused, files left behind"
            if label.startswith("zip bomb") and opened:
                verdict += " only after unpacking"
        except Exception:
            verdict = "traceback"
        finally:
            zipfile.ZipFile.open = real_open  # type: ignore[method-assign]
        out[f"{label}: {verdict}"] += 1
        shutil.rmtree(dst)
    # an honest bundle: does the key it carries make the sheet VALID here?
    from workbench.findings.signing import verify_sheet_with_store

    dst = work / "dst-trust"
    with CaseStore.open(dst) as d:
        import_bundle(good, d)
        try:
            verify_sheet_with_store(d, info["pdf"], info["json"], info["record"])
            out["imported key makes sheet VALID: got through"] += 1
        except WorkbenchError:
            out["imported key makes sheet VALID: refused (untrusted)"] += 1
    return out


def cli_checks(work: Path) -> Counter:
    out: Counter = Counter()
    target = work / "no-store"
    _kind, code = cli("custody", "verify", "--store", str(target))
    out[f"verify on a missing path: {'creates a store' if target.exists() else 'creates nothing'}"
        f", exit {code}"] += 1  # fmt: skip
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        with contextlib.suppress(SystemExit):
            main(["keys", "create", "--name", "a", "--out", str(work / "k"), "--passphrase",
                  "s3cret-Horse"])  # fmt: skip
    out[f"--passphrase value echoed: {'yes' if 's3cret-Horse' in err.getvalue() else 'no'}"] += 1
    return out


def run() -> dict[str, Counter]:
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        pristine = work / "pristine"
        info = build(pristine)
        kind, code = cli("custody", "verify", "--store", str(pristine))
        assert (kind, code) == ("exit", 0), "the pristine store must verify"
        return {
            "store tamperings": store_tamperings(work, pristine),
            "signed-sheet bit flips": sheet_flips(info),
            "crafted bundles": crafted_bundles(work, pristine, info),
            "CLI": cli_checks(work),
        }


if __name__ == "__main__":
    import workbench

    print(f"workbench from {Path(workbench.__file__).parent}")
    for category, counts in run().items():
        total = sum(counts.values())
        print(f"\n{category}: {total}")
        for k in sorted(counts):
            print(f"  {counts[k]:6d}  {k}")
    sys.exit(0)
