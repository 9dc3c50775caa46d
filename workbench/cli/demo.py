"""``workbench demo``: seed the invented demo cases and start the app (or print a match).

All demo data are INVENTED (see :mod:`workbench.demo`).
"""

from __future__ import annotations

import argparse
from pathlib import Path

__all__ = ["register"]


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``demo`` command."""
    p = sub.add_parser(
        "demo",
        help="seed the invented demo cases and start the app",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--store", type=Path, help="case store directory (default: casefiles/)")
    p.add_argument("--port", type=int, default=8501, help="app port on 127.0.0.1")
    p.add_argument(
        "--no-app",
        action="store_true",
        help="do not start the app: match the demo spectra and print the results",
    )
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Handler of ``workbench demo``."""
    from workbench.casefile import CaseStore
    from workbench.demo import SCENARIOS, demo_file, seed_demo_case
    from workbench.matching import analyse_input, summary_text

    with CaseStore.open(args.store) as store:
        seeded = seed_demo_case(store)
        where = store.root
    state = "created" if seeded["created"] else "already present"
    print(f"demo cases {', '.join(seeded['cases'])}: {state} in {where}")
    print("All demo data are invented (no real laboratory, case, person or artwork).")
    if args.no_app:
        for key, scn in SCENARIOS.items():
            outcome = analyse_input(demo_file(key), name=scn.filename)
            print()
            print(f"== {scn.title}")
            print(summary_text(outcome.report))
        return 0
    from workbench.app.launch import launch

    print(f"starting the app on http://127.0.0.1:{args.port} (Ctrl-C to stop)")
    return launch(args.store, args.port)
