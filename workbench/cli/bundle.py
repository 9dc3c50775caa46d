"""``workbench bundle``: export a case to one verified zip, import a bundle."""

from __future__ import annotations

import argparse

from workbench.cli._options import store_json_parent as _common


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``bundle`` command group."""
    common = _common()
    parser = subparsers.add_parser("bundle", help="case bundles: export and import")
    sub = parser.add_subparsers(dest="bundle_command", metavar="SUBCOMMAND", required=True)

    p = sub.add_parser("export", parents=[common], help="write a case to a zip bundle")
    p.add_argument("case_number")
    p.add_argument("out", help="bundle file to create (never overwritten)")
    p.set_defaults(func=_export)

    p = sub.add_parser("import", parents=[common], help="verify a bundle, then import it")
    p.add_argument("bundle")
    p.set_defaults(func=_import)


def _export(args: argparse.Namespace) -> int:
    from workbench.casefile.bundle import export_bundle
    from workbench.casefile.cli_support import emit, open_store
    from workbench.casefile.hashing import sha256_hex

    with open_store(args) as s:
        out = export_bundle(s, args.case_number, args.out)
    digest = sha256_hex(out.read_bytes())
    emit(
        args,
        {"case_number": args.case_number, "bundle": str(out), "sha256": digest},
        f"exported case {args.case_number} to {out} (SHA-256 {digest})",
    )
    return 0


def _import(args: argparse.Namespace) -> int:
    from workbench.casefile.bundle import import_bundle
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        result = import_bundle(args.bundle, s)
        untrusted = [a for a in s.list_analysts() if not a.trusted]
    carried = ""
    if "decisions" in result.counts:  # format 3: say what travelled with the sheets
        carried = f" ({result.counts['decisions']} decisions, {result.counts['reviews']} reviews)"
    lines = [f"case {result.case_number}: {result.status}{carried}"]
    lines += [
        f"key {a.fingerprint} ({a.name}) is {a.provenance_text}: sheets it signed do not "
        "verify here until a local administrator runs 'workbench keys trust'"
        for a in untrusted
    ]
    emit(args, result.to_dict(), lines)
    return 0
