"""``workbench batch``: match many single spectra on one scheduler.

Each file gets exactly what ``workbench match FILE --json OUT`` would write
(OUT/<file name>.json, byte-identical); OUT/summary.parquet and
OUT/summary.csv list file, SHA-256, species by verdict and warnings count.
A file that cannot be read is listed with its error and the rest go on.

Exit codes: 0 every file matched; 2 bad options, or some files failed.
"""

from __future__ import annotations

import argparse
from pathlib import Path

__all__ = ["register"]


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``batch`` command."""
    from workbench.cli.map import add_scheduler_options
    from workbench.cli.match import add_engine_options

    p = sub.add_parser(
        "batch",
        help="match many spectra or peak lists (files, folders, globs) on a Dask cluster",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("paths", nargs="+", help="files, folders or glob patterns")
    p.add_argument(
        "--out",
        type=Path,
        default=Path("batch_results"),
        metavar="DIR",
        help="output directory (default ./batch_results)",
    )
    p.add_argument("--json", action="store_true", help="print the summary rows as JSON")
    add_scheduler_options(p)
    add_engine_options(p)
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Handler of ``workbench batch``."""
    from workbench.cli._options import print_json
    from workbench.cli.match import params_from_args, peak_options_from_args
    from workbench.maps import Runner, TextProgress
    from workbench.maps.batch import BatchOptions, run_batch

    options = BatchOptions(
        set_ids=tuple(args.sets) if args.sets else None,
        params=params_from_args(args),
        unit=args.unit,
        medium=args.medium,
        kind=args.kind,
        # The peak-finding options as `workbench match` reads them (--saturation-level
        # was dropped here until stop 32).
        peak_options=peak_options_from_args(args),
        lab_dir=args.lab_dir,
        columns=args.columns,
        block=args.block,
    )
    with Runner(args.scheduler, n_workers=args.workers, progress=TextProgress()) as runner:
        rows = run_batch(args.paths, runner, args.out, options)
    failed = [r for r in rows if r["error"]]
    if args.json:
        print_json(rows)
    else:
        for r in rows:
            calls = r["established"] or r["probable"] or "-"
            state = (
                f"error: {r['error']}" if r["error"] else f"{calls} ({r['n_warnings']} warnings)"
            )
            print(f"{Path(r['file']).name:<40} {state}")
        print(f"\n{len(rows)} file(s), {len(failed)} failed; summary in {args.out}/summary.csv")
    return 2 if failed else 0
