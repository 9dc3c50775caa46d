"""``workbench item``: add items and sub-samples, show and list them."""

from __future__ import annotations

import argparse

from workbench.cli._options import store_json_parent as _common


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``item`` command group."""
    common = _common()
    parser = subparsers.add_parser("item", help="items and sub-samples of a case")
    sub = parser.add_subparsers(dest="item_command", metavar="SUBCOMMAND", required=True)

    p = sub.add_parser("add", parents=[common], help="add an item (records its receipt)")
    p.add_argument("case_number")
    p.add_argument("item_number")
    p.add_argument("--description", required=True)
    p.add_argument("--parent", metavar="ITEM", help="item number this is a sub-sample of")
    p.add_argument(
        "--seal",
        action="append",
        default=[],
        metavar="NUMBER",
        help="seal on the package as received (repeat for several)",
    )
    p.add_argument("--location", help="storage location")
    p.add_argument("--received-by", required=True, help="who received it (becomes holder)")
    p.add_argument("--received-from", help="who handed it over (required for an item)")
    p.add_argument("--at", help="when, ISO 8601 with zone (default now)")
    p.add_argument("--note")
    p.set_defaults(func=_add)

    p = sub.add_parser("show", parents=[common], help="one item with its custody history")
    p.add_argument("item", metavar="CASE/ITEM")
    p.set_defaults(func=_show)

    p = sub.add_parser("list", parents=[common], help="items of a case")
    p.add_argument("case_number")
    p.set_defaults(func=_list)


def _add(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        it = s.add_item(
            args.case_number,
            args.item_number,
            args.description,
            parent_item=args.parent,
            seal_numbers=args.seal,
            storage_location=args.location,
            received_by=args.received_by,
            received_from=args.received_from,
            at=args.at,
            note=args.note,
        )
    kind = f"sub-sample of {it.parent_item_number}" if it.parent_item_number else "item"
    emit(args, it.to_dict(), f"added {kind} {it.label}, held by {it.holder} ({it.seal_state})")
    return 0


def _show(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        it = s.get_item(args.item)
        events = s.custody_events(it)
    data = {"item": it.to_dict(), "custody_events": [e.to_dict() for e in events]}
    lines = [
        f"item {it.label}: {it.description}",
        f"  parent: {it.parent_item_number or '-'}; location: {it.current_location or '-'}",
        f"  holder: {it.holder}; seal: {it.seal_state} {','.join(it.seals)}; "
        f"disposed: {'yes' if it.disposed else 'no'}",
        "  custody:",
    ]
    for e in events:
        lines.append(
            f"    {e.item_number}#{e.seq} {e.at} {e.kind} by {e.actor}"
            + (f" — {e.note}" if e.note else "")
        )
    emit(args, data, lines)
    return 0


def _list(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        items = s.list_items(args.case_number)
    lines = [
        f"{i.item_number}\t{i.parent_item_number or '-'}\t{i.holder}\t{i.seal_state}\t"
        f"{'disposed' if i.disposed else 'present'}\t{i.description}"
        for i in items
    ]
    emit(args, [i.to_dict() for i in items], lines or ["no items"])
    return 0
