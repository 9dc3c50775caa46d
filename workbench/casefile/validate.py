"""Field rules shared by direct entry and bundle import.

:func:`check_text` is the one rule for every text field the store takes
(non-empty unless optional, stripped, at most ``max_len`` characters).
:func:`check_records` applies the same rules, and the types the store writes
(``seq`` an integer, ``seal_numbers`` a list of text, times in the stored
form), to a case arriving in a bundle, so that nothing can be imported that
direct entry would have refused.
"""

from __future__ import annotations

from typing import Any

from workbench.casefile.custody import EVENT_KINDS, SEAL_STATES
from workbench.casefile.hashing import normalise_time
from workbench.casefile.records import CASE_STATUSES, TECHNIQUES
from workbench.errors import InputError, WorkbenchError

__all__ = ["check_records", "check_text"]


def check_text(value: Any, what: str, *, required: bool = True, max_len: int = 2000) -> str | None:
    """Return ``value`` stripped, or raise InputError (empty, not text, too long)."""
    if value is None or (isinstance(value, str) and not value.strip()):
        if required:
            raise InputError(f"{what} is empty", f"give a {what}")
        return None
    if not isinstance(value, str):
        raise InputError(f"{what} must be text, got {type(value).__name__}", f"give {what} as text")
    value = value.strip()
    if len(value) > max_len:
        raise InputError(f"{what} is {len(value)} characters long", f"keep it under {max_len}")
    return value


def _same_text(rec: dict, key: str, where: str, *, required: bool = True, max_len: int = 2000):
    value = rec.get(key)
    checked = check_text(value, f"{where} {key}", required=required, max_len=max_len)
    if checked != value and not (checked is None and value is None):
        raise InputError(f"{where} {key} is not in the stored form", "export it again")


def _int(rec: dict, key: str, where: str, *, required: bool = True) -> None:
    value = rec.get(key)
    if value is None and not required:
        return
    if not isinstance(value, int) or isinstance(value, bool):
        raise InputError(
            f"{where} {key} must be an integer, got {value!r}", "export the case again"
        )


def _time(rec: dict, key: str, where: str) -> None:
    value = rec.get(key)
    if not isinstance(value, str) or normalise_time(value, f"{where} {key}") != value:
        raise InputError(f"{where} {key} {value!r} is not a stored UTC time", "export it again")


def _hex(rec: dict, key: str, where: str) -> None:
    value = rec.get(key)
    if not isinstance(value, str) or len(value) != 64 or value.strip("0123456789abcdef"):
        raise InputError(f"{where} {key} is not a SHA-256 hex digest", "export it again")


def check_records(data: Any) -> None:
    """Check a case's records (a :class:`~workbench.casefile.casedata.CaseData`) field by field.

    Raises
    ------
    InputError
        Naming the record and field that direct entry would have refused.
    """
    try:
        _check(data)
    except WorkbenchError:
        raise
    except (KeyError, TypeError, AttributeError, ValueError) as exc:
        raise InputError(f"a record is malformed ({exc!r})", "export the case again") from exc


def _check(data: Any) -> None:
    c = data.case
    _same_text(c, "case_number", "case", max_len=64)
    _same_text(c, "title", "case")
    _same_text(c, "requesting_party", "case")
    if c.get("status") not in CASE_STATUSES:
        raise InputError(f"case status {c.get('status')!r}", f"use one of {CASE_STATUSES}")
    _time(c, "created_at", "case")
    if not isinstance(c.get("status_log"), list) or not c["status_log"]:
        raise InputError("case status_log is missing or not a list", "export the case again")
    for e in c["status_log"]:
        if not isinstance(e, dict) or e.get("status") not in CASE_STATUSES:
            raise InputError("case status_log holds an entry that is not valid", "")
        _time(e, "at", "case status_log entry")
    for it in data.items:
        where = f"item {str(it.get('item_number'))[:64]!r}"
        _same_text(it, "item_number", where, max_len=64)
        if "/" in it["item_number"]:
            raise InputError(f"{where} number contains '/'", "item numbers never do")
        _same_text(it, "description", where)
        _same_text(it, "storage_location", where, required=False)
        _same_text(it, "parent_item_number", where, required=False, max_len=64)
        seals = it.get("seal_numbers")
        if not isinstance(seals, list):
            raise InputError(f"{where} seal_numbers must be a list, got {seals!r}"[:300], "")
        for s in seals:
            if check_text(s, f"{where} seal number", max_len=64) != s or "," in s:
                raise InputError(f"{where} seal number {s!r} is not valid"[:300], "")
        _time(it, "created_at", where)
    for num, events in data.events.items():
        for e in events:
            where = f"custody event of item {str(num)[:64]!r}"
            _int(e, "seq", where)
            where += f" #{e['seq']}"
            if e.get("kind") not in EVENT_KINDS:
                raise InputError(f"{where} kind {e.get('kind')!r}", f"use one of {EVENT_KINDS}")
            if e.get("seal_state") not in SEAL_STATES:
                raise InputError(f"{where} seal state {e.get('seal_state')!r}", "")
            _same_text(e, "actor", where)
            for k in ("from_party", "to_party", "location", "ref_kind", "ref_key"):
                _same_text(e, k, where, required=False)
            _same_text(e, "seal_number", where, required=False)
            _same_text(e, "note", where, required=False, max_len=10000)
            _int(e, "corrects_seq", where, required=False)
            _time(e, "at", where)
            _time(e, "recorded_at", where)
            _hex(e, "prev_hash", where)
            _hex(e, "hash", where)
    for m in data.measurements:
        where = f"measurement {str(m.get('filename'))[:80]!r}"
        _same_text(m, "filename", where, max_len=255)
        _same_text(m, "instrument", where)
        _same_text(m, "operator", where)
        _int(m, "size_bytes", where)
        if m.get("technique") not in TECHNIQUES:
            raise InputError(f"{where} technique {m.get('technique')!r}", f"use {TECHNIQUES}")
        if not isinstance(m.get("settings"), dict):
            raise InputError(f"{where} settings must be an object", "export it again")
        _time(m, "measured_at", where)
        _time(m, "recorded_at", where)
        _hex(m, "sha256", where)
    for a in data.analyses:
        where = "analysis"
        if not isinstance(a.get("parameters"), dict):
            raise InputError(f"{where} parameters must be an object", "export it again")
        refs = a.get("reference_sets")
        if not isinstance(refs, list) or not all(isinstance(r, dict) for r in refs):
            raise InputError(f"{where} reference_sets must be a list of objects", "")
        _same_text(a, "software_version", where)
        _same_text(a, "analyst", where)
        _time(a, "created_at", where)
        _hex(a, "result_sha256", where)
    for f in data.findings:
        where = "findings sheet"
        _same_text(f, "analyst", where)
        for k in ("pdf_sha256", "json_sha256", "signature_sha256", "record_sha256"):
            _hex(f, k, where)
        _time(f, "issued_at", where)
        _time(f, "recorded_at", where)
    for fp, a in data.analysts.items():
        where = f"analyst {str(fp)[:80]!r}"
        _same_text(a, "name", where)
        _same_text(a, "role", where)
        if not isinstance(a.get("public_key_pem"), str) or len(a["public_key_pem"]) > 4096:
            raise InputError(f"{where} public key is not PEM text", "export it again")
