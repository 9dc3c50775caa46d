"""``workbench match``: element calls for a spectrum or peak list.

Exit codes: 0 done (whatever was found); 2 bad input or options;
3 reference data unusable.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

__all__ = ["add_engine_options", "params_from_args", "register"]


def add_engine_options(p: argparse.ArgumentParser) -> None:
    """Engine options shared by ``match`` and ``analyse``."""
    p.add_argument(
        "--set",
        dest="sets",
        action="append",
        metavar="ID",
        help="reference set id (repeatable; default: optical, or xray for energies)",
    )
    tol = p.add_mutually_exclusive_group()
    tol.add_argument("--tolerance-nm", type=float, metavar="X", help="fixed half-window in nm")
    tol.add_argument(
        "--tolerance-eV",
        dest="tolerance_eV",
        type=float,
        metavar="X",
        help="fixed half-window in eV (X-ray)",
    )
    tol.add_argument(
        "--resolving-power", type=float, metavar="R", help="window = λ/R (default R = 5000)"
    )
    tol.add_argument(
        "--fwhm-factor", type=float, metavar="K", help="window = K × each peak's measured FWHM"
    )
    p.add_argument("--medium", choices=["air", "vacuum"], help="medium of the input wavelengths")
    p.add_argument("--unit", help="unit of the input positions (nm, Å, µm, cm-1, eV, keV)")
    p.add_argument("--mode", choices=["emission", "absorption"], default="emission")
    p.add_argument(
        "--temperature-K",
        dest="temperature_K",
        type=float,
        metavar="T",
        help="excitation temperature (default: estimate by Boltzmann plot)",
    )
    p.add_argument("--elements", metavar="Fe,Cu,...", help="consider only these elements")
    p.add_argument(
        "--apply-calibration",
        action="store_true",
        help="correct positions by the estimated scale shift/stretch before matching",
    )
    p.add_argument(
        "--electron-density",
        type=float,
        metavar="N_E",
        help="electron density in cm^-3 for the McWhirter LTE check",
    )
    p.add_argument("--kind", choices=["peak_list", "spectrum"], help="force how INPUT is read")
    p.add_argument("--min-snr", type=float, help="peak-finding threshold for raw spectra (σ)")
    p.add_argument("--lab-dir", type=Path, help="directory holding lab reference sets")
    p.add_argument(
        "--instrument",
        type=Path,
        metavar="FILE",
        help="XRF instrument description (JSON: anode, tube_kV, detector, fwhm_MnKa_eV, "
        "atmosphere, ...); saved with the result (default: a silicon-drift unit, Rh 40 kV)",
    )


def params_from_args(args: argparse.Namespace):
    """Build MatchParameters from parsed options (imports the engine lazily)."""
    from workbench.matching import MatchParameters, ToleranceSpec

    if args.tolerance_nm is not None:
        tol = ToleranceSpec("fixed", args.tolerance_nm)
    elif args.tolerance_eV is not None:
        tol = ToleranceSpec("fixed", args.tolerance_eV)
    elif args.fwhm_factor is not None:
        tol = ToleranceSpec("fwhm", args.fwhm_factor)
    elif args.resolving_power is not None:
        tol = ToleranceSpec("resolving_power", args.resolving_power)
    else:
        tol = ToleranceSpec("auto")
    elements = None
    if args.elements:
        elements = tuple(sorted({e.strip() for e in args.elements.split(",") if e.strip()}))
    instrument = None
    if getattr(args, "instrument", None) is not None:
        from workbench.xray import load_instrument

        instrument = load_instrument(args.instrument)
    return MatchParameters(
        instrument=instrument,
        tolerance=tol,
        temperature_K=args.temperature_K,
        elements=elements,
        mode=args.mode,
        apply_calibration=args.apply_calibration,
        electron_density_per_cm3=args.electron_density,
    )


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``match`` command."""
    p = sub.add_parser(
        "match",
        help="identify elements in a spectrum or peak list",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument(
        "input", type=Path, help="peak list or spectrum (CSV/TSV/text, JCAMP-DX, Parquet)"
    )
    add_engine_options(p)
    p.add_argument("--json", metavar="OUT", help="write the JSON result to OUT ('-' for stdout)")
    p.add_argument("--csv-dir", type=Path, metavar="DIR", help="write CSV tables to DIR")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Handler of ``workbench match``."""
    from workbench.errors import InputError
    from workbench.fileio import write_bytes_atomic
    from workbench.matching import analyse_input, summary_text
    from workbench.matching.export import write_csv_tables

    if not args.input.is_file():
        raise InputError(f"input file {str(args.input)!r} does not exist", "check the path")
    params = params_from_args(args)
    peak_options = {"min_snr": args.min_snr} if args.min_snr else None
    outcome = analyse_input(
        args.input,
        name=args.input.name,
        set_ids=args.sets,
        params=params,
        unit=args.unit,
        medium=args.medium,
        kind=args.kind,
        peak_options=peak_options,
        lab_dir=args.lab_dir,
    )
    if args.json == "-":
        sys.stdout.buffer.write(outcome.json_bytes + b"\n")
    else:
        print(summary_text(outcome.report))
        if args.json:
            write_bytes_atomic(args.json, outcome.json_bytes)
            print(f"\nJSON written to {args.json}")
    if args.csv_dir:
        names = write_csv_tables(outcome.report, args.csv_dir)
        if args.json != "-":
            print(f"CSV tables written to {args.csv_dir}: {', '.join(names)}")
    return 0
