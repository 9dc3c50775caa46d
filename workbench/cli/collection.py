"""``workbench collection``: create, fill, list and show exemplar collections.

Collections live under a root directory: by default the case store's
``collections/`` (store from ``--store``, ``$WORKBENCH_STORE`` or
``<repo>/casefiles``), ``--shared`` for ``reference_sets/collections``, or any
directory given with ``--root``.
"""

from __future__ import annotations

import argparse

__all__ = ["add_output_option", "add_root_options", "emit", "register", "resolve_root"]


def add_root_options(parser: argparse.ArgumentParser) -> None:
    """Add the mutually exclusive ``--root``/``--store``/``--shared`` options."""
    group = parser.add_mutually_exclusive_group()
    group.add_argument("--root", metavar="DIR", help="directory that holds collections")
    group.add_argument(
        "--store",
        metavar="DIR",
        help="case store; collections in DIR/collections (default: $WORKBENCH_STORE "
        "or <repo>/casefiles)",
    )
    group.add_argument(
        "--shared", action="store_true", help="use the shared reference_sets/collections"
    )


def add_output_option(parser: argparse.ArgumentParser) -> None:
    """Add ``--json [OUT]``: JSON to OUT, or to standard output when OUT is omitted or '-'."""
    parser.add_argument(
        "--json",
        nargs="?",
        const="-",
        default=None,
        metavar="OUT",
        help="write JSON to OUT (or standard output with '-' or no value)",
    )


def resolve_root(args: argparse.Namespace):
    """Collections root chosen by the options (a pathlib.Path)."""
    from pathlib import Path

    from workbench.compare.collections import shared_collections_root, store_collections_root

    if getattr(args, "root", None):
        return Path(args.root)
    if getattr(args, "shared", False):
        return shared_collections_root()
    return store_collections_root(getattr(args, "store", None))


def emit(args: argparse.Namespace, payload: object, text: str) -> None:
    """Print ``text``, or write ``payload`` as canonical JSON where ``--json`` says."""
    from pathlib import Path

    from workbench.compare._common import atomic_write_bytes, canonical_json

    target = getattr(args, "json", None)
    if target is None:
        print(text, end="" if text.endswith("\n") else "\n")
        return
    out = canonical_json(payload)
    if target == "-":
        print(out, end="")
    else:
        atomic_write_bytes(Path(target), out.encode("utf-8"))
        print(f"wrote {target}")


def _elements_arg(args: argparse.Namespace):
    from workbench.compare._common import load_json_file, parse_element_list, present_elements

    if getattr(args, "elements", None) and getattr(args, "result", None):
        from workbench.errors import InputError

        raise InputError("both --elements and --result were given", "give only one of them")
    if getattr(args, "elements", None):
        return parse_element_list(args.elements)
    if getattr(args, "result", None):
        return present_elements(load_json_file(args.result, "element result"), args.result)
    return None


def _summary(coll) -> dict:
    return {
        "id": coll.id,
        "title": coll.title,
        "version": coll.version,
        "exemplars": len(coll.exemplars),
        "path": str(coll.path),
    }


def _create(args: argparse.Namespace) -> int:
    from workbench.compare.collections import create_collection

    coll = create_collection(
        resolve_root(args),
        args.collection_id,
        args.title,
        description=args.description,
        created_by=args.created_by,
    )
    emit(args, _summary(coll), f"created collection {coll.id} in {coll.path}")
    return 0


def _add(args: argparse.Namespace) -> int:
    from workbench.compare.collections import add_exemplar

    coll = add_exemplar(
        resolve_root(args),
        args.collection_id,
        args.exemplar_id,
        args.files,
        material=args.material,
        origin=args.origin,
        date=args.date,
        measured_by=args.measured_by,
        instrument=args.instrument,
        technique=args.technique,
        notes=args.notes,
        elements=_elements_arg(args),
        unit=args.unit,
        medium=args.medium,
        mode=args.mode,
    )
    ex = coll.exemplar(args.exemplar_id)
    emit(
        args,
        {**_summary(coll), "added": ex.to_dict()},
        f"added exemplar {ex.id} ({len(ex.replicates)} replicate(s)) to {coll.id} "
        f"(now version {coll.version})",
    )
    return 0


def _list(args: argparse.Namespace) -> int:
    from workbench.compare.collections import list_collections

    root = resolve_root(args)
    rows = list_collections(root)
    lines = [f"Collections in {root}:"] if rows else [f"No collections in {root}."]
    for r in rows:
        if "error" in r:
            lines.append(f"  {r['id']}: UNUSABLE ({r['error']})")
        else:
            lines.append(
                f"  {r['id']}: {r['title']} (v{r['version']}, {r['exemplars']} exemplar(s), "
                f"{r['replicates']} replicate(s))"
            )
    emit(args, {"root": str(root), "collections": rows}, "\n".join(lines))
    return 0


def _show(args: argparse.Namespace) -> int:
    from workbench.compare.collections import load_collection

    coll = load_collection(resolve_root(args), args.collection_id)
    lines = [
        f"{coll.id}: {coll.title} (version {coll.version}; all replicate hashes verified)",
        f"  {coll.description}" if coll.description else "",
        f"  created by {coll.created_by or 'not recorded'}",
    ]
    for ex in coll.exemplars:
        lines.append(
            f"  - {ex.id}: {ex.material or 'material not given'}; origin "
            f"{ex.origin or 'not given'}; {len(ex.replicates)} replicate(s); "
            f"elements {', '.join(ex.elements) or 'not recorded'}"
        )
    emit(args, coll.to_dict(), "\n".join(x for x in lines if x))
    return 0


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``collection`` command group."""
    parser = subparsers.add_parser(
        "collection",
        help="exemplar collections of measured known samples",
        description="Create, fill, list and show collections of known exemplars.",
    )
    sub = parser.add_subparsers(dest="collection_command", metavar="ACTION", required=True)

    p = sub.add_parser("create", help="create an empty collection")
    p.add_argument("collection_id", metavar="ID")
    p.add_argument("--title", required=True)
    p.add_argument("--description", default="")
    p.add_argument("--created-by", default="")
    add_root_options(p)
    add_output_option(p)
    p.set_defaults(func=_create)

    p = sub.add_parser("add", help="add an exemplar with its replicate peak lists")
    p.add_argument("collection_id", metavar="COLLECTION")
    p.add_argument("exemplar_id", metavar="EXEMPLAR")
    p.add_argument("files", metavar="PEAKLIST", nargs="+", help="replicate peak-list files")
    for name in ("material", "origin", "date", "measured-by", "instrument", "technique", "notes"):
        p.add_argument(f"--{name}", default="")
    el = p.add_mutually_exclusive_group()
    el.add_argument("--elements", help="elements present, e.g. Ca,Na,Sr")
    el.add_argument("--result", metavar="RESULT.json", help="identification result JSON")
    p.add_argument("--unit", default=None, help="unit of the positions if not in the header")
    p.add_argument("--medium", choices=("air", "vacuum"), default=None)
    p.add_argument("--mode", choices=("emission", "absorption"), default="emission")
    add_root_options(p)
    add_output_option(p)
    p.set_defaults(func=_add)

    p = sub.add_parser("list", help="list collections")
    add_root_options(p)
    add_output_option(p)
    p.set_defaults(func=_list)

    p = sub.add_parser("show", help="show a collection (verifies every file hash)")
    p.add_argument("collection_id", metavar="ID")
    add_root_options(p)
    add_output_option(p)
    p.set_defaults(func=_show)


def add_supplement_option(p: argparse.ArgumentParser) -> None:
    """``--supplement-out FILE``: save the result for a findings sheet."""
    p.add_argument(
        "--supplement-out",
        metavar="FILE",
        help="also write the result as a findings-sheet supplement "
        "(pass it to `workbench findings issue --supplement FILE`)",
    )


def write_supplement(args: argparse.Namespace, kind: str, title: str, report: object) -> None:
    """Write ``report`` (with to_text/to_dict) as a supplement file if asked."""
    out = getattr(args, "supplement_out", None)
    if not out:
        return
    import json

    from workbench.fileio import write_bytes_atomic

    doc = {"kind": kind, "title": title, "text": report.to_text(), "data": report.to_dict()}
    write_bytes_atomic(out, (json.dumps(doc, sort_keys=True, ensure_ascii=False) + "\n").encode())
