"""``workbench match``: element calls for a spectrum or peak list.

Exit codes: 0 done (whatever was found); 2 bad input or options;
3 reference data unusable.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from workbench.cli._options import INPUT_FORMATS_TEXT, add_block_option, add_columns_option

__all__ = ["add_engine_options", "params_from_args", "peak_options_from_args", "register"]


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
    cal = p.add_mutually_exclusive_group()
    cal.add_argument(
        "--apply-calibration",
        dest="calibration",
        action="store_const",
        const=True,
        help="always correct positions by the estimated scale shift/stretch "
        "(default: only when it is significant)",
    )
    cal.add_argument(
        "--no-calibration",
        dest="calibration",
        action="store_const",
        const=False,
        help="never correct positions by the estimated scale error (it is still reported)",
    )
    p.add_argument(
        "--source-model",
        choices=["auto", "lte-plasma", "discharge-lamp", "absorption", "x-ray"],
        default="auto",
        help="what emitted or absorbed the light (default: chosen from the data; see "
        "docs/evidence-model.md)",
    )
    p.add_argument(
        "--abundance-prior",
        choices=["none", "crustal", "solar"],
        default="none",
        help="prior odds from element abundances (default none)",
    )
    p.add_argument(
        "--saturation-level",
        type=float,
        metavar="LEVEL",
        help="raw signal level at which the detector saturates; such peaks are flagged and "
        "kept out of intensity evidence (without it: flat tops at the spectrum's maximum, "
        "or at a ceiling that three or more flat tops share)",
    )
    p.add_argument(
        "--electron-density",
        type=float,
        metavar="N_E",
        help="electron density in cm^-3 for the McWhirter LTE check",
    )
    p.add_argument("--kind", choices=["peak_list", "spectrum"], help="force how INPUT is read")
    add_columns_option(p)
    add_block_option(p)
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
        apply_calibration=args.calibration,
        electron_density_per_cm3=args.electron_density,
        source_model=args.source_model,
        abundance_prior=args.abundance_prior,
    )


def peak_options_from_args(args: argparse.Namespace) -> dict[str, float] | None:
    """Peak-finding options for raw spectra from parsed options (None for defaults)."""
    opts: dict[str, float] = {}
    if args.min_snr:
        opts["min_snr"] = args.min_snr
    if args.saturation_level is not None:
        opts["saturation_level"] = args.saturation_level
    return opts or None


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``match`` command."""
    p = sub.add_parser(
        "match",
        help="identify elements in a spectrum or peak list",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("input", type=Path, help=f"peak list or spectrum ({INPUT_FORMATS_TEXT})")
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
    peak_options = peak_options_from_args(args)
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
        columns=args.columns,
        block=args.block,
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
