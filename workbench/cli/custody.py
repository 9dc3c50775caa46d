"""``workbench custody``: add custody events, show an item's chain, verify the store.

``verify`` opens the store read-only: it never creates, migrates or writes
anything, and a missing or empty store is an error. ``anchor`` prints the
ledger head to keep outside the store (in the case file, an e-mail, a log);
``verify --anchor SEQ:HASH`` later proves the ledger was not rolled back or
rewritten since.
"""

from __future__ import annotations

import argparse

from workbench.cli._options import store_json_parent as _common

KINDS = (
    "received",
    "transferred",
    "sealed",
    "opened",
    "returned",
    "disposed",
    "note",
    "correction",
)


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``custody`` command group."""
    common = _common()
    parser = subparsers.add_parser("custody", help="chain of custody: add, show, verify")
    sub = parser.add_subparsers(dest="custody_command", metavar="SUBCOMMAND", required=True)

    p = sub.add_parser("add", parents=[common], help="append a custody event to an item")
    p.add_argument("item", metavar="CASE/ITEM")
    p.add_argument("kind", choices=KINDS)
    p.add_argument("--actor", required=True, help="who did it")
    p.add_argument("--from", dest="from_party", help="handed over by")
    p.add_argument("--to", dest="to_party", help="handed over to (becomes holder)")
    p.add_argument("--location")
    p.add_argument("--seal-state", choices=["sealed", "open", "unknown"])
    p.add_argument("--seal", dest="seal_number", help="seal applied or broken (S1,S2 for several)")
    p.add_argument("--note")
    p.add_argument("--at", help="when, ISO 8601 with zone (default now)")
    p.add_argument("--corrects", type=int, metavar="SEQ", help="event a correction corrects")
    p.set_defaults(func=_add)

    p = sub.add_parser("show", parents=[common], help="an item's custody history")
    p.add_argument("item", metavar="CASE/ITEM")
    p.set_defaults(func=_show)

    p = sub.add_parser(
        "verify",
        parents=[common],
        help="check every chain, record, file and signature (exit 4 on any break)",
    )
    p.add_argument("case_number", nargs="?", metavar="CASE")
    p.add_argument(
        "--anchor",
        metavar="SEQ:HASH",
        help="a ledger head printed earlier by 'custody anchor'; it must still be there",
    )
    p.set_defaults(func=_verify)

    p = sub.add_parser(
        "anchor", parents=[common], help="print the ledger head to keep outside the store"
    )
    p.set_defaults(func=_anchor)


def _add(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        e = s.add_custody_event(
            args.item,
            args.kind,
            args.actor,
            from_party=args.from_party,
            to_party=args.to_party,
            location=args.location,
            seal_state=args.seal_state,
            seal_number=args.seal_number,
            note=args.note,
            at=args.at,
            corrects=args.corrects,
        )
    emit(
        args,
        e.to_dict(),
        f"recorded {e.kind} #{e.seq} on {e.case_number}/{e.item_number} "
        f"at {e.at} (hash {e.hash[:16]}…)",
    )
    return 0


def _show(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        events = s.custody_events(args.item)
    lines = []
    for e in events:
        parts = [f"{e.item_number}#{e.seq}", e.at, e.kind, f"by {e.actor}"]
        if e.from_party or e.to_party:
            parts.append(f"{e.from_party or e.actor} -> {e.to_party or '?'}")
        if e.location:
            parts.append(f"at {e.location}")
        parts.append(f"seal {e.seal_state}{' ' + e.seal_number if e.seal_number else ''}")
        if e.corrects_seq:
            parts.append(f"corrects #{e.corrects_seq}")
        if e.note:
            parts.append(f"— {e.note}")
        lines.append("  ".join(parts))
    emit(args, [e.to_dict() for e in events], lines)
    return 0


def _parse_anchor(text: str | None) -> tuple[int, str] | None:
    from workbench.errors import InputError

    if text is None:
        return None
    seq, sep, digest = text.partition(":")
    if not sep or not seq.isdigit() or len(digest) != 64 or digest.strip("0123456789abcdef"):
        raise InputError(
            f"--anchor {text[:80]!r} is not SEQ:HASH",
            "give the value printed by 'workbench custody anchor', e.g. 42:3f9a…(64 hex digits)",
        )
    return int(seq), digest


def _verify(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit
    from workbench.casefile.store import CaseStore

    anchor = _parse_anchor(args.anchor)
    with CaseStore.open_readonly(args.store) as s:
        report = s.verify(args.case_number, anchor=anchor)
    counts = ", ".join(f"{k} {v}" for k, v in sorted(report.counts.items()))
    if report.ok:
        lines = [f"OK: {report.scope} verified ({counts}); signatures: {report.signature_check}"]
    else:
        lines = [
            f"BROKEN: {len(report.breaks)} problem(s) in {report.scope}; first:",
            "  " + report.first_break.describe(),
        ]
        lines += ["  also: " + b.describe() for b in report.breaks[1:10]]
    lines += [f"warning: {w}" for w in report.warnings]
    emit(args, report.to_dict(), lines)
    return 0 if report.ok else 4


def _anchor(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit
    from workbench.casefile.store import CaseStore

    with CaseStore.open_readonly(args.store) as s:
        seq, digest = s.ledger_head()
    emit(
        args,
        {"seq": seq, "hash": digest, "anchor": f"{seq}:{digest}"},
        [
            f"{seq}:{digest}",
            "keep this line outside the store; 'custody verify --anchor' checks it later",
        ],
    )
    return 0
