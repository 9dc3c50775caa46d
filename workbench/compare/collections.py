"""Reference collections of measured known samples (exemplars).

A collection is a directory ``<root>/<collection_id>/`` holding

``collection.json``
    ``{"format": "workbench-collection", "format_version": 1, "id", "title",
    "version", "description", "created_by", "exemplars": [...]}``. Each
    exemplar is ``{"id", "material", "origin", "date", "measured_by",
    "instrument", "technique", "notes", "elements", "replicates": [...]}`` and
    each replicate ``{"file": "files/<sha256>", "sha256", "original_name",
    "axis", "medium", "unit", "mode", "size_bytes"}``. ``elements`` (optional)
    lists the element symbols present in the exemplar according to the lab's
    identification run; ``version`` is an integer raised by one on every change.
``files/<sha256>``
    The replicate peak-list files, byte-for-byte as given, named by SHA-256.

The same code serves a lab's own collections in the case store
(``<store>/collections/``) and shared ones in ``reference_sets/collections/``.
Every load re-hashes each replicate file and refuses a collection whose
files are missing or altered (:class:`~workbench.errors.DataIntegrityError`).
Writes are atomic: replicate files are written (temporary file, then
``os.replace``) before the ``collection.json`` that names them, and
``collection.json`` itself is replaced in one step, so a crash leaves either
the old or the new collection, never half of one.

This module writes collections (:func:`create_collection`, :func:`add_exemplar`);
the data model and where collections live are in
:mod:`~workbench.compare.exemplars`, loading and listing in
:mod:`~workbench.compare.collection_load` (all re-exported here).
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

from workbench.compare._common import (
    atomic_write_bytes,
    canonical_json,
    check_id,
    present_elements,
    read_peaks,
    sha256_hex,
)
from workbench.compare.collection_load import list_collections, load_collection
from workbench.compare.exemplars import (
    COLLECTION_FILE,
    Collection,
    Exemplar,
    Replicate,
    collection_dir,
    default_store,
    shared_collections_root,
    store_collections_root,
)
from workbench.errors import ComparisonError, FileFormatError, InputError

__all__ = [
    "COLLECTION_FILE",
    "Collection",
    "Exemplar",
    "Replicate",
    "add_exemplar",
    "create_collection",
    "default_store",
    "list_collections",
    "load_collection",
    "shared_collections_root",
    "store_collections_root",
]


_DATE_RE = re.compile(r"^\d{4}(-\d{2}(-\d{2})?)?$")


def _write_index(directory: Path, collection: Collection) -> None:
    text = canonical_json(collection.to_dict())
    atomic_write_bytes(directory / COLLECTION_FILE, text.encode("utf-8"))


def create_collection(
    root: str | os.PathLike[str],
    collection_id: str,
    title: str,
    *,
    description: str = "",
    created_by: str = "",
) -> Collection:
    """Create an empty collection directory.

    Parameters
    ----------
    root : path
        Directory that holds collections (created if missing).
    collection_id : str
        Identifier, also the directory name.
    title : str
        Human-readable title.
    description : str, optional
        What the collection holds.
    created_by : str, optional
        Who created it.

    Returns
    -------
    Collection
        The new collection (version 1, no exemplars).

    Raises
    ------
    ComparisonError
        If a collection with that id already exists.
    """
    directory = collection_dir(root, collection_id)
    if not title.strip():
        raise InputError("the collection title is empty", "give a short title (--title)")
    if (directory / COLLECTION_FILE).exists():
        raise ComparisonError(
            f"collection {collection_id!r} already exists in {Path(root)}",
            "choose another id, or add exemplars to the existing collection",
        )
    (directory / "files").mkdir(parents=True, exist_ok=True)
    coll = Collection(
        id=collection_id,
        title=title.strip(),
        version=1,
        description=description,
        created_by=created_by,
        path=directory,
    )
    _write_index(directory, coll)
    return coll


def _as_bytes(
    item: bytes | str | os.PathLike[str], index: int, exemplar_id: str
) -> tuple[bytes, str]:
    if isinstance(item, bytes | bytearray):
        return bytes(item), f"{exemplar_id}-replicate-{index + 1}"
    p = Path(item)
    try:
        return p.read_bytes(), p.name
    except FileNotFoundError as exc:
        raise InputError(f"replicate file {p} does not exist", "check the path") from exc
    except OSError as exc:
        raise FileFormatError(f"replicate file {p} cannot be read ({exc})", "check it") from exc


def add_exemplar(
    root: str | os.PathLike[str],
    collection_id: str,
    exemplar_id: str,
    replicate_files: Sequence[bytes | str | os.PathLike[str]],
    *,
    material: str = "",
    origin: str = "",
    date: str = "",
    measured_by: str = "",
    instrument: str = "",
    technique: str = "",
    notes: str = "",
    elements: Mapping[str, Any] | Iterable[str] | None = None,
    unit: str | None = None,
    medium: str | None = None,
    mode: str = "emission",
    original_names: Sequence[str] | None = None,
) -> Collection:
    """Add an exemplar and its replicate peak lists to a collection.

    Every replicate is read (so that a bad file is refused before anything is
    written), stored byte-for-byte under ``files/<sha256>``, and then the
    collection index is replaced atomically.

    Parameters
    ----------
    root : path
        Directory that holds collections.
    collection_id, exemplar_id : str
        Where to add, and the new exemplar's identifier.
    replicate_files : sequence of bytes or paths
        One entry per replicate measurement.
    material, origin, date, measured_by, instrument, technique, notes : str
        Metadata; ``date`` as ISO ``YYYY[-MM[-DD]]``.
    elements : engine result mapping or iterable of str, optional
        Elements present in the exemplar (engine JSON: verdict level ≥ 2).
    unit, medium, mode
        How to read the replicate files (``medium`` required for wavelengths).
    original_names : sequence of str, optional
        Names to record for byte inputs (defaults to the file names).

    Returns
    -------
    Collection
        The updated collection.
    """
    check_id(exemplar_id, "exemplar id")
    coll = load_collection(root, collection_id)
    if any(e.id == exemplar_id for e in coll.exemplars):
        raise ComparisonError(
            f"collection {collection_id!r} already has an exemplar {exemplar_id!r}",
            "choose another exemplar id",
        )
    if not replicate_files:
        raise InputError(
            f"exemplar {exemplar_id!r} has no replicate files", "give at least one peak list"
        )
    if date and not _DATE_RE.match(date):
        raise InputError(f"date {date!r} is not ISO YYYY-MM-DD", "write e.g. 2026-03-14")
    if original_names is not None and len(original_names) != len(replicate_files):
        raise InputError(
            "original_names and replicate_files differ in length", "give one name per file"
        )
    elems = tuple(sorted(present_elements(elements, "exemplar elements"))) if elements else ()

    prepared: list[tuple[bytes, Replicate]] = []
    axes: set[str] = set()
    for i, item in enumerate(replicate_files):
        data, name = _as_bytes(item, i, exemplar_id)
        if original_names is not None:
            name = original_names[i]
        peaks = read_peaks(data, name=name, unit=unit, medium=medium, mode=mode)
        if peaks.table.height == 0:
            raise InputError(f"replicate {name} has no peaks", "give a non-empty peak list")
        axes.add(peaks.axis)
        digest = sha256_hex(data)
        prepared.append(
            (
                data,
                Replicate(
                    file=f"files/{digest}",
                    sha256=digest,
                    original_name=name,
                    axis=peaks.axis,
                    medium=peaks.medium,
                    unit=unit,
                    mode=peaks.mode,
                    size_bytes=len(data),
                ),
            )
        )
    if len(axes) > 1:
        raise InputError(
            f"replicates of {exemplar_id!r} mix wavelength and energy axes",
            "give all replicates of one exemplar on the same axis",
        )
    # Files first, then the index that names them.
    for data, rep in prepared:
        target = coll.path / rep.file
        if not (target.exists() and sha256_hex(target.read_bytes()) == rep.sha256):
            atomic_write_bytes(target, data)
    exemplar = Exemplar(
        id=exemplar_id,
        material=material,
        origin=origin,
        date=date,
        measured_by=measured_by,
        instrument=instrument,
        technique=technique,
        notes=notes,
        elements=elems,
        replicates=tuple(rep for _, rep in prepared),
    )
    updated = Collection(
        id=coll.id,
        title=coll.title,
        version=coll.version + 1,
        description=coll.description,
        created_by=coll.created_by,
        exemplars=(*coll.exemplars, exemplar),
        path=coll.path,
    )
    _write_index(coll.path, updated)
    return updated
