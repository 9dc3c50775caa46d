"""``workbench case``: create, list, show and search cases in the case store."""

from __future__ import annotations

import argparse

from workbench.cli._options import store_json_parent as _common


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``case`` command group."""
    common = _common()
    parser = subparsers.add_parser("case", help="case records: create, list, show, search")
    sub = parser.add_subparsers(dest="case_command", metavar="SUBCOMMAND", required=True)

    p = sub.add_parser("create", parents=[common], help="create a case")
    p.add_argument("case_number")
    p.add_argument("--title", required=True)
    p.add_argument("--requesting-party", required=True)
    p.set_defaults(func=_create)

    p = sub.add_parser("list", parents=[common], help="list cases")
    p.add_argument("--status", choices=["open", "closed", "archived"])
    p.set_defaults(func=_list)

    p = sub.add_parser("show", parents=[common], help="a case with its items and records")
    p.add_argument("case_number")
    p.set_defaults(func=_show)

    p = sub.add_parser("search", parents=[common], help="approximate text search")
    p.add_argument("query")
    p.add_argument("--limit", type=int, default=20)
    p.add_argument("--min-score", type=float, default=50.0)
    p.set_defaults(func=_search)

    p = sub.add_parser("set-status", parents=[common], help="open, close or archive a case")
    p.add_argument("case_number")
    p.add_argument("status", choices=["open", "closed", "archived"])
    p.set_defaults(func=_set_status)


def _create(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        c = s.create_case(args.case_number, args.title, args.requesting_party)
    emit(args, c.to_dict(), f"created case {c.case_number}: {c.title}")
    return 0


def _list(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        cases = s.list_cases(status=args.status)
    lines = [f"{c.case_number}\t{c.status}\t{c.title}\t({c.requesting_party})" for c in cases]
    emit(args, [c.to_dict() for c in cases], lines or ["no cases"])
    return 0


def _show(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        c = s.get_case(args.case_number)
        items = s.list_items(c.case_number)
        meas = s.list_measurements(c.case_number)
        analyses = s.list_analyses(c.case_number)
        sheets = s.list_findings_sheets(c.case_number)
    data = {
        "case": c.to_dict(),
        "items": [i.to_dict() for i in items],
        "measurements": [m.to_dict() for m in meas],
        "analyses": [a.to_dict() for a in analyses],
        "findings_sheets": [f.to_dict() for f in sheets],
    }
    lines = [
        f"case {c.case_number} [{c.status}] {c.title}",
        f"  requested by {c.requesting_party}; created {c.created_at}",
        f"  items ({len(items)}):",
    ]
    for i in items:
        parent = f" (sub-sample of {i.parent_item_number})" if i.parent_item_number else ""
        state = "disposed" if i.disposed else f"held by {i.holder}, {i.seal_state}"
        lines.append(f"    {i.item_number}{parent}: {i.description} — {state}")
    lines.append(f"  measurements ({len(meas)}):")
    lines += [
        f"    #{m.id} item {m.item_number}: {m.filename} {m.technique} {m.measured_at}"
        for m in meas
    ]
    lines.append(f"  analyses ({len(analyses)}):")
    lines += [f"    #{a.id} measurement {a.measurement_id} by {a.analyst}" for a in analyses]
    lines.append(f"  findings sheets ({len(sheets)}):")
    lines += [f"    #{f.id} analysis {f.analysis_id} by {f.analyst} {f.issued_at}" for f in sheets]
    emit(args, data, lines)
    return 0


def _search(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        hits = s.search_cases(args.query, limit=args.limit, min_score=args.min_score)
    lines = [
        f"{h.score:5.1f}  {h.case_number}  {h.title}  [{h.field}: {h.matched_text}]" for h in hits
    ]
    emit(args, [h.to_dict() for h in hits], lines or ["no matching cases"])
    return 0


def _set_status(args: argparse.Namespace) -> int:
    from workbench.casefile.cli_support import emit, open_store

    with open_store(args) as s:
        c = s.set_case_status(args.case_number, args.status)
    emit(args, c.to_dict(), f"case {c.case_number} is now {c.status}")
    return 0
