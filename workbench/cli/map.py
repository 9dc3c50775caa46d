"""``workbench map``: element maps from a spectrum cube (scanning XRF, LIBS imaging).

The sum and maximum-pixel spectra are matched by the same engine as
``workbench match``; each family it calls is fitted in every pixel
(non-negative least squares on line templates plus a smooth background) on a
Dask cluster: a LocalCluster sized to this machine by default, an existing
one with --scheduler ADDRESS (it must see the cube's path), or Dask threads
in this process with --scheduler threads.

Exit codes: 0 done; 2 bad input or options; 3 reference data unusable;
5/6 case-store refusal or record not found (with --case).
"""

from __future__ import annotations

import argparse
from pathlib import Path

from workbench.cli._options import add_store_option

__all__ = ["add_scheduler_options", "register"]


def add_scheduler_options(p: argparse.ArgumentParser) -> None:
    """``--scheduler`` and ``--workers``, shared by ``map`` and ``batch``."""
    p.add_argument(
        "--scheduler",
        metavar="ADDR",
        help="Dask scheduler address (tcp://host:8786), or 'threads' for no cluster "
        "(default: a LocalCluster sized to this machine)",
    )
    p.add_argument("--workers", type=int, metavar="N", help="LocalCluster workers (default: cores)")


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``map`` command."""
    p = sub.add_parser(
        "map",
        help="element maps from a spectrum cube (HDF5, NeXus, Zarr, .npy)",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("cube", type=Path, nargs="?", help="the cube file (or Zarr directory)")
    p.add_argument(
        "--demo",
        action="store_true",
        help="write the INVENTED demo painting cube into --out and map it",
    )
    p.add_argument(
        "--instrument",
        type=Path,
        metavar="FILE",
        help="instrument description (JSON: calibration, detector, pixel size)",
    )
    p.add_argument("--dataset", metavar="PATH", help="dataset inside the file")
    p.add_argument("--elements", metavar="Pb,Hg,...", help="consider only these elements")
    p.add_argument("--min-snr", type=float, help="peak threshold for the sum spectra (σ)")
    p.add_argument(
        "--chunk-mb", type=float, help="largest chunk per task in MB (default 32; 1 for --demo)"
    )
    p.add_argument(
        "--rgb", metavar="A,B,C", help="three families for rgb.png, e.g. 'Pb L,Hg L,Cu K'"
    )
    p.add_argument("--out", type=Path, metavar="DIR", help="output directory (default CUBE_maps)")
    p.add_argument("--json", action="store_true", help="print the manifest as JSON")
    add_scheduler_options(p)
    g = p.add_argument_group("recording in a case")
    g.add_argument("--case", metavar="NUMBER", help="record cube and maps in this case")
    g.add_argument("--item", metavar="ITEM", help="item number measured")
    g.add_argument("--operator", default="unknown", help="who measured")
    g.add_argument("--analyst", default="unknown", help="who made the maps")
    g.add_argument("--measured-at", metavar="ISO", help="when it was measured (ISO 8601)")
    add_store_option(p)
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Handler of ``workbench map``."""
    import sys

    from workbench.cli._options import print_json
    from workbench.errors import InputError
    from workbench.maps import (
        MapParameters,
        Runner,
        TextProgress,
        cube_sha256,
        load_instrument,
        open_cube,
        run_maps,
    )
    from workbench.maps.store import register_products, write_products

    if args.demo:
        from workbench.maps.demo import DEMO_INSTRUMENT, write_demo_cube

        out = args.out or Path("demo_painting_maps")
        out.mkdir(parents=True, exist_ok=True)
        cube_path = write_demo_cube(out / "demo_painting.h5")
        instrument = DEMO_INSTRUMENT
        print("INVENTED demo painting (synthetic XRF scan, not a measurement)", file=sys.stderr)
    else:
        if args.cube is None:
            raise InputError("no cube given", "name the cube file, or use --demo")
        cube_path = args.cube
        instrument = load_instrument(args.instrument)
        out = args.out or Path(f"{cube_path.stem}_maps")
    if args.case and not args.item:
        raise InputError("--case needs --item", "name the item that was scanned")
    elements = None
    if args.elements:
        elements = tuple(sorted({e.strip() for e in args.elements.split(",") if e.strip()}))
    rgb = None
    if args.rgb:
        rgb = tuple(s.strip() for s in args.rgb.split(","))
        if len(rgb) != 3:
            raise InputError(
                f"--rgb needs three families, got {len(rgb)}", "give e.g. 'Pb L,Hg L,Cu K'"
            )
    chunk_mb = args.chunk_mb or (1.0 if args.demo else 32.0)
    cube = open_cube(cube_path, instrument=instrument, dataset=args.dataset, chunk_mb=chunk_mb)
    params = MapParameters(elements=elements, min_snr=args.min_snr)
    with Runner(args.scheduler, n_workers=args.workers, progress=TextProgress()) as runner:
        result = run_maps(cube, runner, instrument=instrument, params=params)
    manifest = write_products(result, out, cube_sha256=cube_sha256(cube_path), rgb=rgb)
    if args.case:
        from workbench.casefile import CaseStore, utc_now

        with CaseStore.open(args.store) as store:
            rec = register_products(
                store,
                (args.case, args.item),
                cube_path,
                out,
                manifest,
                operator=args.operator,
                analyst=args.analyst,
                measured_at=args.measured_at or utc_now(),
                instrument_name=instrument.name,
            )
        manifest = {**manifest, "case_record": rec}
    if args.json:
        print_json(manifest)
        return 0
    print(f"cube      {cube_path}  {' × '.join(map(str, cube.shape))}  ({result.runner})")
    print(f"found     {', '.join(result.candidates) or 'nothing'}")
    for sp, s in result.screening.items():
        state = "mapped" if s["detected"] else "below the detection screen, no map"
        print(f"  {sp:<6} sum {s['sum_counts']:.0f} ± {s['sigma']:.0f} counts: {state}")
    print("timings   " + ", ".join(f"{k} {v:.2f} s" for k, v in result.timings_s.items()))
    print(f"written   {out}/ (maps.h5, PNG previews, manifest.json)")
    if args.case:
        rec = manifest["case_record"]
        print(
            f"recorded  measurement #{rec['measurement_id']}, analysis #{rec['analysis_id']} "
            f"(original kept by {rec['original_kept']})"
        )
    return 0
