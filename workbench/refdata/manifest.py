"""The reference manifest: where the shipped sets are, and their SHA-256.

``reference_sets/manifest.json`` lists every shipped data file with its hash
(see ``reference_sets/build/build_all.py``, which writes it). This module finds
the collection, reads the manifest, and verifies files against it.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path
from typing import Any

from workbench.errors import ManifestError

__all__ = [
    "ENV_VAR",
    "MANIFEST_NAME",
    "REBUILD_HINT",
    "data_version",
    "default_root",
    "list_sets",
    "read_manifest",
    "sha256_file",
    "verify_sets",
]

#: Environment variable that points at a reference collection directory.
ENV_VAR = "WORKBENCH_REFERENCE_SETS"
#: File name of the manifest inside the collection.
MANIFEST_NAME = "manifest.json"
#: What to tell a user whose collection is damaged.
REBUILD_HINT = (
    "re-run `uv run python reference_sets/build/build_all.py` or restore the file from git"
)


def default_root() -> Path:
    """Return the reference collection directory.

    Returns
    -------
    pathlib.Path
        ``$WORKBENCH_REFERENCE_SETS`` if set; otherwise ``reference_sets/``
        beside the ``workbench`` package (a source checkout); otherwise the
        packaged copy ``workbench/_reference_sets`` if it exists.
    """
    env = os.environ.get(ENV_VAR)
    if env:
        return Path(env)
    import workbench

    package_dir = Path(workbench.__file__).resolve().parent
    checkout = package_dir.parent / "reference_sets"
    if (checkout / MANIFEST_NAME).exists():
        return checkout
    packaged = package_dir / "_reference_sets"
    if (packaged / MANIFEST_NAME).exists():
        return packaged
    return checkout


def sha256_file(path: Path) -> str:
    """Return the hex SHA-256 of a file's bytes."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()


_REQUIRED_SET_KEYS = ("id", "title", "version", "domain", "axis", "file", "sha256")


def read_manifest(root: Path | None = None) -> dict[str, Any]:
    """Read and check the manifest of a reference collection.

    Parameters
    ----------
    root : pathlib.Path, optional
        Collection directory; :func:`default_root` when omitted.

    Returns
    -------
    dict
        The manifest (``data_version``, ``sets``, ``components``, ``atomic``).

    Raises
    ------
    ManifestError
        If the manifest is missing, not JSON, or lacks required fields.
    """
    root = Path(root) if root is not None else default_root()
    path = root / MANIFEST_NAME
    if not path.exists():
        raise ManifestError(
            f"no reference manifest at {path}",
            f"set {ENV_VAR} to the reference_sets directory, or {REBUILD_HINT}",
        )
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ManifestError(f"{path} cannot be read as JSON ({exc})", REBUILD_HINT) from None
    if not isinstance(manifest, dict) or not isinstance(manifest.get("sets"), list):
        raise ManifestError(f"{path} has no 'sets' list", REBUILD_HINT)
    if not isinstance(manifest.get("data_version"), str):
        raise ManifestError(f"{path} has no 'data_version'", REBUILD_HINT)
    for n, entry in enumerate(manifest["sets"]):
        missing = [k for k in _REQUIRED_SET_KEYS if not isinstance(entry, dict) or k not in entry]
        if missing:
            raise ManifestError(f"{path}: set entry {n} lacks {', '.join(missing)}", REBUILD_HINT)
    manifest.setdefault("atomic", [])
    manifest.setdefault("components", [])
    return manifest


def data_version(root: Path | None = None) -> str:
    """Return the collection's data version (e.g. ``"2026.12.1"``)."""
    return str(read_manifest(root)["data_version"])


#: Fields of a set entry shown by :func:`list_sets`.
SUMMARY_KEYS: tuple[str, ...] = (
    "id",
    "title",
    "version",
    "domain",
    "axis",
    "unit",
    "medium",
    "row_count",
    "elements",
    "stages",
    "file",
    "sha256",
)


def list_sets(root: Path | None = None, lab_dir: Path | None = None) -> list[dict[str, Any]]:
    """Summarise the shipped sets (and a lab directory's sets) without loading tables.

    Parameters
    ----------
    root : pathlib.Path, optional
        Collection directory; :func:`default_root` when omitted.
    lab_dir : pathlib.Path, optional
        A lab-set directory (its ``lab_manifest.json``); skipped when it has none.

    Returns
    -------
    list of dict
        One dict per set: id, title, version, domain, axis, unit, medium,
        row_count, elements, stages, file, sha256.
    """
    entries = list(read_manifest(root)["sets"])
    if lab_dir is not None:
        lab_manifest = Path(lab_dir) / "lab_manifest.json"
        if lab_manifest.is_file():
            try:
                entries += json.loads(lab_manifest.read_text(encoding="utf-8")).get("sets", [])
            except (json.JSONDecodeError, UnicodeDecodeError) as exc:
                raise ManifestError(
                    f"lab manifest {lab_manifest} is not valid JSON ({exc})",
                    "restore it from a backup or import the lab sets again",
                ) from exc
    return [{k: entry.get(k) for k in SUMMARY_KEYS} for entry in entries]


def verify_sets(root: Path | None = None) -> list[dict[str, Any]]:
    """Check every file listed in the manifest against its SHA-256.

    Parameters
    ----------
    root : pathlib.Path, optional
        Collection directory; :func:`default_root` when omitted.

    Returns
    -------
    list of dict
        One per file: ``id``, ``file``, ``status`` (``"ok"``, ``"mismatch"`` or
        ``"missing"``), ``expected_sha256`` and ``actual_sha256`` (None if missing).
    """
    root = Path(root) if root is not None else default_root()
    manifest = read_manifest(root)
    results = []
    entries = [
        *manifest["sets"],
        *manifest.get("components", []),
        *manifest["atomic"],
        *manifest.get("other", []),
    ]
    for entry in entries:
        path = root / entry["file"]
        if not path.is_file():
            actual, status = None, "missing"
        else:
            actual = sha256_file(path)
            status = "ok" if actual == entry["sha256"] else "mismatch"
        results.append(
            {
                "id": entry["id"],
                "file": entry["file"],
                "status": status,
                "expected_sha256": entry["sha256"],
                "actual_sha256": actual,
            }
        )
    return results
