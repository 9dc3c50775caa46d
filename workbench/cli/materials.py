"""``workbench materials``: candidate pigments/materials from detected elements.

Flags candidates first available after a claimed date (possible
anachronisms), always with the cautions that elements alone do not identify a
compound and that restorations can introduce later materials.
"""

from __future__ import annotations

import argparse

from workbench.cli.collection import (
    add_output_option,
    add_supplement_option,
    emit,
    write_supplement,
)

__all__ = ["register"]


def _handler(args: argparse.Namespace) -> int:
    from workbench.cli.collection import _elements_arg
    from workbench.compare.materials import candidate_materials
    from workbench.errors import InputError

    elements = _elements_arg(args)
    if elements is None:
        raise InputError("no elements given", "use --elements Ti,Pb,Zn or --result RESULT.json")
    report = candidate_materials(elements, args.claimed_year)
    year = f" (claimed date {args.claimed_year})" if args.claimed_year is not None else ""
    write_supplement(args, "materials", f"Candidate materials{year}", report)
    emit(args, report.to_dict(), report.to_text())
    return 0


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``materials`` command."""
    p = subparsers.add_parser(
        "materials",
        help="candidate pigments/materials for detected elements",
        description="List pigments and materials consistent with the detected elements and "
        "flag those first available after the claimed date.",
    )
    el = p.add_mutually_exclusive_group()
    el.add_argument("--elements", help="detected elements, e.g. Ti,Pb,Zn")
    el.add_argument("--result", metavar="RESULT.json", help="identification result JSON")
    p.add_argument("--claimed-year", type=int, default=None, help="claimed date (negative = BC)")
    add_output_option(p)
    add_supplement_option(p)
    p.set_defaults(func=_handler)
