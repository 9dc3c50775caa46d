"""Issue a signed findings sheet for an analysis held in a case store.

:func:`draft_sheet_content` gathers the case, item, custody history,
measurement and analysis from the store and builds the content;
:func:`sign_and_store_sheet` checks the signer (registered, not revoked, key
matching the registered fingerprint), renders the PDF, signs both renderings
with the analyst's key and stores the four files with
:meth:`CaseStore.add_findings_sheet` (one transaction, which also appends the
``reported`` custody event). :func:`issue_findings_sheet` does both; a face
that previews the draft calls them separately, so that the previewed content
is the one signed. Optionally the files are written to a folder:
they are first written under temporary names, and only renamed into place
once the store has accepted the sheet, so a failure leaves nothing behind.
"""

from __future__ import annotations

import json
import os
import re
import tempfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from workbench.casefile.decisions import check_decisions, stored_decisions
from workbench.errors import InputError, NotFoundError, SigningError, StoreIntegrityError
from workbench.findings.content import build_sheet_content, canonical_json, utc_timestamp
from workbench.findings.keys import fingerprint_of, load_private_key
from workbench.findings.sheet import render_pdf
from workbench.findings.signing import analyst_revocation, sign_sheet, verify_sheet

__all__ = [
    "SHEET_SUFFIXES",
    "IssuedSheet",
    "draft_sheet_content",
    "gather_sheet_inputs",
    "issue_findings_sheet",
    "sign_and_store_sheet",
]

#: File suffixes of an issued sheet: PDF, canonical JSON, raw signature, signature record.
SHEET_SUFFIXES: dict[str, str] = {
    "pdf": ".pdf",
    "json": ".json",
    "sig": ".sig",
    "record": ".sig.json",
}

# Database-local ids and duplicated keys left out of the sheet (record hashes stay in).
_DROP = ("id", "case_number", "item_number", "measurement_id")


@dataclass(frozen=True)
class IssuedSheet:
    """An issued, signed and stored findings sheet.

    Attributes
    ----------
    sheet_id : int
        Id of the stored sheet.
    record : object
        The store's :class:`~workbench.casefile.records.FindingsSheetRecord`.
    content : dict
        The sheet content.
    pdf_bytes, json_bytes, signature_raw, signature_record : bytes
        The four files.
    key_fingerprint, issued_at : str
        Signing key and UTC issue time.
    paths : dict of str to Path
        Where the files were written (empty without ``out_dir``).
    """

    sheet_id: int
    record: Any
    content: dict[str, Any]
    pdf_bytes: bytes
    json_bytes: bytes
    signature_raw: bytes
    signature_record: bytes
    key_fingerprint: str
    issued_at: str
    paths: dict[str, Path] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly summary."""
        return {
            "sheet_id": self.sheet_id,
            "analysis_id": self.content.get("analysis", {}).get("id"),
            "key_fingerprint": self.key_fingerprint,
            "issued_at": self.issued_at,
            "pdf_sha256": json.loads(self.signature_record)["pdf_sha256"],
            "json_sha256": json.loads(self.signature_record)["json_sha256"],
            "files": {k: str(v) for k, v in self.paths.items()},
        }


def _as_dict(record: Any) -> dict[str, Any]:
    if isinstance(record, Mapping):
        return dict(record)
    if hasattr(record, "to_dict"):
        return dict(record.to_dict())
    raise InputError(f"cannot read a {type(record).__name__} record", "pass a store record")


def _strip(d: Mapping[str, Any], keep: tuple[str, ...] = ()) -> dict[str, Any]:
    return {k: v for k, v in d.items() if k not in _DROP or k in keep}


def gather_sheet_inputs(store: Any, analysis_id: int) -> dict[str, Any]:
    """Read everything a sheet reports about one analysis from the store.

    Parameters
    ----------
    store : CaseStore
        The open store.
    analysis_id : int
        The analysis.

    Returns
    -------
    dict
        Keyword arguments ``case``, ``item``, ``custody``, ``measurement``,
        ``analysis`` and ``decisions`` for :func:`~workbench.findings.content.build_sheet_content`.

    Raises
    ------
    NotFoundError
        If the analysis does not exist.
    StoreIntegrityError
        If the stored result is not JSON, or a decision no longer matches its hash.
    """
    a = store.get_analysis(int(analysis_id))
    try:
        result = json.loads(bytes(a.result_json).decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise StoreIntegrityError(
            f"analysis {analysis_id}: the stored result is not JSON ({exc})",
            "re-run the analysis; a sheet cannot be issued from an unreadable result",
        ) from exc
    measurement = _strip(_as_dict(store.get_measurement(a.measurement_id)))
    item_rec = store.get_item((a.case_number, a.item_number))
    item = _as_dict(item_rec)
    item = {"reference": f"{a.case_number}/{a.item_number}", **_strip(item)}
    case = _as_dict(store.get_case(a.case_number))
    case = {"reference": a.case_number, **_strip(case)}
    custody = [
        _strip(_as_dict(e), keep=("seq", "item_number")) for e in store.custody_events(item_rec)
    ]
    analysis = _strip(_as_dict(a))
    analysis.pop("result_json", None)
    analysis.update(id=a.id, result=result)
    broken = check_decisions(store, a.id)
    if broken:
        raise StoreIntegrityError(
            f"analysis {a.id}: {broken[0]}",
            "restore the store from backup; a sheet cannot report altered decisions",
        )
    return {
        "case": case,
        "item": item,
        "custody": custody,
        "measurement": measurement,
        "analysis": analysis,
        "decisions": [d.to_dict() for d in stored_decisions(store, a.id)],
    }


def _stem(content: Mapping[str, Any]) -> str:
    case = str((content.get("item") or {}).get("reference", "case"))
    analysis = str((content.get("analysis") or {}).get("id", "x"))
    when = str(content.get("issued_at", "")).replace("-", "").replace(":", "")
    raw = f"findings_{case}_A{analysis}_{when}"
    return re.sub(r"[^A-Za-z0-9._-]+", "-", raw).strip("-.")


def _prepare_files(
    out_dir: Path, stem: str, blobs: dict[str, bytes]
) -> dict[str, tuple[Path, Path]]:
    """Write every file under a temporary name; return {kind: (temp, final)}."""
    out_dir.mkdir(parents=True, exist_ok=True)
    finals = {k: out_dir / f"{stem}{suffix}" for k, suffix in SHEET_SUFFIXES.items()}
    existing = [str(p) for p in finals.values() if p.exists()]
    if existing:
        raise InputError(
            f"{existing[0]} already exists; an issued sheet is never overwritten",
            "choose another --out directory or move the old files away",
        )
    staged: dict[str, tuple[Path, Path]] = {}
    try:
        for kind, final in finals.items():
            fd, tmp = tempfile.mkstemp(prefix=f".{final.name}.", suffix=".tmp", dir=out_dir)
            with os.fdopen(fd, "wb") as fh:
                fh.write(blobs[kind])
                fh.flush()
                os.fsync(fh.fileno())
            staged[kind] = (Path(tmp), final)
    except OSError as exc:
        _discard(staged)
        raise InputError(
            f"cannot write the sheet files to {out_dir} ({exc})",
            "choose a writable --out directory",
        ) from exc
    return staged


def _discard(staged: Mapping[str, tuple[Path, Path]]) -> None:
    for tmp, _ in staged.values():
        tmp.unlink(missing_ok=True)


def _registered_analyst(store: Any, fingerprint: str) -> Any:
    """The store's analyst record for ``fingerprint`` (SigningError if there is none)."""
    try:
        analyst = store.get_analyst(fingerprint)
    except NotFoundError as exc:
        raise SigningError(
            f"analyst key {fingerprint} is not registered in the case store",
            "register the public key first ('workbench keys register PUBKEY --name --role')",
        ) from exc
    if analyst.fingerprint != fingerprint:
        raise SigningError(
            f"{fingerprint!r} is not a key fingerprint",
            f"give the fingerprint ({analyst.fingerprint})",
        )
    return analyst


def draft_sheet_content(
    store: Any,
    analysis_id: int,
    *,
    analyst_fingerprint: str,
    lab: Mapping[str, Any],
    notes: str,
    limitations: str,
    issued_at: str | None = None,
    supplements: Sequence[Mapping[str, Any]] = (),
    question: str = "",
    elements_asked: Sequence[str] = (),
    reviewer_fingerprint: str | None = None,
) -> dict[str, Any]:
    """Build the (unsigned) content of a findings sheet for one stored analysis.

    This is what :func:`issue_findings_sheet` signs; a face that previews the
    draft before signing calls this, shows it, and passes the same content to
    :func:`sign_and_store_sheet`.

    Parameters
    ----------
    store : CaseStore
        The open case store.
    analysis_id : int
        The analysis to report.
    analyst_fingerprint : str
        Registered fingerprint of the analyst who will sign.
    lab : mapping
        Laboratory details (``name`` required).
    notes, limitations : str
        Analyst's free text, printed verbatim.
    issued_at : str, optional
        UTC issue time; now when omitted.
    supplements : sequence of mapping, optional
        Comparison or materials results to print with the analysis
        (``kind``, ``title``, ``text``, ``data``; see
        :func:`~workbench.findings.content.build_sheet_content`).
    question : str, optional
        The question the examination answers.
    elements_asked : sequence of str, optional
        Elements the question asks about.
    reviewer_fingerprint : str, optional
        Registered key of the second analyst who is to review and countersign.

    Returns
    -------
    dict
        The sheet content (:func:`~workbench.findings.content.build_sheet_content`).

    Raises
    ------
    SigningError
        If the analyst's or reviewer's key is not registered, or the reviewer
        is the analyst.
    NotFoundError
        If the analysis does not exist.
    """
    analyst = _registered_analyst(store, analyst_fingerprint)
    reviewer = None
    if reviewer_fingerprint:
        r = _registered_analyst(store, reviewer_fingerprint)
        if r.fingerprint == analyst.fingerprint or r.name == analyst.name:
            raise SigningError(
                f"{r.name} cannot review their own analysis",
                "name a second registered analyst as reviewer",
            )
        reviewer = {"name": r.name, "role": r.role, "fingerprint": r.fingerprint}
    inputs = gather_sheet_inputs(store, analysis_id)
    return build_sheet_content(
        lab=lab,
        analyst={"name": analyst.name, "role": analyst.role, "fingerprint": analyst.fingerprint},
        notes=notes,
        limitations=limitations,
        issued_at=utc_timestamp(issued_at),
        supplements=supplements,
        question=question,
        elements_asked=elements_asked,
        reviewer=reviewer,
        **inputs,
    )


def _content_field(content: Mapping[str, Any], key: str) -> Mapping[str, Any]:
    part = content.get(key) if isinstance(content, Mapping) else None
    if not isinstance(part, Mapping):
        raise InputError(
            f"the sheet content has no {key!r} section",
            "build the content with draft_sheet_content (or build_sheet_content)",
        )
    return part


def sign_and_store_sheet(
    store: Any,
    analysis_id: int,
    content: Mapping[str, Any],
    *,
    private_key_pem: bytes,
    passphrase: str,
    out_dir: str | os.PathLike[str] | None = None,
) -> IssuedSheet:
    """Check the signer, render, sign and store a drafted sheet (and write its files).

    The content is signed exactly as given (so that what was previewed is what
    is issued), after these refusals: the content is for another analysis, or
    for another version of its record; the analyst named in it is unknown,
    revoked or registered under another name; the private key is not the
    registered one.

    Parameters
    ----------
    store : CaseStore
        The open case store.
    analysis_id : int
        The analysis the sheet reports.
    content : mapping
        Sheet content from :func:`draft_sheet_content`; its ``issued_at`` is
        the signing time.
    private_key_pem : bytes
        The analyst's encrypted private key (``.key.pem``).
    passphrase : str
        Its passphrase.
    out_dir : path-like, optional
        Folder to write ``<stem>.pdf``, ``.json``, ``.sig`` and ``.sig.json`` into.

    Returns
    -------
    IssuedSheet
        The stored sheet and its files.

    Raises
    ------
    InputError
        If the content is not for this analysis, lacks a section, or reports
        other decisions than those now on record.
    SigningError
        If the analyst is unknown or revoked, or the key is not the registered one.
    KeyFileError
        If the key cannot be read or the passphrase is wrong.
    """
    analysis_part = _content_field(content, "analysis")
    named = _content_field(content, "analyst")
    stored = store.get_analysis(int(analysis_id))
    if analysis_part.get("id") != stored.id:
        raise InputError(
            f"the sheet content reports analysis {analysis_part.get('id')!r}, "
            f"not analysis {stored.id}",
            "draft the sheet again for the analysis to be issued",
        )
    if analysis_part.get("record_hash") != stored.record_hash:
        raise InputError(
            f"the sheet content for analysis {stored.id} does not carry the stored record's "
            "hash (it was drafted from other data)",
            "draft the sheet again from the store",
        )
    stored_hashes = [d.record_hash for d in stored_decisions(store, stored.id)]
    drafted = [d.get("record_hash") for d in content.get("decisions") or []]
    if drafted != stored_hashes:
        raise InputError(
            f"the decisions on analysis {stored.id} changed after the sheet was drafted",
            "draft the sheet again so that it reports the decisions now on record",
        )
    analyst = _registered_analyst(store, str(named.get("fingerprint") or ""))
    if named.get("name") != analyst.name:
        raise SigningError(
            f"the sheet names the analyst {named.get('name')!r} but key "
            f"{analyst.fingerprint} is registered to {analyst.name!r}",
            "draft the sheet again with the registered analyst",
        )
    revoked, note = analyst_revocation(analyst)
    if revoked:
        raise SigningError(
            f"key {analyst.fingerprint} of {analyst.name} is revoked ({note}); "
            "it can no longer sign",
            "create and register a new key ('workbench keys create', 'workbench keys register')",
        )
    private_key = load_private_key(bytes(private_key_pem), passphrase)
    key_fp = fingerprint_of(private_key.public_key())  # type: ignore[attr-defined]
    if key_fp != analyst.fingerprint:
        raise SigningError(
            f"the private key given ({key_fp}) does not match the registered key of "
            f"{analyst.name} ({analyst.fingerprint})",
            "sign with the key file that belongs to the registered public key",
        )
    when = utc_timestamp(content.get("issued_at"))
    if when != content.get("issued_at"):
        raise InputError(
            f"the sheet's issue time {content.get('issued_at')!r} is not a UTC time to the second",
            "draft the sheet again (draft_sheet_content normalises the time)",
        )
    json_bytes = canonical_json(content)
    pdf_bytes = render_pdf(content)
    signed = sign_sheet(pdf_bytes, json_bytes, private_key, signer=analyst.name, signed_at=when)
    pem = analyst.public_key_pem
    verify_sheet(
        pdf_bytes,
        json_bytes,
        signed.record,
        pem.encode("ascii") if isinstance(pem, str) else pem,
        expected_fingerprint=analyst.fingerprint,
    )
    blobs = {
        "pdf": pdf_bytes,
        "json": json_bytes,
        "sig": signed.signature_raw,
        "record": signed.record,
    }
    staged = _prepare_files(Path(out_dir), _stem(content), blobs) if out_dir is not None else {}
    try:
        record = store.add_findings_sheet(
            int(analysis_id),
            analyst_fingerprint=analyst.fingerprint,
            pdf_bytes=pdf_bytes,
            json_bytes=json_bytes,
            signature_raw=signed.signature_raw,
            signature_record=signed.record,
            issued_at=when,
        )
    except BaseException:
        _discard(staged)
        raise
    paths = {}
    for kind, (tmp, final) in staged.items():
        os.replace(tmp, final)
        paths[kind] = final
    return IssuedSheet(
        sheet_id=int(record.id),
        record=record,
        content=dict(content),
        pdf_bytes=pdf_bytes,
        json_bytes=json_bytes,
        signature_raw=signed.signature_raw,
        signature_record=signed.record,
        key_fingerprint=analyst.fingerprint,
        issued_at=when,
        paths=paths,
    )


def issue_findings_sheet(
    store: Any,
    analysis_id: int,
    *,
    analyst_fingerprint: str,
    private_key_pem: bytes,
    passphrase: str,
    lab: Mapping[str, Any],
    notes: str,
    limitations: str,
    issued_at: str | None = None,
    out_dir: str | os.PathLike[str] | None = None,
    supplements: Sequence[Mapping[str, Any]] = (),
    question: str = "",
    elements_asked: Sequence[str] = (),
    reviewer_fingerprint: str | None = None,
) -> IssuedSheet:
    """Build, render, sign and store a findings sheet for one analysis.

    :func:`draft_sheet_content` followed by :func:`sign_and_store_sheet`.

    Parameters
    ----------
    store : CaseStore
        The open case store.
    analysis_id : int
        The analysis to report.
    analyst_fingerprint : str
        Registered fingerprint of the signing analyst's key.
    private_key_pem : bytes
        The analyst's encrypted private key (``.key.pem``).
    passphrase : str
        Its passphrase.
    lab : mapping
        Laboratory details (``name`` required).
    notes, limitations : str
        Analyst's free text, printed verbatim.
    issued_at : str, optional
        UTC issue time; now when omitted.
    out_dir : path-like, optional
        Folder to write ``<stem>.pdf``, ``.json``, ``.sig`` and ``.sig.json`` into.
    supplements, question, elements_asked, reviewer_fingerprint : optional
        As :func:`draft_sheet_content`.

    Returns
    -------
    IssuedSheet
        The stored sheet and its files.

    Raises
    ------
    SigningError
        If the analyst is unknown or revoked, or the key is not the registered one.
    KeyFileError
        If the key cannot be read or the passphrase is wrong.
    """
    content = draft_sheet_content(
        store,
        analysis_id,
        analyst_fingerprint=analyst_fingerprint,
        lab=lab,
        notes=notes,
        limitations=limitations,
        issued_at=issued_at,
        supplements=supplements,
        question=question,
        elements_asked=elements_asked,
        reviewer_fingerprint=reviewer_fingerprint,
    )
    return sign_and_store_sheet(
        store,
        analysis_id,
        content,
        private_key_pem=private_key_pem,
        passphrase=passphrase,
        out_dir=out_dir,
    )
