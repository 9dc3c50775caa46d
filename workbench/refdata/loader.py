"""Hash-checked loading of reference line sets."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import polars as pl

from workbench.errors import (
    DataIntegrityError,
    ManifestError,
    UnknownReferenceSetError,
)
from workbench.refdata.blend import COMPONENT_SCHEMA
from workbench.refdata.columns import ADDED_COLUMNS, CANONICAL_SCHEMA, conform
from workbench.refdata.manifest import REBUILD_HINT, default_root, read_manifest, sha256_file

__all__ = ["LAB_MANIFEST_NAME", "ReferenceSet", "load_components", "load_set"]

#: Manifest file of a lab-set directory.
LAB_MANIFEST_NAME = "lab_manifest.json"


@dataclass(frozen=True)
class ReferenceSet:
    """One reference line set with its provenance.

    Attributes
    ----------
    id, version, title : str
        Identity of the set.
    domain : {"optical", "xray", "lab"}
        Kind of lines.
    axis : {"wavelength", "energy"}
        Natural axis for matching.
    medium : str or None
        Position columns present (``"air+vacuum"``), None for X-ray.
    sha256 : str
        SHA-256 of the data file the table came from (for lab sets not yet
        saved, of the table's canonical Parquet bytes).
    table : polars.DataFrame
        Lines with the canonical columns (:data:`~workbench.refdata.columns.CANONICAL_SCHEMA`).
    entry : dict
        The manifest entry (sources, licences, build recipe, ...).
    data_version : str
        Version of the whole collection (``manifest.json``), or of the lab manifest.
    """

    id: str
    version: str
    title: str
    domain: str
    axis: str
    medium: str | None
    sha256: str
    table: pl.DataFrame = field(repr=False)
    entry: dict[str, Any] = field(repr=False, default_factory=dict)
    data_version: str = ""

    def provenance(self) -> dict[str, str]:
        """Return what a result must carry to name this set: id, version, sha256, data_version."""
        return {
            "id": self.id,
            "version": self.version,
            "sha256": self.sha256,
            "data_version": self.data_version,
        }


_CACHE: dict[tuple[str, str, int], pl.DataFrame] = {}


def _read_table(
    path: Path, expected_sha256: str, what: str, columns: dict | None = None
) -> pl.DataFrame:
    if not path.is_file():
        raise DataIntegrityError(f"reference file {path} for {what} is missing", REBUILD_HINT)
    stat = path.stat()
    key = (str(path.resolve()), expected_sha256, stat.st_mtime_ns)
    cached = _CACHE.get(key)
    if cached is not None:
        return cached
    actual = sha256_file(path)
    if actual != expected_sha256:
        raise DataIntegrityError(
            f"reference file {path} for {what} has SHA-256 {actual[:16]}…, the manifest "
            f"says {expected_sha256[:16]}…; the file was changed or damaged",
            REBUILD_HINT,
        )
    try:
        table = pl.read_parquet(path)
    except Exception as exc:  # polars raises several types for a corrupt file
        raise DataIntegrityError(
            f"{path} cannot be read as Parquet ({exc})", REBUILD_HINT
        ) from None
    if columns is not None:
        if list(table.columns) != list(columns):
            raise ManifestError(f"{path} does not have the expected columns", REBUILD_HINT)
        _CACHE[key] = table
        return table
    legacy = [c for c in CANONICAL_SCHEMA if c not in ADDED_COLUMNS]
    if list(table.columns) == legacy:
        # a lab set saved before the newer columns existed: add them as nulls
        table = conform(table)
    if list(table.columns) != list(CANONICAL_SCHEMA):
        raise ManifestError(f"{path} does not have the canonical line-table columns", REBUILD_HINT)
    _CACHE[key] = table
    return table


def _lab_entries(lab_dir: Path) -> tuple[dict[str, Any], str]:
    path = Path(lab_dir) / LAB_MANIFEST_NAME
    if not path.exists():
        return {}, ""
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ManifestError(
            f"{path} cannot be read as JSON ({exc})",
            "restore the lab manifest from a backup or import the lab CSVs again",
        ) from None
    return {e["id"]: e for e in manifest.get("sets", [])}, str(manifest.get("data_version", ""))


def load_set(set_id: str, root: Path | None = None, lab_dir: Path | None = None) -> ReferenceSet:
    """Load a reference set after checking its file's SHA-256.

    Parameters
    ----------
    set_id : str
        Set id (``"optical"``, ``"xray"``, ``"hydrogen_like"`` or a lab set id).
    root : pathlib.Path, optional
        Collection directory; :func:`~workbench.refdata.manifest.default_root` when omitted.
    lab_dir : pathlib.Path, optional
        Directory of saved lab sets (with ``lab_manifest.json``), searched after the
        shipped sets.

    Returns
    -------
    ReferenceSet
        The set. Tables are cached per (path, sha256, mtime), so repeated loads are cheap.

    Raises
    ------
    UnknownReferenceSetError
        No set has that id (the message lists the known ids).
    DataIntegrityError
        The file is missing or its hash does not match.
    """
    root = Path(root) if root is not None else default_root()
    manifest = read_manifest(root)
    shipped = {e["id"]: e for e in manifest["sets"]}
    if set_id in shipped:
        entry = shipped[set_id]
        table = _read_table(root / entry["file"], entry["sha256"], f"set {set_id!r}")
        return ReferenceSet(
            id=set_id,
            version=str(entry["version"]),
            title=str(entry["title"]),
            domain=str(entry["domain"]),
            axis=str(entry["axis"]),
            medium=entry.get("medium"),
            sha256=str(entry["sha256"]),
            table=table,
            entry=entry,
            data_version=str(manifest["data_version"]),
        )
    labs: dict[str, Any] = {}
    if lab_dir is not None:
        labs, lab_version = _lab_entries(Path(lab_dir))
        if set_id in labs:
            entry = labs[set_id]
            table = _read_table(
                Path(lab_dir) / entry["file"], entry["sha256"], f"lab set {set_id!r}"
            )
            return ReferenceSet(
                id=set_id,
                version=str(entry["version"]),
                title=str(entry["title"]),
                domain=str(entry["domain"]),
                axis=str(entry["axis"]),
                medium=entry.get("medium"),
                sha256=str(entry["sha256"]),
                table=table,
                entry=entry,
                data_version=lab_version,
            )
    known = sorted(shipped) + sorted(labs)
    raise UnknownReferenceSetError(
        f"no reference set {set_id!r}",
        f"use one of: {', '.join(known)} (lab sets need --lab-dir)",
    )


def load_components(
    set_id: str = "optical", root: Path | None = None, *, line_id: str | None = None
) -> pl.DataFrame:
    """Load the hyperfine/isotope components of a set's blended lines (hash-checked).

    Parameters
    ----------
    set_id : str
        The set whose blended lines are wanted (only ``"optical"`` has components).
    root : pathlib.Path, optional
        Collection directory; :func:`~workbench.refdata.manifest.default_root` when omitted.
    line_id : str, optional
        Only the components of this blended line (``blend_id == line_id``).

    Returns
    -------
    polars.DataFrame
        Columns of :data:`~workbench.refdata.blend.COMPONENT_SCHEMA`, keyed by
        ``blend_id`` (the ``line_id`` of the blended line in the set). A line
        with ``n_components == 1`` has no rows here.

    Raises
    ------
    UnknownReferenceSetError
        The collection has no components table for that set.
    DataIntegrityError
        The file is missing or its hash does not match.
    """
    root = Path(root) if root is not None else default_root()
    manifest = read_manifest(root)
    entries = {e.get("parent_set"): e for e in manifest.get("components", [])}
    if set_id not in entries:
        raise UnknownReferenceSetError(
            f"reference set {set_id!r} has no components table",
            f"use one of: {', '.join(sorted(str(k) for k in entries)) or '(none)'}",
        )
    entry = entries[set_id]
    table = _read_table(
        root / entry["file"], entry["sha256"], f"components of {set_id!r}", COMPONENT_SCHEMA
    )
    if line_id is not None:
        table = table.filter(pl.col("blend_id") == line_id)
    return table
