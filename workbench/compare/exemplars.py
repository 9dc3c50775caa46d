"""What a collection is: exemplars with replicate files, and where collections live.

:class:`Collection`, :class:`Exemplar` and :class:`Replicate` are the loaded,
hash-checked form of a collection directory ``<root>/<collection_id>/``
(``collection.json`` plus ``files/<sha256>``; the format is described in
:mod:`~workbench.compare.collections`). A replicate's bytes are only ever read
through :func:`read_replicate_checked`, which refuses a missing or altered file
(:class:`~workbench.errors.DataIntegrityError`). The lab's own collections
live in the case store (``<store>/collections/``), shared ones in
``reference_sets/collections/``.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from workbench.compare._common import check_id, not_found, read_peaks, sha256_hex
from workbench.errors import DataIntegrityError

__all__ = [
    "COLLECTION_FILE",
    "COLLECTION_FORMAT",
    "COLLECTION_FORMAT_VERSION",
    "Collection",
    "Exemplar",
    "Replicate",
    "collection_dir",
    "default_store",
    "read_replicate_checked",
    "shared_collections_root",
    "store_collections_root",
]

#: Name of the index file inside a collection directory.
COLLECTION_FILE = "collection.json"
COLLECTION_FORMAT = "workbench-collection"
COLLECTION_FORMAT_VERSION = 1


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
            "format": COLLECTION_FORMAT,
            "format_version": COLLECTION_FORMAT_VERSION,
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
        return read_replicate_checked(self.path, replicate)

    def read_replicates(self, exemplar_id: str) -> list:
        """Read every replicate of an exemplar as :class:`~workbench.datamodel.PeakList`."""
        ex = self.exemplar(exemplar_id)
        out = []
        for rep in ex.replicates:
            data = read_replicate_checked(self.path, rep)
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


def collection_dir(root: str | os.PathLike[str], collection_id: str) -> Path:
    """Return ``<root>/<collection_id>`` after checking the id (no path tricks)."""
    return Path(root) / check_id(collection_id, "collection id")


def read_replicate_checked(directory: Path, rep: Replicate) -> bytes:
    """Return a replicate file's bytes, refusing a missing or altered file (DataIntegrityError)."""
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
