"""``workbench analyse``: run the matching engine on a stored measurement and store the result.

The stored original bytes are read back (their SHA-256 verified), matched with
the same engine as ``workbench match``, and the canonical result JSON is stored
immutably with an ``analysed`` custody event.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

__all__ = ["register"]


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``analyse`` command."""
    from workbench.cli.match import add_engine_options

    p = sub.add_parser(
        "analyse",
        help="match a stored measurement and store the analysis",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("measurement_id", type=int, help="id of a stored measurement")
    add_engine_options(p)
    p.add_argument("--analyst", required=True, help="who runs the analysis (recorded)")
    p.add_argument("--store", type=Path, help="case store directory")
    p.add_argument("--json", action="store_true", help="print the stored analysis as JSON")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Handler of ``workbench analyse``."""
    import json

    from workbench import __version__
    from workbench.casefile import CaseStore
    from workbench.cli.match import params_from_args, peak_options_from_args
    from workbench.matching import analyse_input, summary_text

    params = params_from_args(args)
    with CaseStore.open(args.store) as store:
        m = store.get_measurement(args.measurement_id)
        data = store.file_bytes(m.sha256)
        peak_options = peak_options_from_args(args)
        outcome = analyse_input(
            data,
            name=m.filename,
            set_ids=args.sets,
            params=params,
            unit=args.unit,
            medium=args.medium,
            kind=args.kind,
            peak_options=peak_options,
            lab_dir=args.lab_dir,
            columns=args.columns,
            block=args.block,
        )
        record = store.add_analysis(
            m.id,
            parameters=outcome.report["parameters"],
            reference_sets=outcome.report["reference_sets"],
            result_json=outcome.json_bytes,
            software_version=__version__,
            analyst=args.analyst,
        )
    if args.json:
        out = {
            "analysis_id": record.id,
            "measurement_id": m.id,
            "result": json.loads(outcome.json_bytes),  # the stored canonical form
        }
        sys.stdout.write(json.dumps(out, sort_keys=True, ensure_ascii=False) + "\n")
    else:
        print(
            f"analysis {record.id} stored for measurement {m.id} "
            f"({m.case_number}/{m.item_number}, {m.filename})"
        )
        print(summary_text(outcome.report))
    return 0
