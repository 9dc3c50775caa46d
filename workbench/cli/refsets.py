"""``workbench refsets``: list, show, verify and import reference line sets."""

from __future__ import annotations

import argparse

__all__ = ["register"]


def _add_common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--root", metavar="DIR", help="reference collection (default: shipped one)")
    p.add_argument("--lab-dir", metavar="DIR", help="directory of saved lab sets")


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``refsets`` command group."""
    parser = subparsers.add_parser("refsets", help="reference line sets: list, show, verify")
    sub = parser.add_subparsers(dest="refsets_command", metavar="SUBCOMMAND")
    parser.set_defaults(func=lambda args: (parser.print_help(), 2)[1])

    p = sub.add_parser("list", help="list the reference sets")
    _add_common(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_list)

    p = sub.add_parser("show", help="show lines of one set")
    p.add_argument("set_id", metavar="ID")
    _add_common(p)
    p.add_argument("--element", help="only this element (symbol)")
    p.add_argument("--ion", type=int, help="only this stage (1 = neutral)")
    p.add_argument(
        "--range-nm", nargs=2, type=float, metavar=("A", "B"), help="vacuum wavelength range in nm"
    )
    p.add_argument(
        "--range-eV", nargs=2, type=float, metavar=("A", "B"), help="photon energy range in eV"
    )
    p.add_argument("--limit", type=int, default=50, help="at most N lines (default 50)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_show)

    p = sub.add_parser(
        "components", help="hyperfine/isotope components of one blended line (high resolution)"
    )
    p.add_argument("line_id", metavar="LINE_ID", help="line_id of the blended line (see show)")
    p.add_argument("--set", dest="set_id", default="optical", help="set (default optical)")
    p.add_argument("--root", metavar="DIR", help="reference collection (default: shipped one)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_components)

    p = sub.add_parser("verify", help="check every file against its SHA-256 (exit 3 on mismatch)")
    _add_common(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_verify)

    p = sub.add_parser("import-lab", help="validate a lab CSV and save it as a lab set")
    p.add_argument("csv", metavar="CSV")
    p.add_argument("--id", required=True, dest="set_id")
    p.add_argument("--title", required=True)
    p.add_argument("--version", default="1")
    p.add_argument(
        "--lab-dir",
        default="lab_sets",
        metavar="DIR",
        help="where lab sets are kept (default ./lab_sets)",
    )
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_import_lab)


def _dump(payload: object) -> None:
    import json

    print(json.dumps(payload, indent=2, sort_keys=True, ensure_ascii=False))


def _root(args: argparse.Namespace):
    from pathlib import Path

    return Path(args.root) if getattr(args, "root", None) else None


def _list(args: argparse.Namespace) -> int:
    from pathlib import Path

    from workbench.refdata import list_sets

    rows = list_sets(_root(args), Path(args.lab_dir) if args.lab_dir else None)
    if args.json:
        _dump(rows)
        return 0
    print(f"{'id':<16} {'version':<10} {'domain':<8} {'lines':>8}  elements")
    for r in rows:
        els = r.get("elements") or []
        shown = " ".join(els[:12]) + (f" … ({len(els)})" if len(els) > 12 else "")
        print(f"{r['id']:<16} {r['version']:<10} {r['domain']:<8} {r['row_count']:>8}  {shown}")
    return 0


def _show(args: argparse.Namespace) -> int:
    import polars as pl

    from workbench.errors import ValueRangeError
    from workbench.refdata import load_set

    rs = load_set(args.set_id, _root(args), lab_dir=args.lab_dir)
    t = rs.table
    if args.element:
        t = t.filter(pl.col("element") == args.element)
    if args.ion is not None:
        t = t.filter(pl.col("ion") == args.ion)
    if args.range_nm:
        a, b = sorted(args.range_nm)
        t = t.filter(pl.col("wavelength_vac_nm").is_between(a, b))
    if args.range_eV:
        a, b = sorted(args.range_eV)
        t = t.filter(pl.col("energy_eV").is_between(a, b))
    if args.limit < 0:
        raise ValueRangeError(f"--limit {args.limit} is negative", "give a limit of 0 or more")
    total = t.height
    t = t.head(args.limit)
    if args.json:
        _dump({"set": rs.provenance(), "matched": total, "shown": t.height, "lines": t.to_dicts()})
        return 0
    print(f"{rs.id} {rs.version} ({rs.title}): {total} lines match, showing {t.height}")
    if rs.domain == "xray" and rs.axis == "energy":
        print(f"{'energy_eV':>11} {'el':<3} {'IUPAC':<10} {'Siegbahn':<8} {'rel_int':>8}")
        for r in t.iter_rows(named=True):
            print(
                f"{r['energy_eV']:>11.1f} {r['element']:<3} {r['transition'] or '':<10} "
                f"{r['siegbahn'] or '':<8} {r['rel_intensity'] or 0:>8.4f}"
            )
        return 0
    print(
        f"{'air_nm':>10} {'vac_nm':>10} {'el':<3} {'ion':>3} {'A_ki/s':>10} "
        f"{'source':<22} {'comp':>4}  line_id"
    )
    for r in t.iter_rows(named=True):
        air = f"{r['wavelength_air_nm']:.4f}" if r["wavelength_air_nm"] is not None else "-"
        a = f"{r['A_ki_per_s']:.3g}" if r["A_ki_per_s"] is not None else "-"
        n = r.get("n_components")
        print(
            f"{air:>10} {r['wavelength_vac_nm']:>10.4f} {r['element']:<3} "
            f"{r['ion'] if r['ion'] is not None else '-':>3} {a:>10} {r['source_id']:<22} "
            f"{n if n is not None else '-':>4}  {r['line_id']}"
        )
    return 0


def _components(args: argparse.Namespace) -> int:
    from workbench.errors import InputError
    from workbench.refdata import load_components, load_set

    rs = load_set(args.set_id, _root(args))
    line = rs.table.filter(rs.table["line_id"] == args.line_id)
    if line.height == 0:
        raise InputError(
            f"no line {args.line_id!r} in set {args.set_id!r}",
            f"list line ids with `workbench refsets show {args.set_id} --element X`",
        )
    comps = load_components(args.set_id, _root(args), line_id=args.line_id)
    row = line.row(0, named=True)
    if args.json:
        _dump({"set": rs.provenance(), "line": row, "components": comps.to_dicts()})
        return 0
    print(
        f"{args.line_id}: {row['element']} {row['ion']}, vac {row['wavelength_vac_nm']:.5f} nm, "
        f"log gf {row['log_gf'] if row['log_gf'] is not None else '-'}, "
        f"{comps.height} component(s)"
    )
    if comps.height == 0:
        print("listed as one row by its source(s): no components")
        return 0
    print(
        f"{'vac_nm':>11} {'log_gf':>7} {'isotope':<8} {'fraction':>8} {'weight_gf':>10} "
        f"{'summed':<6} source"
    )
    for c in comps.iter_rows(named=True):
        lg = f"{c['log_gf']:.3f}" if c["log_gf"] is not None else "-"
        x = f"{c['isotope_fraction']:.4f}" if c["isotope_fraction"] is not None else "-"
        w = f"{c['weight_gf']:.4g}" if c["weight_gf"] is not None else "-"
        print(
            f"{c['wavelength_vac_nm']:>11.5f} {lg:>7} {c['isotope'] or '-':<8} {x:>8} {w:>10} "
            f"{'yes' if c['in_blend'] else 'no':<6} {c['source_id']}"
        )
    return 0


def _verify(args: argparse.Namespace) -> int:
    from workbench.refdata import verify_sets

    results = verify_sets(_root(args))
    bad = [r for r in results if r["status"] != "ok"]
    if args.json:
        _dump({"ok": not bad, "files": results})
    else:
        for r in results:
            print(f"{r['status']:<9} {r['file']}")
        print("all files match the manifest" if not bad else f"{len(bad)} file(s) do not match")
    return 3 if bad else 0


def _import_lab(args: argparse.Namespace) -> int:
    from workbench.refdata import import_lab_set, save_lab_set

    rs = import_lab_set(args.csv, args.set_id, args.title, version=args.version)
    manifest = save_lab_set(rs, args.lab_dir)
    if args.json:
        _dump({"set": rs.provenance(), "row_count": rs.table.height, "lab_manifest": str(manifest)})
    else:
        print(f"imported {rs.table.height} lines as lab set {rs.id!r} into {manifest.parent}")
    return 0
