"""From detected elements to candidate pigments and materials, with date checks.

The table ``reference_sets/materials/pigments.csv`` lists common historical
and modern pigments with the elements an elemental method (LIBS, XRF, ...)
would see (``key_elements``), elements that often accompany them
(``associated_elements``) and the earliest date of availability
(``first_available_year``; negative years are BC, ``since_antiquity`` marks
ancient materials). Every date in it is from memory and labelled so in its
``source_note`` column; its README gives the sources to check them against.
The file is hash-checked against ``reference_sets/materials/manifest.json``
on every load.

Candidate rule
--------------
A material is a candidate when every key element is present, except elements
in ``optional_elements`` (by default H, C, N, O, F, P, S, Cl: light elements
that LIBS in air and XRF in air often do not see), and at least one key element
is present. Candidates are ranked by the number of key elements present
(more specific materials first), then by the number of associated elements
present, then by name. Present elements explained by no candidate are listed.

A candidate whose ``first_available_year`` is later than the claimed date is
flagged as a possible anachronism: only a possibility, because elements alone
do not identify a compound (confirm with a compound-specific method such as
Raman, XRD or FTIR) and because restorations and retouching can introduce
later materials into an older work.
"""

from __future__ import annotations

import csv
import io
import json
import os
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from workbench.compare._common import (
    canonical_json,
    element_symbol,
    jsonable,
    present_elements,
    sha256_hex,
)
from workbench.errors import DataIntegrityError, InputError, ManifestError

__all__ = [
    "MATERIALS_CAUTIONS",
    "OPTIONAL_ELEMENTS",
    "Material",
    "MaterialsReport",
    "candidate_materials",
    "load_materials",
    "materials_dir",
]

#: Light elements often not detected by LIBS or XRF in air (common practice, no source).
OPTIONAL_ELEMENTS: frozenset[str] = frozenset({"H", "C", "N", "O", "F", "P", "S", "Cl"})

#: Cautions carried by every materials report.
MATERIALS_CAUTIONS: tuple[str, ...] = (
    "Elements alone do not identify a compound: every candidate needs confirmation by a "
    "compound-specific method (e.g. Raman, XRD or FTIR).",
    "Restorations, retouching and later varnish or fillers can introduce later materials "
    "into an older work; an anachronistic material may belong to a later intervention.",
    "Dates and compositions in the table are from memory (see its source_note column) and "
    "must be checked against the cited handbooks before they are relied on.",
    "Light elements (e.g. S, P, C, O) are often not detected by LIBS or XRF in air; their "
    "absence does not exclude a material.",
)

_COLUMNS = (
    "id",
    "name",
    "synonyms",
    "formula",
    "key_elements",
    "detectable_note",
    "associated_elements",
    "first_available_year",
    "since_antiquity",
    "last_common_year",
    "date_basis",
    "source",
    "source_note",
)


def materials_dir() -> Path:
    """Directory of the shipped table: ``reference_sets/materials``."""
    return Path(__file__).resolve().parents[2] / "reference_sets" / "materials"


@dataclass(frozen=True)
class Material:
    """One row of the materials table."""

    id: str
    name: str
    synonyms: tuple[str, ...]
    formula: str
    key_elements: tuple[str, ...]
    detectable_note: str
    associated_elements: tuple[str, ...]
    first_available_year: int
    since_antiquity: bool
    last_common_year: int | None
    date_basis: str
    source: str
    source_note: str

    def to_dict(self) -> dict[str, Any]:
        """JSON form."""
        return {
            "id": self.id,
            "name": self.name,
            "synonyms": list(self.synonyms),
            "formula": self.formula,
            "key_elements": list(self.key_elements),
            "detectable_note": self.detectable_note,
            "associated_elements": list(self.associated_elements),
            "first_available_year": self.first_available_year,
            "since_antiquity": self.since_antiquity,
            "last_common_year": self.last_common_year,
            "date_basis": self.date_basis,
            "source": self.source,
            "source_note": self.source_note,
        }

    @property
    def first_available_text(self) -> str:
        """``"~1916"``, ``"c. 300 BC (antiquity)"``."""
        y = self.first_available_year
        text = f"~{y}" if y > 0 else f"c. {-y} BC"
        return f"{text} (antiquity)" if self.since_antiquity else text


def _split(text: str) -> tuple[str, ...]:
    return tuple(p.strip() for p in text.split(";") if p.strip())


def _verify(csv_path: Path, manifest_path: Path) -> bytes:
    try:
        manifest = json.loads(manifest_path.read_text(encoding="utf-8"))
    except FileNotFoundError as exc:
        raise ManifestError(
            f"materials manifest {manifest_path} is missing",
            "restore reference_sets/materials/manifest.json from the distribution",
        ) from exc
    except (OSError, ValueError) as exc:
        raise ManifestError(
            f"materials manifest {manifest_path} is unreadable ({exc})",
            "restore it from the distribution",
        ) from exc
    entry = next(
        (
            f
            for f in manifest.get("files", [])
            if isinstance(f, Mapping) and f.get("path") == csv_path.name
        ),
        None,
    )
    if entry is None or not isinstance(entry.get("sha256"), str):
        raise ManifestError(
            f"materials manifest {manifest_path} has no SHA-256 for {csv_path.name}",
            "restore the manifest, or add the entry when the table is edited on purpose",
        )
    try:
        data = csv_path.read_bytes()
    except FileNotFoundError as exc:
        raise DataIntegrityError(
            f"materials table {csv_path} is missing", "restore it from the distribution"
        ) from exc
    digest = sha256_hex(data)
    if digest != entry["sha256"]:
        raise DataIntegrityError(
            f"materials table {csv_path.name} has SHA-256 {digest[:12]}…, the manifest "
            f"expects {entry['sha256'][:12]}…",
            "restore the table from the distribution; if it was edited on purpose, update "
            "the manifest entry and record why in the README",
        )
    return data


def _int(value: str, row: int, col: str, nullable: bool = False) -> int | None:
    v = value.strip()
    if not v and nullable:
        return None
    try:
        return int(v)
    except ValueError as exc:
        raise DataIntegrityError(
            f"materials table row {row}, column {col!r}: {value!r} is not an integer year",
            "write years as integers (negative for BC)",
        ) from exc


def load_materials(
    csv_path: str | os.PathLike[str] | None = None,
    manifest_path: str | os.PathLike[str] | None = None,
) -> list[Material]:
    """Load and hash-check the materials table.

    Parameters
    ----------
    csv_path : path, optional
        The table; defaults to ``reference_sets/materials/pigments.csv``.
    manifest_path : path, optional
        The manifest with its SHA-256; defaults to ``manifest.json`` beside the table.

    Returns
    -------
    list of Material
        The rows in file order.

    Raises
    ------
    ManifestError
        If the manifest is missing or lacks the table.
    DataIntegrityError
        If the table's hash differs or a row is malformed.
    """
    path = Path(csv_path) if csv_path is not None else materials_dir() / "pigments.csv"
    mpath = Path(manifest_path) if manifest_path is not None else path.parent / "manifest.json"
    data = _verify(path, mpath)
    reader = csv.DictReader(io.StringIO(data.decode("utf-8")))
    missing = [c for c in _COLUMNS if c not in (reader.fieldnames or [])]
    if missing:
        raise DataIntegrityError(
            f"materials table {path.name} lacks columns {missing}", "restore the table"
        )
    out: list[Material] = []
    seen: set[str] = set()
    for row_no, row in enumerate(reader, start=2):
        mid = row["id"].strip()
        if not mid or mid in seen:
            raise DataIntegrityError(
                f"materials table row {row_no}: id {mid!r} empty or repeated", "fix the table"
            )
        seen.add(mid)
        try:
            key = tuple(
                element_symbol(e, f"row {row_no} key_elements") for e in _split(row["key_elements"])
            )
            assoc = tuple(
                element_symbol(e, f"row {row_no} associated_elements")
                for e in _split(row["associated_elements"])
            )
        except InputError as exc:
            raise DataIntegrityError(exc.problem, "fix the element symbols in the table") from exc
        if not key:
            raise DataIntegrityError(
                f"materials table row {row_no} ({mid}): no key elements", "fix the table"
            )
        antiq = row["since_antiquity"].strip().lower()
        if antiq not in ("true", "false"):
            raise DataIntegrityError(
                f"materials table row {row_no}, column 'since_antiquity': {antiq!r}",
                "write true or false",
            )
        out.append(
            Material(
                id=mid,
                name=row["name"].strip(),
                synonyms=_split(row["synonyms"]),
                formula=row["formula"].strip(),
                key_elements=key,
                detectable_note=row["detectable_note"].strip(),
                associated_elements=assoc,
                first_available_year=_int(
                    row["first_available_year"], row_no, "first_available_year"
                ),  # type: ignore[arg-type]
                since_antiquity=antiq == "true",
                last_common_year=_int(row["last_common_year"], row_no, "last_common_year", True),
                date_basis=row["date_basis"].strip(),
                source=row["source"].strip(),
                source_note=row["source_note"].strip(),
            )
        )
    return out


@dataclass(frozen=True)
class MaterialsReport:
    """Candidate materials for a set of detected elements.

    Attributes
    ----------
    present_elements : tuple of str
        Elements taken as present.
    claimed_year : int or None
        Claimed date of the object.
    candidates : tuple of dict
        Ranked candidates (material fields plus what was found for each).
    anachronisms : tuple of str
        One sentence per flagged candidate.
    unexplained_elements : tuple of str
        Present elements that no candidate accounts for.
    cautions : tuple of str
        Always :data:`MATERIALS_CAUTIONS`.
    table : dict
        Which table was used (name, SHA-256).
    """

    present_elements: tuple[str, ...]
    claimed_year: int | None
    candidates: tuple[dict[str, Any], ...]
    anachronisms: tuple[str, ...]
    unexplained_elements: tuple[str, ...]
    cautions: tuple[str, ...] = MATERIALS_CAUTIONS
    table: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly dictionary."""
        return jsonable(
            {
                "kind": "candidate materials",
                "present_elements": list(self.present_elements),
                "claimed_year": self.claimed_year,
                "candidates": list(self.candidates),
                "anachronisms": list(self.anachronisms),
                "unexplained_elements": list(self.unexplained_elements),
                "cautions": list(self.cautions),
                "table": self.table,
            }
        )

    def to_json(self) -> str:
        """Deterministic JSON text."""
        return canonical_json(self.to_dict())

    def to_text(self) -> str:
        """Plain-text summary."""
        lines = [f"Elements present: {', '.join(self.present_elements) or 'none'}"]
        if self.claimed_year is not None:
            lines.append(f"Claimed date: {self.claimed_year}")
        if not self.candidates:
            lines.append("No material in the table has all its key elements present.")
        for c in self.candidates:
            flag = "  [ANACHRONISM?]" if c["anachronism"] else ""
            extra = (
                f"; not detected (often invisible): {', '.join(c['key_elements_not_detected'])}"
                if c["key_elements_not_detected"]
                else ""
            )
            lines.append(
                f"  {c['rank']:>2}. {c['name']} ({c['formula']}): "
                f"key {', '.join(c['key_elements'])}"
                f"{extra}; first available {c['first_available_text']}{flag}"
            )
        for a in self.anachronisms:
            lines.append(f"Anachronism flag: {a}")
        if self.unexplained_elements:
            lines.append(f"Not explained by any candidate: {', '.join(self.unexplained_elements)}")
        lines.extend(f"Caution: {c}" for c in self.cautions)
        return "\n".join(lines) + "\n"


def candidate_materials(
    elements: Mapping[str, Any] | Iterable[str],
    claimed_year: int | None = None,
    *,
    materials: list[Material] | None = None,
    optional_elements: Iterable[str] = OPTIONAL_ELEMENTS,
) -> MaterialsReport:
    """Materials consistent with the detected elements, with anachronism flags.

    Parameters
    ----------
    elements : engine result mapping or iterable of str
        Detected elements: the identification engine's JSON (verdict level ≥ 2
        counts as present) or a set of symbols.
    claimed_year : int, optional
        Claimed date of the object (negative for BC).
    materials : list of Material, optional
        The table (default: the shipped, hash-checked table).
    optional_elements : iterable of str
        Key elements whose absence does not exclude a material.

    Returns
    -------
    MaterialsReport
        Ranked candidates, anachronism flags and cautions.
    """
    present = present_elements(elements, "elements")
    if claimed_year is not None and not isinstance(claimed_year, int):
        raise InputError(f"claimed year {claimed_year!r} is not an integer", "give e.g. 1850")
    table_info: dict[str, Any] = {}
    if materials is None:
        path = materials_dir() / "pigments.csv"
        materials = load_materials(path)
        table_info = {"name": path.name, "sha256": sha256_hex(path.read_bytes())}
    optional = {element_symbol(e) for e in optional_elements}

    scored: list[tuple[int, int, str, dict[str, Any]]] = []
    for m in materials:
        required = [e for e in m.key_elements if e not in optional]
        found = [e for e in m.key_elements if e in present]
        if not found or any(e not in present for e in required):
            continue
        not_detected = [e for e in m.key_elements if e not in present]
        assoc = [e for e in m.associated_elements if e in present]
        anachronism = claimed_year is not None and m.first_available_year > claimed_year
        entry = m.to_dict()
        entry.update(
            {
                "key_elements_present": found,
                "key_elements_not_detected": not_detected,
                "associated_elements_present": assoc,
                "first_available_text": m.first_available_text,
                "anachronism": anachronism,
                "late_use": claimed_year is not None
                and m.last_common_year is not None
                and claimed_year > m.last_common_year,
            }
        )
        scored.append((len(found), len(assoc), m.name, entry))
    scored.sort(key=lambda t: (-t[0], -t[1], t[2].casefold()))
    candidates = []
    anachronisms = []
    explained: set[str] = set()
    for rank, (_, _, _, entry) in enumerate(scored, start=1):
        entry["rank"] = rank
        candidates.append(entry)
        explained.update(entry["key_elements"], entry["associated_elements"])
        if entry["anachronism"]:
            anachronisms.append(
                f"{entry['name']} (first available {entry['first_available_text']}; "
                f"{entry['date_basis']}) on a work claimed to date from {claimed_year}: "
                "anachronism if the identification is confirmed"
            )
    return MaterialsReport(
        present_elements=tuple(sorted(present)),
        claimed_year=claimed_year,
        candidates=tuple(candidates),
        anachronisms=tuple(anachronisms),
        unexplained_elements=tuple(sorted(present - explained)),
        table=table_info,
    )
