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

import json
import sqlite3
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from workbench.casefile import ledger
from workbench.casefile.custody import EVENT_FIELDS, ChainState, apply_event, check_status_log
from workbench.casefile.hashing import GENESIS_HASH, sha256_hex
from workbench.casefile.hashing import record_hash as _record_hash
from workbench.casefile.keylog import replay_key_log
from workbench.casefile.records import (
    ANALYSIS_HASH_FIELDS,
    CASE_HASH_FIELDS,
    FINDINGS_HASH_FIELDS,
    ITEM_HASH_FIELDS,
    MEASUREMENT_HASH_FIELDS,
)
from workbench.errors import CustodyRuleError, WorkbenchError

__all__ = [
    "Break",
    "CaseData",
    "VerifyReport",
    "check_case_data",
    "load_case_data",
    "verify_store",
]


def record_hash(fields: Any, names: tuple[str, ...]) -> str:
    """Record hash that never raises: an unhashable value (a BLOB) gives a marker."""
    try:
        return _record_hash(fields, names)
    except (WorkbenchError, TypeError, ValueError) as exc:
        return f"unhashable ({exc.__class__.__name__}: a value is not text, number or JSON)"


def _json(value: Any, what: str) -> Any:
    if not isinstance(value, str):
        raise _Unreadable(f"{what} is a {type(value).__name__}, not JSON text")
    try:
        return json.loads(value)
    except (ValueError, RecursionError) as exc:
        raise _Unreadable(f"{what} is not valid JSON ({exc})") from exc


class _Unreadable(Exception):
    """A stored value cannot be read (invalid JSON, wrong type): a break, not a crash."""


@dataclass(frozen=True)
class Break:
    """One integrity break, placed exactly.

    Attributes
    ----------
    kind : str
        ``missing-event``, ``broken-link``, ``reordered``, ``altered-event``,
        ``rule-violation``, ``altered-record``, ``unchained-record``,
        ``missing-record``, ``altered-result``, ``file-missing``,
        ``file-replaced``, ``signature-invalid``.
    case_number, item_number : str or None
        Where.
    seq : int or None
        Event sequence number (for chain breaks).
    event_id : int or None
        Local row id of the event (None in a bundle or when the event is missing).
    record : str or None
        The record concerned (``"measurement 3"``, ``"file files/ab/cd..."``).
    detail : str
        What differs, in words.
    expected, found : str or None
        The expected and the found value (usually hashes).
    """

    kind: str
    case_number: str | None
    item_number: str | None
    seq: int | None
    event_id: int | None
    record: str | None
    detail: str
    expected: str | None = None
    found: str | None = None

    def __post_init__(self) -> None:
        # Values come from a store that may be tampered with: a BLOB where a
        # case number belongs must still print.
        for name, value in self.__dict__.items():
            if (value is not None and not isinstance(value, str | int)) or isinstance(value, bool):
                object.__setattr__(self, name, repr(value))
        for name in ("case_number", "item_number"):
            value = getattr(self, name)
            if value is not None and not isinstance(value, str):
                object.__setattr__(self, name, str(value))

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return dict(self.__dict__)

    def describe(self) -> str:
        """One line for people."""
        where = self.case_number or "store"
        if self.item_number:
            where += f"/{self.item_number}"
        if self.seq is not None:
            where += f" event #{self.seq}"
            if self.event_id is not None:
                where += f" (id {self.event_id})"
        if self.record:
            where += f" [{self.record}]"
        text = f"{self.kind} at {where}: {self.detail}"
        if self.expected is not None or self.found is not None:
            text += f" (expected {self.expected}, found {self.found})"
        return text


@dataclass(frozen=True)
class VerifyReport:
    """Outcome of :func:`verify_store`.

    Attributes
    ----------
    ok : bool
        True when nothing is broken.
    scope : str
        The case checked, or ``"all cases"``.
    counts : dict
        What was checked (cases, items, events, measurements, analyses, sheets,
        files, signatures).
    breaks : tuple of Break
        Every break found, in check order; the first is :attr:`first_break`.
    warnings : tuple of str
        Things that are not breaks (a key revoked after it signed).
    signature_check : str
        ``"ok"``, ``"none to check"``, ``"failed"`` or ``"unavailable (...)"``.
    """

    ok: bool
    scope: str
    counts: dict[str, int]
    breaks: tuple[Break, ...]
    warnings: tuple[str, ...] = ()
    signature_check: str = "none to check"

    @property
    def first_break(self) -> Break | None:
        """The first break, or None."""
        return self.breaks[0] if self.breaks else None

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return {
            "ok": self.ok,
            "scope": self.scope,
            "counts": dict(self.counts),
            "first_break": self.first_break.to_dict() if self.first_break else None,
            "breaks": [b.to_dict() for b in self.breaks],
            "warnings": list(self.warnings),
            "signature_check": self.signature_check,
        }


@dataclass
class CaseData:
    """Everything stored about one case, as plain dicts (from the store or a bundle)."""

    case: dict[str, Any]
    items: list[dict[str, Any]]
    events: dict[str, list[dict[str, Any]]]
    measurements: list[dict[str, Any]] = field(default_factory=list)
    analyses: list[dict[str, Any]] = field(default_factory=list)
    findings: list[dict[str, Any]] = field(default_factory=list)
    analysts: dict[str, dict[str, Any]] = field(default_factory=dict)


def load_case_data(store: Any, case_number: str) -> CaseData:
    """Read one case's rows from a store as a :class:`CaseData` (no checks).

    Rows are read in one read transaction so the picture is consistent.
    """
    conn = store.connection
    conn.execute("BEGIN")
    try:
        c = conn.execute("SELECT * FROM cases WHERE case_number=?", (case_number,)).fetchone()
        case = {
            k: c[k]
            for k in (
                "case_number",
                "title",
                "requesting_party",
                "status",
                "created_at",
                "record_hash",
            )
        }
        if "status_log" in c.keys():  # schema 3 on
            case["status_log"] = _json(c["status_log"], f"case {case_number} status_log")
        items = []
        events: dict[str, list[dict[str, Any]]] = {}
        for r in conn.execute(
            "SELECT i.*, p.item_number AS parent_item_number FROM items i "
            "LEFT JOIN items p ON p.id=i.parent_item_id WHERE i.case_id=? ORDER BY i.id",
            (c["id"],),
        ):
            items.append(
                {
                    "case_number": case_number,
                    "item_number": r["item_number"],
                    "description": r["description"],
                    "parent_item_number": r["parent_item_number"],
                    "seal_numbers": _json(r["seal_numbers"], f"item {r['id']} seal_numbers"),
                    "storage_location": r["storage_location"],
                    "created_at": r["created_at"],
                    "record_hash": r["record_hash"],
                    "_id": r["id"],
                }
            )
            rows = conn.execute(
                "SELECT * FROM custody_events WHERE item_id=? ORDER BY seq, id", (r["id"],)
            ).fetchall()
            events[r["item_number"]] = [
                {
                    **{k: e[k] for k in e.keys() if k != "item_id"},
                    "case_number": case_number,
                    "item_number": r["item_number"],
                }
                for e in rows
            ]
        meas = []
        for r in conn.execute(
            "SELECT m.*, i.item_number FROM measurements m JOIN items i ON i.id=m.item_id "
            "WHERE i.case_id=? ORDER BY m.id",
            (c["id"],),
        ):
            d = {k: r[k] for k in r.keys() if k != "item_id"}
            d["settings"] = _json(d["settings"], f"measurement {d['id']} settings")
            d["case_number"] = case_number
            d["_id"] = d.pop("id")
            meas.append(d)
        analyses = []
        for r in conn.execute(
            "SELECT a.*, m.record_hash AS measurement_hash, i.item_number FROM analyses a "
            "JOIN measurements m ON m.id=a.measurement_id JOIN items i ON i.id=m.item_id "
            "WHERE i.case_id=? ORDER BY a.id",
            (c["id"],),
        ):
            d = {k: r[k] for k in r.keys() if k not in ("measurement_id",)}
            d["parameters"] = _json(d["parameters"], f"analysis {d['id']} parameters")
            d["reference_sets"] = _json(d["reference_sets"], f"analysis {d['id']} reference_sets")
            rj = d["result_json"]
            d["result_json"] = rj.encode("utf-8") if isinstance(rj, str) else bytes(rj or b"")
            d["case_number"] = case_number
            d["_id"] = d.pop("id")
            analyses.append(d)
        sheets = []
        fps: set[str] = set()
        for r in conn.execute(
            "SELECT f.*, a.record_hash AS analysis_hash, i.item_number FROM findings_sheets f "
            "JOIN analyses a ON a.id=f.analysis_id JOIN measurements m ON m.id=a.measurement_id "
            "JOIN items i ON i.id=m.item_id WHERE i.case_id=? ORDER BY f.id",
            (c["id"],),
        ):
            d = {k: r[k] for k in r.keys() if k not in ("analysis_id",)}
            d["case_number"] = case_number
            d["_id"] = d.pop("id")
            sheets.append(d)
            fps.add(d["analyst_fingerprint"])
        analysts = {}
        for fp in sorted(fps):
            r = conn.execute("SELECT * FROM analysts WHERE fingerprint=?", (fp,)).fetchone()
            if r is not None:
                analysts[fp] = {k: r[k] for k in r.keys() if k != "id"}
    finally:
        conn.execute("COMMIT")
    return CaseData(case, items, events, meas, analyses, sheets, analysts)


def _check_chain(
    data: CaseData, item: dict[str, Any], out: list[Break], parent_events: dict[str, dict]
) -> int:
    cn = data.case["case_number"]
    num = item["item_number"]
    label = f"{cn}/{num}"
    events = data.events.get(num, [])

    def brk(
        kind: str,
        ev: dict | None,
        detail: str,
        exp: Any = None,
        found: Any = None,
        seq: int | None = None,
    ) -> None:
        out.append(
            Break(
                kind,
                cn,
                num,
                seq if seq is not None else (ev or {}).get("seq"),
                (ev or {}).get("id"),
                None,
                detail,
                None if exp is None else str(exp),
                None if found is None else str(found),
            )
        )

    if not events:
        brk("missing-event", None, "the item has no custody events", "event #1", "none", seq=1)
        return 0
    prev = GENESIS_HASH
    parent_ev = None
    if item.get("parent_item_number"):
        parent_ev = parent_events.get(num)
        if parent_ev is None:
            brk(
                "broken-link",
                events[0],
                f"parent item {item['parent_item_number']} has no 'sub-sampled' event for it",
            )
            return len(events)
        prev = parent_ev["hash"]
    by_hash = {e["hash"]: e for e in events}
    state: ChainState | None = None
    for position, ev in enumerate(events, start=1):
        if ev["seq"] != position:
            if ev["seq"] > position:
                brk(
                    "missing-event",
                    ev,
                    f"event #{position} is missing: #{ev['seq']} follows #{position - 1}",
                    f"#{position}",
                    f"#{ev['seq']}",
                    seq=position,
                )
            else:
                brk("reordered", ev, "sequence number repeats", f"#{position}", f"#{ev['seq']}")
            return len(events)
        if ev["prev_hash"] != prev:
            other = by_hash.get(ev["prev_hash"])
            if other is not None and other is not ev:
                brk(
                    "reordered",
                    ev,
                    f"event #{position} links to event stored as #{other['seq']}, not to "
                    f"#{position - 1}: events were reordered",
                    prev,
                    ev["prev_hash"],
                )
            else:
                brk(
                    "broken-link",
                    ev,
                    "prev_hash is not the hash of the previous event (an earlier event was "
                    "altered, replaced or removed)",
                    prev,
                    ev["prev_hash"],
                )
            return len(events)
        recomputed = record_hash(ev, EVENT_FIELDS)
        if recomputed != ev["hash"]:
            brk(
                "altered-event",
                ev,
                "the event's content does not match its stored hash",
                ev["hash"],
                recomputed,
            )
            return len(events)
        try:
            state = apply_event(state, ev, label)
        except CustodyRuleError as exc:
            brk("rule-violation", ev, exc.problem)
            return len(events)
        if position == 1:
            if ev.get("ref_hash") != item["record_hash"]:
                brk(
                    "unchained-record",
                    ev,
                    "the item record is not the one its first event names",
                    ev.get("ref_hash"),
                    item["record_hash"],
                )
                return len(events)
            if parent_ev is not None and ev["at"] < parent_ev["at"]:
                brk(
                    "rule-violation",
                    ev,
                    "custody rule 'time-order': the sub-sample's first event is earlier "
                    "than the parent's sub-sampling",
                    parent_ev["at"],
                    ev["at"],
                )
                return len(events)
        prev = ev["hash"]
    return len(events)


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
        counts["events"] += _check_chain(data, item, out, parent_events)
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
                raise _Unreadable("the analyst's public key is not text")
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
        except _Unreadable as exc:
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


def _summarise_signatures(notes: list[str]) -> str:
    if not notes:
        return "none to check"
    if any(n.startswith("unavailable") for n in notes):
        return next(n for n in notes if n.startswith("unavailable"))
    return "failed" if "failed" in notes else "ok"


def _has_table(conn: sqlite3.Connection, name: str) -> bool:
    q = "SELECT 1 FROM sqlite_master WHERE type='table' AND name=?"
    return conn.execute(q, (name,)).fetchone() is not None


def _store_breaks(conn: sqlite3.Connection, anchor: tuple[int, str] | None) -> list[Break]:
    """Ledger and key-log checks over the whole store."""
    import workbench.casefile.schema  # noqa: F401  (registers the store's tables with the ledger)

    out: list[Break] = []
    # Pages that no query reads (an index, a free page) are damaged silently
    # otherwise; SQLite's own check reads every page.
    problems = [r[0] for r in conn.execute("PRAGMA integrity_check(20)").fetchall()]
    if problems != ["ok"]:
        out.append(
            Break(
                "damaged-database",
                None,
                None,
                None,
                None,
                "cases.sqlite",
                "SQLite's integrity check fails: " + "; ".join(map(str, problems[:3])),
            )
        )
    tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    if ledger.LEDGER_TABLE in tables or "key_events" in tables:
        for p in ledger.check_ledger(conn, anchor):
            out.append(
                Break(p.kind, None, None, p.seq, None, p.identity, p.detail, p.expected, p.found)
            )
    if "key_events" not in tables:
        return out
    cur = conn.execute("SELECT * FROM key_events ORDER BY seq")
    names = [d[0] for d in cur.description]
    events = [dict(zip(names, r, strict=True)) for r in cur.fetchall()]
    states, problems = replay_key_log(events)
    for seq, text in problems:
        out.append(Break("key-log-broken", None, None, seq, None, "key log", text))
    cur = conn.execute("SELECT * FROM analysts ORDER BY id")
    names = [d[0] for d in cur.description]
    for row in (dict(zip(names, r, strict=True)) for r in cur.fetchall()):
        fp = row.get("fingerprint")
        what = f"analyst {row.get('name')} key {fp}"
        st = states.pop(fp, None)
        if st is None:
            if not problems:
                out.append(
                    Break(
                        "key-state-mismatch",
                        None,
                        None,
                        None,
                        None,
                        what,
                        "the key has no registration or import event in the key log",
                    )
                )
            continue
        for col, want in st.columns().items():
            if row.get(col) != want:
                out.append(
                    Break(
                        "key-state-mismatch",
                        None,
                        None,
                        st.events[-1] if st.events else None,
                        None,
                        what,
                        f"analysts.{col} differs from what the key log says",
                        None if want is None else str(want),
                        None if row.get(col) is None else str(row.get(col)),
                    )
                )
                break
    if not problems:
        for fp in sorted(states):
            out.append(
                Break(
                    "missing-row",
                    None,
                    None,
                    None,
                    None,
                    f"analyst key {fp}",
                    "the key log names a key that the analysts table does not hold (deleted)",
                )
            )
    return out


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
            b, counts, w, s = check_case_data(load_case_data(store, n), get_blob)
        except (
            _Unreadable,
            WorkbenchError,
            KeyError,
            TypeError,
            ValueError,
            AttributeError,
        ) as exc:
            # A value of the wrong type (a BLOB in a text column) is tampering, not bad input.
            what = str(exc) if isinstance(exc, _Unreadable) else f"{type(exc).__name__}: {exc}"
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
    breaks += _store_breaks(conn, anchor)
    if not _has_table(conn, ledger.LEDGER_TABLE) and not _has_table(conn, "key_events"):
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
