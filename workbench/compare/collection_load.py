"""Loading a collection from disk: the index parsed strictly, every replicate re-hashed.

:func:`load_collection` refuses a ``collection.json`` that is malformed or
names another collection, and (by default) re-hashes every replicate file;
:func:`list_collections` summarises the collections under a root, listing a
malformed one with its error rather than failing.
"""

from __future__ import annotations

import os
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from workbench.compare._common import load_json_file, not_found
from workbench.compare.exemplars import (
    COLLECTION_FILE,
    COLLECTION_FORMAT,
    Collection,
    Exemplar,
    Replicate,
    collection_dir,
    read_replicate_checked,
)
from workbench.errors import DataIntegrityError, FileFormatError, InputError

__all__ = ["list_collections", "load_collection"]


def _str_field(obj: Mapping[str, Any], key: str, where: str, required: bool = False) -> str:
    value = obj.get(key, "")
    if value is None:
        value = ""
    if not isinstance(value, str) or (required and not value):
        raise DataIntegrityError(
            f"{where}: field {key!r} is missing or not text",
            "restore collection.json from a backup",
        )
    return value


def _parse_replicate(obj: Any, where: str) -> Replicate:
    if not isinstance(obj, Mapping):
        raise DataIntegrityError(f"{where} is not an object", "restore collection.json")
    sha = _str_field(obj, "sha256", where, required=True)
    file = _str_field(obj, "file", where, required=True)
    if not re.fullmatch(r"[0-9a-f]{64}", sha) or file != f"files/{sha}":
        raise DataIntegrityError(
            f"{where}: file {file!r} is not named by its SHA-256",
            "restore collection.json from a backup",
        )
    axis = _str_field(obj, "axis", where, required=True)
    medium = obj.get("medium")
    if axis not in ("wavelength", "energy") or medium not in ("air", "vacuum", None):
        raise DataIntegrityError(f"{where}: bad axis/medium", "restore collection.json")
    unit = obj.get("unit")
    size = obj.get("size_bytes", 0)
    return Replicate(
        file=file,
        sha256=sha,
        original_name=_str_field(obj, "original_name", where),
        axis=axis,
        medium=medium,
        unit=unit if isinstance(unit, str) else None,
        mode=_str_field(obj, "mode", where) or "emission",
        size_bytes=int(size) if isinstance(size, int) else 0,
    )


def load_collection(
    root: str | os.PathLike[str], collection_id: str, *, verify: bool = True
) -> Collection:
    """Load a collection and check every replicate file's SHA-256.

    Parameters
    ----------
    root : path
        Directory that holds collections.
    collection_id : str
        The collection to load.
    verify : bool, default True
        Re-hash every replicate file (set False only for listings).

    Returns
    -------
    Collection
        The collection.

    Raises
    ------
    ComparisonError
        If there is no such collection.
    DataIntegrityError
        If ``collection.json`` is malformed or a replicate file is missing or altered.
    """
    directory = collection_dir(root, collection_id)
    index = directory / COLLECTION_FILE
    if not index.exists():
        base = Path(root)
        known = [p.parent.name for p in base.glob(f"*/{COLLECTION_FILE}")] if base.is_dir() else []
        raise not_found(
            f"collection in {base} called",
            collection_id,
            known,
            "create it with 'workbench collection create', or point --root/--store/--shared "
            "at the directory that holds it",
        )
    try:
        raw = load_json_file(index, "collection index")
    except (FileFormatError, InputError) as exc:
        raise DataIntegrityError(exc.problem, "restore collection.json from a backup") from exc
    where = f"{index}"
    if not isinstance(raw, Mapping) or raw.get("format") != COLLECTION_FORMAT:
        raise DataIntegrityError(f"{where} is not a workbench collection index", "check the path")
    if raw.get("id") != collection_id:
        raise DataIntegrityError(
            f"{where} names collection {raw.get('id')!r}, not {collection_id!r}",
            "the directory was renamed or copied over; restore it",
        )
    version = raw.get("version")
    exemplars_raw = raw.get("exemplars")
    if not isinstance(version, int) or not isinstance(exemplars_raw, list):
        raise DataIntegrityError(f"{where}: version or exemplars malformed", "restore it")
    exemplars: list[Exemplar] = []
    for i, e in enumerate(exemplars_raw):
        ew = f"{where} exemplars[{i}]"
        if not isinstance(e, Mapping) or not isinstance(e.get("replicates"), list):
            raise DataIntegrityError(f"{ew} is malformed", "restore collection.json")
        elements = e.get("elements") or []
        exemplars.append(
            Exemplar(
                id=_str_field(e, "id", ew, required=True),
                material=_str_field(e, "material", ew),
                origin=_str_field(e, "origin", ew),
                date=_str_field(e, "date", ew),
                measured_by=_str_field(e, "measured_by", ew),
                instrument=_str_field(e, "instrument", ew),
                technique=_str_field(e, "technique", ew),
                notes=_str_field(e, "notes", ew),
                elements=tuple(str(x) for x in elements),
                replicates=tuple(
                    _parse_replicate(r, f"{ew} replicates[{j}]")
                    for j, r in enumerate(e["replicates"])
                ),
            )
        )
    coll = Collection(
        id=collection_id,
        title=_str_field(raw, "title", where),
        version=version,
        description=_str_field(raw, "description", where),
        created_by=_str_field(raw, "created_by", where),
        exemplars=tuple(exemplars),
        path=directory,
    )
    if verify:
        for ex in coll.exemplars:
            for rep in ex.replicates:
                read_replicate_checked(directory, rep)
    return coll


def list_collections(root: str | os.PathLike[str]) -> list[dict[str, Any]]:
    """Summaries of the collections under ``root`` (sorted by id).

    Parameters
    ----------
    root : path
        Directory that holds collections; a missing directory has none.

    Returns
    -------
    list of dict
        ``{"id", "title", "version", "exemplars", "replicates"}`` per collection.
        Malformed collections are listed with an ``"error"`` field instead.
    """
    base = Path(root)
    if not base.is_dir():
        return []
    out: list[dict[str, Any]] = []
    for index in sorted(base.glob(f"*/{COLLECTION_FILE}")):
        cid = index.parent.name
        try:
            coll = load_collection(base, cid, verify=False)
        except (DataIntegrityError, InputError) as exc:
            out.append({"id": cid, "error": str(exc)})
            continue
        out.append(
            {
                "id": coll.id,
                "title": coll.title,
                "version": coll.version,
                "exemplars": len(coll.exemplars),
                "replicates": sum(len(e.replicates) for e in coll.exemplars),
            }
        )
    return out
