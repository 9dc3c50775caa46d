"""``workbench measure``: store an original measurement file for an item, show measurements."""

from __future__ import annotations

import argparse

from workbench.cli._options import store_json_parent as _common

TECHNIQUES = ("LIBS", "spark OES", "ICP-OES", "XRF", "absorption", "other")


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``measure`` command group."""
    common = _common()
    parser = subparsers.add_parser("measure", help="measurements: original files of an item")
    sub = parser.add_subparsers(dest="measure_command", metavar="SUBCOMMAND", required=True)

    p = sub.add_parser("add", parents=[common], help="store a measurement file (byte-for-byte)")
    p.add_argument("item", metavar="CASE/ITEM")
    p.add_argument("file")
    p.add_argument("--technique", required=True, help=f"one of: {', '.join(TECHNIQUES)}")
    p.add_argument("--instrument", required=True)
    p.add_argument("--operator", required=True)
    p.add_argument("--setting", action="append", metavar="KEY=VALUE", help="repeatable")
    p.add_argument("--measured-at", help="when measured, ISO 8601 with zone (default now)")
    p.set_defaults(func=_add)

    p = sub.add_parser("show", parents=[common], help="one measurement (ID) or an item's")
    p.add_argument("target", metavar="ID|CASE/ITEM")
    p.set_defaults(func=_show)


def _add(args: argparse.Namespace) -> int:
    from pathlib import Path

    from workbench.casefile.cli_support import emit, open_store, parse_settings, read_input_file
    from workbench.casefile.hashing import utc_now

    data = read_input_file(args.file)
    settings = parse_settings(args.setting)
    with open_store(args) as s:
        m = s.add_measurement(
            args.item,
            data,
            Path(args.file).name,
            args.technique,
            args.instrument,
            settings,
            args.operator,
            args.measured_at or utc_now(),
        )
    emit(
        args,
        m.to_dict(),
        f"stored measurement #{m.id} for {m.case_number}/{m.item_number}: "
        f"{m.filename} ({m.size_bytes} bytes, SHA-256 {m.sha256})",
    )
    return 0


def _show(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        if args.target.isdigit():
            ms = [s.get_measurement(int(args.target))]
        else:
            ms = s.list_measurements(item=args.target)
    lines = []
    for m in ms:
        lines.append(f"#{m.id} {m.case_number}/{m.item_number} {m.filename} ({m.size_bytes} B)")
        lines.append(f"    {m.technique} on {m.instrument} by {m.operator} at {m.measured_at}")
        lines.append(f"    SHA-256 {m.sha256}; settings {m.settings}")
    single = args.target.isdigit()
    emit(
        args, ms[0].to_dict() if single else [m.to_dict() for m in ms], lines or ["no measurements"]
    )
    return 0
