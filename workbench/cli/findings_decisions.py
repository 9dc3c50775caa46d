"""``workbench findings decide|decisions|review``: the analyst's judgement and the technical review.

``decide ANALYSIS_ID ACTION TARGET --reason ... --analyst ...`` records one
decision (append-only) on an analysis:

* ``accept Fe`` / ``reject "Ti I"``: an element or species call;
* ``accept "Fe I|optical:Fe:1:404.58148"`` / ``reject ...``: a line assignment;
* ``add Pb --line 405.78:"Pb I 405.78" --line 368.35``: an element by hand;
* ``show Sb`` / ``leave-off Mg``: what goes on the sheet;
* ``reverse 3``: take back decision 3 (both stay on record).

``decisions ANALYSIS_ID`` lists the decisions and the calls they produce.
``review SHEET_ID --approve|--return`` countersigns an issued sheet as
technical reviewer, or returns it with comments.
"""

from __future__ import annotations

import argparse

from workbench.cli._options import add_store_option as _store_option
from workbench.cli._options import print_json as _print_json

__all__ = ["register_into"]

#: The verbs of workbench.findings.decisions.DECISION_VERBS (spelled out: this module
#: imports only argparse at load time; a test keeps the two equal).
_ACTIONS = ("accept", "reject", "add", "show", "leave-off", "reverse")


def register_into(sub: argparse._SubParsersAction) -> None:
    """Add ``decide``, ``decisions`` and ``review`` to the ``findings`` group."""
    p = sub.add_parser(
        "decide",
        help="record an analyst's decision on an analysis (accept, reject, add, ...)",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("analysis_id", metavar="ANALYSIS_ID", type=int)
    p.add_argument("action", choices=_ACTIONS)
    p.add_argument(
        "target", metavar="TARGET", help="element, species, SPECIES|LINE_ID, or a number"
    )
    p.add_argument("--reason", required=True, help="why (printed on the sheet)")
    p.add_argument("--analyst", required=True, help="who decides")
    p.add_argument(
        "--line",
        action="append",
        default=[],
        metavar="POSITION[:LABEL]",
        help="a line of an element added by hand, in the axis unit (repeatable)",
    )
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_decide)

    p = sub.add_parser("decisions", help="list an analysis's decisions and the resulting calls")
    p.add_argument("analysis_id", metavar="ANALYSIS_ID", type=int)
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_list)

    p = sub.add_parser(
        "review",
        help="review an issued sheet: countersign it or return it with comments",
        allow_abbrev=False,
    )
    p.add_argument("sheet_id", metavar="SHEET_ID", type=int)
    p.add_argument("--key", required=True, metavar="KEYFILE", help="reviewer's .key.pem file")
    p.add_argument("--passphrase-file", metavar="FILE", help="file holding the key's passphrase")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--approve", action="store_true", help="sign as technical reviewer")
    what.add_argument("--return", dest="return_", action="store_true", help="return it")
    p.add_argument("--comments", default="", help="reviewer's comments (required to return)")
    p.add_argument("--out", metavar="DIR", help="folder for the review signature files")
    p.add_argument("--stem", help="file stem of the sheet (default findings-sheet-<id>)")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_review)


def _decide(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore
    from workbench.findings.decisions import decide

    with CaseStore.open(args.store) as store:
        rec = decide(
            store,
            args.analysis_id,
            args.action,
            args.target,
            reason=args.reason,
            analyst=args.analyst,
            line_texts=args.line,
        )
    if args.json:
        _print_json(rec.to_dict())
        return 0
    print(f"decision {rec.seq} on analysis {rec.analysis_id}: {rec.action} {rec.target}")
    print(f"  by {rec.analyst} at {rec.decided_at}; reason: {rec.reason}")
    return 0


def _list(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore
    from workbench.findings.decisions import effective_calls, list_decisions, stored_result

    with CaseStore.open(args.store) as store:
        decisions = list_decisions(store, args.analysis_id)
        calls = effective_calls(stored_result(store, args.analysis_id), decisions)
    call_rows = [
        {
            "element": c.element,
            "verdict": c.verdict,
            "concluded": c.concluded,
            "on_sheet": c.on_sheet,
            "added": c.added,
            "species": [s["species"] for s in c.species],
            "decisions": c.decisions,
        }
        for c in calls
    ]
    if args.json:
        _print_json({"decisions": [d.to_dict() for d in decisions], "calls": call_rows})
        return 0
    if not decisions:
        print(f"no decisions on analysis {args.analysis_id}")
    for d in decisions:
        print(f"{d.seq:>3}  {d.decided_at}  {d.analyst}: {d.action} {d.target} ({d.reason})")
    print("calls:")
    for r in call_rows:
        state = "concluded" if r["concluded"] else "not concluded"
        sheet = "on the sheet" if r["on_sheet"] else "not printed"
        print(f"  {r['element']:<3} {r['verdict']}: {state}, {sheet}")
    return 0


def _review(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore
    from workbench.cli._options import read_file
    from workbench.findings.keys import read_passphrase
    from workbench.findings.review import review_sheet

    pem = read_file(args.key, "key file")
    passphrase = read_passphrase(args.passphrase_file)
    with CaseStore.open(args.store) as store:
        out = review_sheet(
            store,
            args.sheet_id,
            private_key_pem=pem,
            passphrase=passphrase,
            approve=bool(args.approve),
            comments=args.comments,
            out_dir=args.out,
            stem=args.stem,
        )
    if args.json:
        _print_json(out.to_dict())
        return 0
    r = out.review
    verb = "approved and countersigned" if r.outcome == "approved" else "returned"
    print(f"sheet {r.sheet_id} {verb} by {r.reviewer} ({r.reviewer_fingerprint})")
    for kind, path in out.paths.items():
        print(f"  {kind:<7}{path}")
    return 0
