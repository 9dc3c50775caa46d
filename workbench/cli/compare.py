"""``workbench compare``: a questioned measurement against a known exemplar or a collection.

The outcome is "cannot be distinguished" or "distinguishable" (overall, per
element and per ratio), always with the caution that an indistinguishable
result does not establish a common origin.
"""

from __future__ import annotations

import argparse

from workbench.cli.collection import (
    add_output_option,
    add_root_options,
    add_supplement_option,
    emit,
    resolve_root,
    write_supplement,
)

__all__ = ["register"]

#: Default pairing tolerances when none is given (common practice, no source:
#: about half the resolution of a compact LIBS spectrometer / of an SDD XRF detector).
_DEFAULT_TOL_NM = 0.05
_DEFAULT_TOL_EV = 100.0


def _handler(args: argparse.Namespace) -> int:
    from pathlib import Path

    from workbench.cli.collection import _elements_arg
    from workbench.compare._common import read_peaks
    from workbench.compare.collections import load_collection
    from workbench.compare.comparison import compare_to_collection, compare_to_exemplar
    from workbench.compare.ratios import parse_ratio
    from workbench.compare.similarity import Tolerance
    from workbench.errors import FileFormatError, InputError

    collection_id = args.collection
    exemplar_id = args.known
    if exemplar_id and "/" in exemplar_id:
        left, exemplar_id = exemplar_id.split("/", 1)
        if collection_id and collection_id != left:
            raise InputError(
                f"--known {args.known!r} names collection {left!r} but --collection is "
                f"{collection_id!r}",
                "give the collection once",
            )
        collection_id = left
    if not collection_id:
        raise InputError(
            "no collection given",
            "use --collection ID (optionally with --known EXEMPLAR) or --known COLLECTION/EXEMPLAR",
        )

    questioned = []
    for name in args.questioned:
        path = Path(name)
        try:
            data = path.read_bytes()
        except FileNotFoundError as exc:
            raise InputError(f"questioned file {path} does not exist", "check the path") from exc
        except OSError as exc:
            raise FileFormatError(
                f"questioned file {path} cannot be read ({exc})", "check it"
            ) from exc
        questioned.append(
            read_peaks(data, name=path.name, unit=args.unit, medium=args.medium, mode=args.mode)
        )

    axis = questioned[0].axis
    if args.resolving_power is not None:
        tol = Tolerance(resolving_power=args.resolving_power)
    elif axis == "wavelength":
        if args.tolerance_eV is not None:
            raise InputError("--tolerance-eV given for wavelength data", "use --tolerance-nm")
        tol = Tolerance(fixed=args.tolerance_nm or _DEFAULT_TOL_NM)
    else:
        if args.tolerance_nm is not None:
            raise InputError("--tolerance-nm given for energy data", "use --tolerance-eV")
        tol = Tolerance(fixed=args.tolerance_eV or _DEFAULT_TOL_EV)
    ratios = [parse_ratio(r, args.ratio_medium) for r in args.ratio]
    collection = load_collection(resolve_root(args), collection_id)
    common = {
        "tolerance": tol,
        "ratios": ratios,
        "rule": args.rule,
        "k": args.k,
        "floor_rsd": args.floor_rsd,
        "questioned_elements": _elements_arg(args),
    }
    if exemplar_id:
        report = compare_to_exemplar(questioned, collection, exemplar_id, **common)
    else:
        report = compare_to_collection(questioned, collection, **common)
    write_supplement(args, "comparison", "Questioned vs known comparison", report)
    emit(args, report.to_dict(), report.to_text())
    return 0


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``compare`` command."""
    p = subparsers.add_parser(
        "compare",
        help="questioned measurement vs known exemplar(s)",
        description="Compare questioned replicate peak lists with a known exemplar "
        "(--known) or rank them against a whole collection (--collection). Outcomes are "
        "'cannot be distinguished' or 'distinguishable'; interpretation is for a "
        "qualified examiner.",
    )
    p.add_argument("questioned", metavar="QUESTIONED", nargs="+", help="questioned peak list(s)")
    p.add_argument("--known", metavar="EXEMPLAR", help="exemplar id (or COLLECTION/EXEMPLAR)")
    p.add_argument("--collection", metavar="ID", help="collection id")
    add_root_options(p)
    p.add_argument(
        "--ratio",
        action="append",
        default=[],
        metavar="EL:POS/EL:POS",
        help='intensity ratio, e.g. "Sr:407.771/Ca:393.366" (nm) or "Fe:6.404keV/Mn:5.899keV"',
    )
    p.add_argument(
        "--ratio-medium",
        choices=("air", "vacuum"),
        default="air",
        help="medium of nm positions in --ratio (default air)",
    )
    tol = p.add_mutually_exclusive_group()
    tol.add_argument("--tolerance-nm", type=float, default=None, help="default 0.05 nm")
    tol.add_argument("--tolerance-eV", type=float, default=None, help="default 100 eV")
    tol.add_argument("--resolving-power", type=float, default=None, metavar="R")
    p.add_argument("--rule", choices=("4s", "4s-floor"), default="4s")
    p.add_argument("--k", type=float, default=4.0, help="multiplier of s (default 4)")
    p.add_argument(
        "--floor-rsd", type=float, default=0.03, help="minimum RSD for 4s-floor (default 0.03)"
    )
    el = p.add_mutually_exclusive_group()
    el.add_argument("--elements", help="elements present in the questioned item, e.g. Ca,Sr,Ba")
    el.add_argument("--result", metavar="RESULT.json", help="identification result for it")
    p.add_argument("--unit", default=None, help="unit of questioned positions if not in header")
    p.add_argument("--medium", choices=("air", "vacuum"), default=None)
    p.add_argument("--mode", choices=("emission", "absorption"), default="emission")
    add_output_option(p)
    add_supplement_option(p)
    p.set_defaults(func=_handler)
