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
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from workbench.compare._common import (
    atomic_write_bytes,
    canonical_json,
    check_id,
    load_json_file,
    not_found,
    present_elements,
    read_peaks,
    sha256_hex,
)
from workbench.errors import (
    ComparisonError,
    DataIntegrityError,
    FileFormatError,
    InputError,
)

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

#: Name of the index file inside a collection directory.
COLLECTION_FILE = "collection.json"
_FORMAT = "workbench-collection"
_FORMAT_VERSION = 1
_DATE_RE = re.compile(r"^\d{4}(-\d{2}(-\d{2})?)?$")


def _repo_root() -> Path:
    return Path(__file__).resolve().parents[2]


def default_store() -> Path:
    """Case-store directory: ``$WORKBENCH_STORE`` or ``<repo>/casefiles``."""
    env = os.environ.get("WORKBENCH_STORE")
    return Path(env) if env else _repo_root() / "casefiles"


def store_collections_root(store: str | os.PathLike[str] | None = None) -> Path:
    """The lab's own collections: ``<store>/collections``."""
    return (Path(store) if store is not None else default_store()) / "collections"


def shared_collections_root() -> Path:
    """Shared collections shipped with the workbench: ``reference_sets/collections``."""
    return _repo_root() / "reference_sets" / "collections"


@dataclass(frozen=True)
class Replicate:
    """One replicate measurement of an exemplar.

    Attributes
    ----------
    file : str
        Path relative to the collection directory (``files/<sha256>``).
    sha256 : str
        SHA-256 of the file's bytes.
    original_name : str
        File name as given when the replicate was added.
    axis : {"wavelength", "energy"}
        Axis of the peak list.
    medium : {"air", "vacuum"} or None
        Medium of the wavelengths; None for an energy axis.
    unit : str or None
        Unit passed to the reader (None: taken from the file's header).
    mode : {"emission", "absorption"}
        Peak mode.
    size_bytes : int
        Length of the file.
    """

    file: str
    sha256: str
    original_name: str
    axis: str
    medium: str | None
    unit: str | None
    mode: str
    size_bytes: int

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form stored in ``collection.json``."""
        return {
            "file": self.file,
            "sha256": self.sha256,
            "original_name": self.original_name,
            "axis": self.axis,
            "medium": self.medium,
            "unit": self.unit,
            "mode": self.mode,
            "size_bytes": self.size_bytes,
        }


@dataclass(frozen=True)
class Exemplar:
    """A known sample with its replicate measurements.

    Attributes
    ----------
    id, material, origin, date, measured_by, instrument, technique, notes : str
        Descriptive metadata (``date`` is ISO ``YYYY[-MM[-DD]]`` or empty).
    elements : tuple of str
        Element symbols present in the exemplar (may be empty: not recorded).
    replicates : tuple of Replicate
        The replicate measurements.
    """

    id: str
    material: str = ""
    origin: str = ""
    date: str = ""
    measured_by: str = ""
    instrument: str = ""
    technique: str = ""
    notes: str = ""
    elements: tuple[str, ...] = ()
    replicates: tuple[Replicate, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form stored in ``collection.json``."""
        return {
            "id": self.id,
            "material": self.material,
            "origin": self.origin,
            "date": self.date,
            "measured_by": self.measured_by,
            "instrument": self.instrument,
            "technique": self.technique,
            "notes": self.notes,
            "elements": list(self.elements),
            "replicates": [r.to_dict() for r in self.replicates],
        }


@dataclass(frozen=True)
class Collection:
    """A loaded, hash-checked collection.

    Attributes
    ----------
    id, title, description, created_by : str
        Descriptive metadata.
    version : int
        Raised by one on every change.
    exemplars : tuple of Exemplar
        The exemplars, in the order they were added.
    path : pathlib.Path
        The collection directory.
    """

    id: str
    title: str
    version: int
    description: str
    created_by: str
    exemplars: tuple[Exemplar, ...] = ()
    path: Path = field(default=Path("."), compare=False)

    def to_dict(self) -> dict[str, Any]:
        """Return the JSON form stored in ``collection.json`` (without ``path``)."""
        return {
            "format": _FORMAT,
            "format_version": _FORMAT_VERSION,
            "id": self.id,
            "title": self.title,
            "version": self.version,
            "description": self.description,
            "created_by": self.created_by,
            "exemplars": [e.to_dict() for e in self.exemplars],
        }

    def exemplar(self, exemplar_id: str) -> Exemplar:
        """Return the exemplar with this id (ComparisonError if there is none)."""
        for ex in self.exemplars:
            if ex.id == exemplar_id:
                return ex
        raise not_found(
            f"exemplar in collection {self.id!r} called",
            exemplar_id,
            (e.id for e in self.exemplars),
            "list the exemplars with 'workbench collection show' and use one of their ids",
        )

    def replicate_bytes(self, replicate: Replicate) -> bytes:
        """Read a replicate's bytes and check them against its SHA-256."""
        return _read_checked(self.path, replicate)

    def read_replicates(self, exemplar_id: str) -> list:
        """Read every replicate of an exemplar as :class:`~workbench.datamodel.PeakList`."""
        ex = self.exemplar(exemplar_id)
        out = []
        for rep in ex.replicates:
            data = _read_checked(self.path, rep)
            out.append(
                read_peaks(
                    data,
                    name=rep.original_name,
                    unit=rep.unit,
                    medium=rep.medium,
                    mode=rep.mode,
                )
            )
        return out


def _collection_dir(root: str | os.PathLike[str], collection_id: str) -> Path:
    return Path(root) / check_id(collection_id, "collection id")


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
    directory = _collection_dir(root, collection_id)
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


def _read_checked(directory: Path, rep: Replicate) -> bytes:
    target = directory / rep.file
    try:
        data = target.read_bytes()
    except FileNotFoundError as exc:
        raise DataIntegrityError(
            f"collection {directory.name}: replicate file {rep.file} "
            f"({rep.original_name}) is missing",
            "restore the file from a backup or remove and re-add the exemplar",
        ) from exc
    digest = sha256_hex(data)
    if digest != rep.sha256:
        raise DataIntegrityError(
            f"collection {directory.name}: replicate file {rep.file} ({rep.original_name}) "
            f"has SHA-256 {digest[:12]}…, expected {rep.sha256[:12]}…; it was altered",
            "restore the original file from a backup; do not use this collection until then",
        )
    return data


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
    directory = _collection_dir(root, collection_id)
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
    if not isinstance(raw, Mapping) or raw.get("format") != _FORMAT:
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
                _read_checked(directory, rep)
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
