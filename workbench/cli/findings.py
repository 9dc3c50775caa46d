"""``workbench findings``: issue, verify, show, list and review signed findings sheets.

The analyst's decisions and the technical review live in
:mod:`workbench.cli.findings_decisions` (``decide``, ``decisions``, ``review``).

``verify`` exits 0 when every check passes and 4 when one fails, printing
which (PDF changed, JSON changed, record malformed or altered, different,
unknown or revoked key, bad signature).
"""

from __future__ import annotations

import argparse
import json
import sys

from workbench.cli._options import add_store_option as _store_option
from workbench.cli._options import print_json as _print_json
from workbench.cli._options import read_file, refuse_passphrase_option

__all__ = ["register"]


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``findings`` command group."""
    parser = subparsers.add_parser("findings", help="signed findings sheets: issue, verify, show")
    sub = parser.add_subparsers(dest="findings_command", metavar="SUBCOMMAND")
    parser.set_defaults(func=lambda args: (parser.print_help(), 2)[1])

    # No abbreviations: "--passphrase SECRET" must fail, not be read as --passphrase-file.
    p = sub.add_parser(
        "issue",
        help="render, sign and store the findings sheet of an analysis",
        allow_abbrev=False,
    )
    p.add_argument("analysis_id", metavar="ANALYSIS_ID", type=int)
    p.add_argument("--key", required=True, metavar="KEYFILE", help="analyst's .key.pem file")
    p.add_argument("--passphrase-file", metavar="FILE", help="file holding the key's passphrase")
    refuse_passphrase_option(p)
    p.add_argument("--lab-name", required=True, help="laboratory name for the sheet header")
    p.add_argument("--lab-address", help="laboratory address")
    p.add_argument("--lab-accreditation", help="accreditation statement")
    notes = p.add_mutually_exclusive_group()
    notes.add_argument("--notes", default="", help="analyst's notes (plain text)")
    notes.add_argument("--notes-file", metavar="FILE", help="read the notes from a UTF-8 file")
    lim = p.add_mutually_exclusive_group()
    lim.add_argument("--limitations", default="", help="limitations of this examination")
    lim.add_argument("--limitations-file", metavar="FILE", help="read them from a UTF-8 file")
    p.add_argument(
        "--supplement",
        action="append",
        default=[],
        metavar="FILE",
        help="a comparison or materials result saved with --supplement-out (repeatable)",
    )
    p.add_argument("--question", default="", help="the question the examination answers")
    p.add_argument(
        "--ask",
        action="append",
        default=[],
        metavar="ELEMENT",
        help="an element the question asks about; reported as not found if not concluded",
    )
    p.add_argument(
        "--reviewer", metavar="FINGERPRINT", help="registered key of the designated reviewer"
    )
    p.add_argument("--issued-at", help="UTC issue time (default now), e.g. 2026-03-14T09:30:00Z")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the four sheet files")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_issue)

    p = sub.add_parser("verify", help="verify a sheet's PDF, JSON and signature (exit 4 if not)")
    p.add_argument("pdf", metavar="SHEET.pdf")
    p.add_argument("--json-file", metavar="SHEET.json", help="default: next to the PDF")
    p.add_argument("--sig", metavar="SHEET.sig.json", help="signature record (default: beside)")
    p.add_argument(
        "--raw-sig", metavar="SHEET.sig", help="raw signature, also checked (default: beside)"
    )
    p.add_argument(
        "--review-sig",
        metavar="SHEET.review.sig.json",
        help="reviewer's signature record, also checked (default: beside, if present)",
    )
    p.add_argument(
        "--reviewer-pubkey", metavar="PEM", help="reviewer's public key file (with --pubkey)"
    )
    who = p.add_mutually_exclusive_group()
    who.add_argument("--pubkey", metavar="PEM", help="signer's public key file")
    who.add_argument(
        "--store", metavar="DIR", help="look the key up in this case store (the default)"
    )
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_verify)

    p = sub.add_parser("show", help="show a stored findings sheet")
    p.add_argument("sheet_id", metavar="ID", type=int)
    p.add_argument("--export", metavar="DIR", help="also write the four files to DIR")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_show)

    p = sub.add_parser("list", help="list stored findings sheets")
    p.add_argument("--case", help="only this case")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_list)

    from workbench.cli.findings_decisions import register_into

    register_into(sub)


def _read(path: str, what: str) -> bytes:
    return read_file(path, what, "check the path (the sheet's files are issued side by side)")


def _read_text(path: str, what: str) -> str:
    from workbench.errors import InputError

    try:
        return _read(path, what).decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(f"{what} {path} is not UTF-8 text", "save it as UTF-8") from exc


def _read_supplement(path: str) -> dict:
    import json

    from workbench.errors import InputError

    try:
        doc = json.loads(_read_text(path, "supplement file"))
    except json.JSONDecodeError as exc:
        raise InputError(
            f"supplement file {path} is not JSON ({exc.msg}, line {exc.lineno})",
            "write it with `workbench compare|materials --supplement-out FILE`",
        ) from exc
    if not isinstance(doc, dict) or not {"kind", "title", "text"} <= doc.keys():
        raise InputError(
            f"supplement file {path} lacks kind/title/text",
            "write it with `workbench compare|materials --supplement-out FILE`",
        )
    return doc


def _issue(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore
    from workbench.findings.issue import issue_findings_sheet
    from workbench.findings.keys import fingerprint_of, load_private_key, read_passphrase

    pem = _read(args.key, "key file")
    passphrase = read_passphrase(args.passphrase_file)
    key = load_private_key(pem, passphrase, source=args.key)
    lab = {"name": args.lab_name}
    if args.lab_address:
        lab["address"] = args.lab_address
    if args.lab_accreditation:
        lab["accreditation"] = args.lab_accreditation
    notes = _read_text(args.notes_file, "notes file") if args.notes_file else args.notes
    limitations = (
        _read_text(args.limitations_file, "limitations file")
        if args.limitations_file
        else args.limitations
    )
    supplements = [_read_supplement(f) for f in args.supplement]
    with CaseStore.open(args.store) as store:
        issued = issue_findings_sheet(
            store,
            args.analysis_id,
            analyst_fingerprint=fingerprint_of(key.public_key()),  # type: ignore[attr-defined]
            private_key_pem=pem,
            passphrase=passphrase,
            lab=lab,
            notes=notes,
            limitations=limitations,
            issued_at=args.issued_at,
            out_dir=args.out,
            supplements=supplements,
            question=args.question,
            elements_asked=args.ask,
            reviewer_fingerprint=args.reviewer,
        )
    if args.json:
        _print_json(issued.to_dict())
        return 0
    print(f"issued findings sheet {issued.sheet_id} for analysis {args.analysis_id}")
    print(f"signed by {issued.key_fingerprint} at {issued.issued_at}")
    for kind in ("pdf", "json", "sig", "record"):
        print(f"  {kind:<7}{issued.paths[kind]}")
    pdf, raw = issued.paths["pdf"], issued.paths["sig"]
    print(f"verify: workbench findings verify {pdf}")
    print(
        f"    or: openssl pkeyutl -verify -pubin -inkey ANALYST.pub.pem -rawin -in {pdf} "
        f"-sigfile {raw}"
    )
    stem = issued.paths["pdf"].name[: -len(".pdf")]
    print(
        f"review: workbench findings review {issued.sheet_id} --approve --key REVIEWER.key.pem "
        f"--out {issued.paths['pdf'].parent} --stem {stem}"
    )
    return 0


def _beside(pdf: str, suffix: str) -> str:
    base = pdf[:-4] if pdf.lower().endswith(".pdf") else pdf
    return base + suffix


def _verify(args: argparse.Namespace) -> int:
    import base64
    import os

    from workbench.errors import SignatureInvalidError, SigningError
    from workbench.findings.decisions import check_sheet_decisions
    from workbench.findings.review import verify_review, verify_review_with_store
    from workbench.findings.signing import (
        parse_signature_record,
        verify_raw_pdf_signature,
        verify_sheet,
        verify_sheet_with_store,
    )

    pdf = _read(args.pdf, "PDF")
    json_bytes = _read(args.json_file or _beside(args.pdf, ".json"), "sheet JSON")
    record = _read(args.sig or _beside(args.pdf, ".sig.json"), "signature record")
    raw_path = args.raw_sig or _beside(args.pdf, ".sig")
    raw = _read(raw_path, "raw signature") if args.raw_sig or os.path.exists(raw_path) else None
    review_path = args.review_sig or _beside(args.pdf, ".review.sig.json")
    review = None
    review_raw = None
    if args.review_sig or os.path.exists(review_path):
        review = _read(review_path, "review signature record")
        review_raw_path = review_path[: -len(".json")] if review_path.endswith(".json") else ""
        if review_raw_path and os.path.exists(review_raw_path):
            review_raw = _read(review_raw_path, "raw review signature")
    reviewed = None
    try:
        if args.pubkey:
            pem: bytes | None = _read(args.pubkey, "public key")
            result = verify_sheet(pdf, json_bytes, record, pem)
            if review is not None:
                rpem = (
                    _read(args.reviewer_pubkey, "reviewer public key")
                    if (args.reviewer_pubkey)
                    else None
                )
                reviewed = verify_review(
                    pdf, json_bytes, record, review, rpem, review_raw=review_raw
                )
        else:
            from workbench.casefile import CaseStore
            from workbench.casefile.store import DB_NAME, resolve_store_root

            root = resolve_store_root(args.store)
            if not (root / DB_NAME).is_file():
                # Do not create an empty store just to look a key up in it.
                raise SignatureInvalidError(
                    f"unknown key: there is no case store at {root} to look the signer up in",
                    "give the signer's public key (--pubkey PEM) or the store (--store DIR)",
                )
            with CaseStore.open(root) as store:
                result = verify_sheet_with_store(store, pdf, json_bytes, record)
                pem = store.get_analyst(result.key_fingerprint).public_key_pem.encode("ascii")
                problems = check_sheet_decisions(store, json_bytes)
                if problems:
                    raise SignatureInvalidError(
                        f"decision record altered: {problems[0]}",
                        "the store's decisions no longer match what the sheet reports; "
                        "restore the store from backup and investigate",
                    )
                if review is None:
                    # No review files beside the PDF: use the approval on record, if any.
                    review, review_raw = _stored_review(store, pdf)
                if review is not None:
                    reviewed = verify_review_with_store(
                        store, pdf, json_bytes, record, review, review_raw=review_raw
                    )
        checks = list(result.checks)
        if reviewed is not None:
            checks += [f"review: {c}" for c in reviewed.checks]
        if raw is not None:
            if raw != base64.b64decode(parse_signature_record(record)["signature_pdf"]):
                raise SignatureInvalidError(
                    f"raw signature file {raw_path} is not the signature in the record",
                    "use the .sig file issued with this sheet",
                )
            verify_raw_pdf_signature(pdf, raw, pem)
            checks.append("raw .sig file valid")
    except SigningError as exc:
        if args.json:
            _print_json({"valid": False, **exc.to_dict()})
        else:
            print(f"INVALID: {exc.problem}")
            if exc.remedy:
                print(f"  what to do: {exc.remedy}")
        return exc.exit_code
    if args.json:
        out = {**result.to_dict(), "checks": checks}
        out["reviewer"] = reviewed.to_dict() if reviewed is not None else None
        _print_json(out)
        return 0
    print(f"VALID: signed by {result.signer} with key {result.key_fingerprint}")
    if reviewed is not None:
        print(f"  reviewed and countersigned by {reviewed.signer} ({reviewed.key_fingerprint})")
    else:
        print("  no technical review signature was given")
    print(f"  signed at {result.signed_at}; PDF SHA-256 {result.pdf_sha256}")
    for c in checks:
        print(f"  ok  {c}")
    return 0


def _stored_review(store: object, pdf: bytes) -> tuple[bytes | None, bytes | None]:
    """The approved review on record for the sheet with these PDF bytes, if any."""
    import hashlib

    from workbench.casefile.decisions import list_reviews

    digest = hashlib.sha256(pdf).hexdigest()
    for sheet in store.list_findings_sheets():  # type: ignore[attr-defined]
        if sheet.pdf_sha256 != digest:
            continue
        for r in list_reviews(store, sheet.id):
            if r.outcome == "approved" and r.record_sha256 and r.signature_sha256:
                return (
                    store.file_bytes(r.record_sha256),  # type: ignore[attr-defined]
                    store.file_bytes(r.signature_sha256),  # type: ignore[attr-defined]
                )
    return None, None


def _export(store: object, rec: object, out_dir: str) -> dict[str, str]:
    import os
    import tempfile
    from pathlib import Path

    from workbench.errors import InputError
    from workbench.findings.issue import SHEET_SUFFIXES

    folder = Path(out_dir)
    folder.mkdir(parents=True, exist_ok=True)
    stem = f"findings-sheet-{rec.id}"  # type: ignore[attr-defined]
    digests = {
        "pdf": rec.pdf_sha256,  # type: ignore[attr-defined]
        "json": rec.json_sha256,  # type: ignore[attr-defined]
        "sig": rec.signature_sha256,  # type: ignore[attr-defined]
        "record": rec.record_sha256,  # type: ignore[attr-defined]
    }
    finals = {k: folder / f"{stem}{SHEET_SUFFIXES[k]}" for k in digests}
    for p in finals.values():
        if p.exists():
            raise InputError(f"{p} already exists", "export into an empty folder")
    blobs = {k: store.file_bytes(d) for k, d in digests.items()}  # type: ignore[attr-defined]
    staged = []
    try:
        for k, final in finals.items():
            fd, tmp = tempfile.mkstemp(prefix=f".{final.name}.", dir=folder)
            with os.fdopen(fd, "wb") as fh:
                fh.write(blobs[k])
            staged.append((tmp, final))
    except OSError as exc:
        for tmp, _ in staged:
            os.unlink(tmp)
        raise InputError(f"cannot write to {folder} ({exc})", "choose a writable folder") from exc
    for tmp, final in staged:
        os.replace(tmp, final)
    out = {k: str(v) for k, v in finals.items()}
    from workbench.casefile.decisions import list_reviews
    from workbench.findings.review import REVIEW_SUFFIXES

    for r in list_reviews(store, rec.id):  # type: ignore[attr-defined]
        if r.outcome == "approved" and r.record_sha256 and r.signature_sha256:
            for kind, digest in (("record", r.record_sha256), ("sig", r.signature_sha256)):
                path = folder / f"{stem}{REVIEW_SUFFIXES[kind]}"
                path.write_bytes(store.file_bytes(digest))  # type: ignore[attr-defined]
                out[f"review_{kind}"] = str(path)
    return out


def _show(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore
    from workbench.errors import SigningError
    from workbench.findings.signing import verify_sheet_with_store

    with CaseStore.open(args.store) as store:
        rec = store.get_findings_sheet(args.sheet_id)
        pdf = store.file_bytes(rec.pdf_sha256)
        js = store.file_bytes(rec.json_sha256)
        record = store.file_bytes(rec.record_sha256)
        try:
            verify_sheet_with_store(store, pdf, js, record)
            status = {"valid": True, "problem": ""}
        except SigningError as exc:
            status = {"valid": False, "problem": str(exc)}
        content = json.loads(js)
        files = _export(store, rec, args.export) if args.export else {}
        from workbench.casefile.decisions import list_reviews

        reviews = [r.to_dict() for r in list_reviews(store, rec.id)]
    findings = [
        {
            "species": f.get("species") or f.get("element"),
            "verdict": f.get("verdict"),
            "score": f.get("score"),
        }
        for f in content.get("findings", [])
    ]
    if args.json:
        _print_json(
            {
                "sheet": rec.to_dict(),
                "signature": status,
                "findings": findings,
                "reviews": reviews,
                "files": files,
            }
        )
        return 0
    print(f"findings sheet {rec.id}: case {rec.case_number}, item {rec.item_number}")
    print(f"  analysis {rec.analysis_id}; issued {rec.issued_at} by {rec.analyst}")
    print(f"  key {rec.analyst_fingerprint}")
    print(f"  PDF SHA-256 {rec.pdf_sha256}")
    verdict = "valid" if status["valid"] else f"INVALID ({status['problem']})"
    print(f"  signature: {verdict}")
    for f in findings:
        print(f"  {f['species']:<8} {f['verdict']}  score {f['score']}")
    for r in reviews:
        print(f"  review: {r['outcome']} by {r['reviewer']} at {r['reviewed_at']}: {r['comments']}")
    if not reviews:
        print("  review: none yet")
    for kind, path in files.items():
        print(f"  wrote {kind:<7}{path}")
    return 0


def _list(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore

    with CaseStore.open(args.store) as store:
        sheets = store.list_findings_sheets(args.case)
    if args.json:
        _print_json([s.to_dict() for s in sheets])
        return 0
    if not sheets:
        print("no findings sheets", file=sys.stderr)
    for s in sheets:
        print(
            f"{s.id:>4}  {s.case_number}/{s.item_number}  analysis {s.analysis_id}  "
            f"{s.issued_at}  {s.analyst}"
        )
    return 0
