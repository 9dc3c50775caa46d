"""``workbench peaks``: find peaks in a spectrum file and print them."""

from __future__ import annotations

import argparse

from workbench.cli._options import INPUT_FORMATS_TEXT, add_block_option, add_columns_option

__all__ = ["register"]


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``peaks`` command.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        The top-level sub-command registry.
    """
    p = subparsers.add_parser(
        "peaks",
        help="find emission peaks or absorption dips in a spectrum",
        description=f"Read a spectrum ({INPUT_FORMATS_TEXT}), remove the "
        "baseline, and list the peaks with sub-pixel centres, FWHM, SNR and flags. "
        "A peak-list input is shown as read.",
    )
    p.add_argument("input", metavar="INPUT", help="spectrum file")
    p.add_argument("--mode", choices=("emission", "absorption"), default="emission")
    p.add_argument(
        "--min-snr", type=float, default=5.0, metavar="K", help="height and prominence >= K·σ"
    )
    p.add_argument("--baseline", choices=("snip", "als", "none"), default="snip")
    p.add_argument("--unit", help="unit of the x axis (nm, angstrom, um, cm-1, eV, keV)")
    p.add_argument("--medium", choices=("air", "vacuum"), help="medium of wavelengths")
    add_columns_option(p)
    add_block_option(p)
    p.add_argument(
        "--saturation-level",
        type=float,
        help="raw level at which the detector saturates (without it: flat tops at the "
        "spectrum's maximum, or at a ceiling that three or more flat tops share)",
    )
    p.add_argument("--json", metavar="OUT|-", help="write the result as JSON to OUT or stdout")
    p.set_defaults(func=_handle)


def _handle(args: argparse.Namespace) -> int:
    import sys

    from workbench import canonjson
    from workbench.datamodel import PeakList
    from workbench.io import read_any
    from workbench.peaks import find_peaks

    data = read_any(
        args.input,
        unit=args.unit,
        medium=args.medium,
        mode=args.mode,
        block=args.block,
        columns=args.columns,
    )
    if isinstance(data, PeakList):
        peaks = data
        shown_as_read = True
    else:
        peaks = find_peaks(
            data,
            mode=args.mode,
            min_snr=args.min_snr,
            baseline=None if args.baseline == "none" else args.baseline,
            saturation_level=args.saturation_level,
        )
        shown_as_read = False
    source = peaks.source
    # Numbers follow the one canonical rule (10 significant digits, NaN -> null).
    rows = peaks.table.to_dicts()
    result = {
        "source": source.to_dict() if source is not None else None,
        "axis": peaks.axis,
        "medium": peaks.medium,
        "mode": peaks.mode,
        "input_was_peak_list": shown_as_read,
        "peaks": rows,
        "peak_finding": peaks.extra.get("peak_finding"),
        "noise_sigma": peaks.extra.get("noise_sigma"),
        "intensity_unit": peaks.extra.get("intensity_unit"),
    }
    if args.json:
        data_out = canonjson.dumps(result, indent=2) + b"\n"
        if args.json == "-":
            sys.stdout.buffer.write(data_out)
            return 0
        from workbench.fileio import write_bytes_atomic

        write_bytes_atomic(args.json, data_out)
        print(f"wrote {len(rows)} peaks to {args.json}")
        return 0
    _print_table(peaks, shown_as_read)
    return 0


def _print_table(peaks, shown_as_read: bool) -> None:
    src = peaks.source
    pos_col = peaks.position_column
    unit = "nm" if peaks.axis == "wavelength" else "eV"
    medium = f", {peaks.medium}" if peaks.medium else ""
    if src is not None:
        print(f"input: {src.name}  ({src.format}, {src.size_bytes:,} bytes)")
        print(f"sha256: {src.sha256}")
        for note in src.notes:
            print(f"note: {note}")
    if shown_as_read:
        print("input is a peak list: shown as read, no peak finding done")
    else:
        sigma = peaks.extra.get("noise_sigma")
        print(f"mode: {peaks.mode}; noise σ = {sigma:.4g}; {peaks.table.height} peaks")
    fwhm_col = "fwhm_nm" if peaks.axis == "wavelength" else "fwhm_eV"
    head = (
        f"{'position (' + unit + medium + ')':>24} {'intensity':>12} {'FWHM':>10} {'SNR':>8}  flags"
    )
    print(head)
    cols = peaks.table.columns
    for row in peaks.table.iter_rows(named=True):
        fwhm = row.get(fwhm_col) if fwhm_col in cols else None
        snr = row.get("snr") if "snr" in cols else None
        inten = row.get("intensity")
        marks = (("saturated", row.get("saturated")), ("split top", row.get("split_top")))
        flags = " ".join(f for f, on in marks if on)
        print(
            f"{row[pos_col]:>24.5f} "
            f"{'' if inten is None else f'{inten:.5g}':>12} "
            f"{'' if fwhm is None else f'{fwhm:.4g}':>10} "
            f"{'' if snr is None else f'{snr:.1f}':>8}  {flags}"
        )
