"""Lab line sets: a laboratory's own measured lines, imported from CSV.

The CSV format is described in ``reference_sets/LAB_SETS.md``. Every row is
checked and *all* problems are reported at once
(:class:`~workbench.errors.LabSetValidationError`, each problem naming its
line number and column); nothing is imported or written when any row is bad.
Saved lab sets live in a directory of their own: one Parquet table per set,
the original CSV kept byte-for-byte beside it, and ``lab_manifest.json`` with
the SHA-256 of both.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import os
import re
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import polars as pl

from workbench.errors import LabSetValidationError, ManifestError, ValueRangeError
from workbench.physics.airvac import MAX_NM, MIN_AIR_NM, air_to_vacuum_nm, vacuum_to_air_nm
from workbench.physics.units import HC_EV_NM
from workbench.refdata.columns import conform
from workbench.refdata.elements import SYMBOLS, is_element_symbol
from workbench.refdata.loader import LAB_MANIFEST_NAME, ReferenceSet

__all__ = ["LAB_COLUMNS", "import_lab_set", "save_lab_set"]

#: Columns a lab CSV may have (``element``, ``ion`` and one position column are required).
LAB_COLUMNS: tuple[str, ...] = (
    "element",
    "ion",
    "wavelength_nm",
    "medium",
    "energy_eV",
    "rel_intensity",
    "A_ki_per_s",
    "E_upper_eV",
    "g_upper",
    "notes",
    "measured_by",
    "instrument",
)
_ID_RE = re.compile(r"^[a-z0-9][a-z0-9_\-]{0,63}$")
_MEDIUM_RE = re.compile(r"^\s*#\s*medium\s*[:=]\s*(\S+)\s*$", re.IGNORECASE)


def _number(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _parse(data: bytes, name: str) -> tuple[list[dict[str, Any]], str]:
    problems: list[str] = []
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise LabSetValidationError(
            [f"the file is not UTF-8 text (byte {exc.start}); save it as UTF-8 CSV"], name
        ) from None
    lines = text.splitlines()
    header_medium: str | None = None
    first = 0
    while first < len(lines) and (
        not lines[first].strip() or lines[first].lstrip().startswith("#")
    ):
        m = _MEDIUM_RE.match(lines[first])
        if m:
            header_medium = m.group(1).lower()
        first += 1
    if first >= len(lines):
        raise LabSetValidationError(["the file has no header row and no lines"], name)
    reader = csv.reader(io.StringIO("\n".join(lines[first:])))
    header = [h.strip() for h in next(reader)]
    unknown = [h for h in header if h not in LAB_COLUMNS]
    if unknown:
        problems.append(
            f"line {first + 1}: unknown column(s) {', '.join(map(repr, unknown))}; "
            f"allowed: {', '.join(LAB_COLUMNS)}"
        )
    for need in ("element", "ion"):
        if need not in header:
            problems.append(f"line {first + 1}: required column {need!r} is missing")
    has_wl, has_en = "wavelength_nm" in header, "energy_eV" in header
    if has_wl == has_en:
        problems.append(
            f"line {first + 1}: give exactly one position column, 'wavelength_nm' or 'energy_eV'"
        )
    if has_wl and "medium" not in header and header_medium is None:
        problems.append(
            f"line {first + 1}: wavelengths need their medium: add a 'medium' column "
            "(air/vacuum) or a '# medium: air' line above the header"
        )
    if header_medium is not None and header_medium not in ("air", "vacuum"):
        problems.append(f"medium header {header_medium!r} is not 'air' or 'vacuum'")
    if problems:
        raise LabSetValidationError(problems, name)
    axis = "wavelength" if has_wl else "energy"
    rows: list[dict[str, Any]] = []
    seen: dict[tuple[str, int, float], int] = {}
    for offset, raw in enumerate(reader):
        lineno = first + 2 + offset
        if not any(c.strip() for c in raw):
            continue
        if len(raw) != len(header):
            problems.append(f"line {lineno}: {len(raw)} fields, the header has {len(header)}")
            continue
        rec = {h: v.strip() for h, v in zip(header, raw, strict=True)}
        row: dict[str, Any] = {"_line": lineno}
        el = rec["element"]
        if not is_element_symbol(el):
            fixed = el[:1].upper() + el[1:].lower()
            hint = f" (did you mean {fixed!r}?)" if is_element_symbol(fixed) else ""
            problems.append(
                f"line {lineno}, column 'element': {el!r} is not an element symbol{hint}"
            )
        row["element"] = el
        ion_text = rec["ion"]
        ion = _number(ion_text)
        if ion is None or not math.isfinite(ion) or ion != int(ion) or ion < 1:
            problems.append(
                f"line {lineno}, column 'ion': {ion_text!r} is not a stage >= 1 "
                "(1 = neutral, 2 = singly ionised)"
            )
            ion = None
        elif is_element_symbol(el) and ion > SYMBOLS.index(el) + 1:
            problems.append(f"line {lineno}, column 'ion': {el} has no stage {int(ion)}")
            ion = None
        row["ion"] = int(ion) if ion is not None else None
        pos_col = "wavelength_nm" if axis == "wavelength" else "energy_eV"
        pos = _number(rec[pos_col])
        if pos is None or not math.isfinite(pos) or pos <= 0:
            problems.append(
                f"line {lineno}, column {pos_col!r}: {rec[pos_col]!r} is not a positive number"
            )
            pos = None
        row[pos_col] = pos
        if axis == "wavelength":
            medium = (rec.get("medium") or header_medium or "").lower()
            if medium not in ("air", "vacuum"):
                problems.append(
                    f"line {lineno}, column 'medium': {rec.get('medium', '')!r} "
                    "must be 'air' or 'vacuum'"
                )
            elif pos is not None and pos > MAX_NM:
                problems.append(
                    f"line {lineno}, column 'wavelength_nm': {pos} nm is above "
                    f"{MAX_NM:g} nm, outside the air-vacuum conversion range"
                )
            elif medium == "air" and pos is not None and pos < MIN_AIR_NM:
                problems.append(
                    f"line {lineno}, column 'medium': {pos} nm is below 200 nm, "
                    "where wavelengths are quoted in vacuum; set medium to vacuum"
                )
            row["medium"] = medium
        for col, lo, strict in (
            ("rel_intensity", 0.0, False),
            ("A_ki_per_s", 0.0, True),
            ("E_upper_eV", 0.0, False),
            ("g_upper", 0.0, True),
        ):
            text_v = rec.get(col, "")
            if not text_v:
                row[col] = None
                continue
            v = _number(text_v)
            if v is None or not math.isfinite(v) or v < lo or (strict and v == lo):
                sign = "positive" if strict else "non-negative"
                problems.append(f"line {lineno}, column {col!r}: {text_v!r} is not a {sign} number")
                v = None
            row[col] = v
        for col in ("notes", "measured_by", "instrument"):
            row[col] = rec.get(col) or None
        if row["ion"] is not None and pos is not None:
            vac = pos
            if axis == "wavelength" and row.get("medium") == "air" and MIN_AIR_NM <= pos <= MAX_NM:
                vac = float(air_to_vacuum_nm(pos))
            key = (el, row["ion"], round(vac, 4) if axis == "wavelength" else round(pos, 3))
            if key in seen:
                problems.append(
                    f"line {lineno}: duplicate of line {seen[key]} (same element, ion and position)"
                )
            else:
                seen[key] = lineno
        rows.append(row)
    if not rows and not problems:
        problems.append("the file has a header but no line rows")
    if problems:
        raise LabSetValidationError(problems, name)
    return rows, axis


def _table(rows: list[dict[str, Any]], axis: str, set_id: str) -> pl.DataFrame:
    if axis == "wavelength":
        lam = np.array([r["wavelength_nm"] for r in rows], dtype=np.float64)
        air_mask = np.array([r["medium"] == "air" for r in rows])
        vac = lam.copy()
        if air_mask.any():
            vac[air_mask] = air_to_vacuum_nm(lam[air_mask])
        air = np.full_like(vac, np.nan)
        ok = vac >= 200.0
        air[ok] = vacuum_to_air_nm(vac[ok])
        energy = HC_EV_NM / vac
    else:
        energy = np.array([r["energy_eV"] for r in rows], dtype=np.float64)
        vac = HC_EV_NM / energy
        air = np.full_like(vac, np.nan)
    notes = []
    for r in rows:
        bits = [r["notes"]] if r["notes"] else []
        if r["measured_by"]:
            bits.append(f"measured by {r['measured_by']}")
        if r["instrument"]:
            bits.append(f"instrument {r['instrument']}")
        notes.append("; ".join(bits) or None)
    df = pl.DataFrame(
        {
            "element": [r["element"] for r in rows],
            "ion": pl.Series([r["ion"] for r in rows], dtype=pl.Int32),
            "wavelength_air_nm": pl.Series(air).fill_nan(None),
            "wavelength_vac_nm": vac,
            "energy_eV": energy,
            "A_ki_per_s": pl.Series([r["A_ki_per_s"] for r in rows], dtype=pl.Float64),
            "A_ki_origin": ["lab" if r["A_ki_per_s"] is not None else None for r in rows],
            "E_upper_eV": pl.Series([r["E_upper_eV"] for r in rows], dtype=pl.Float64),
            "g_upper": pl.Series([r["g_upper"] for r in rows], dtype=pl.Float64),
            "rel_intensity": pl.Series([r["rel_intensity"] for r in rows], dtype=pl.Float64),
            "source_id": [set_id] * len(rows),
            "n_sources": pl.Series([1] * len(rows), dtype=pl.Int32),
            "notes": pl.Series(notes, dtype=pl.String),
        }
    )
    sort_col = "wavelength_vac_nm" if axis == "wavelength" else "energy_eV"
    df = df.sort([sort_col, "element", "ion"])
    pos = (
        df["wavelength_air_nm"].fill_null(df["wavelength_vac_nm"])
        if axis == "wavelength"
        else df["energy_eV"]
    )
    ids, seen = [], {}
    for e, i, p in zip(df["element"], df["ion"], pos, strict=True):
        base = f"{set_id}:{e}:{i}:{p:.5f}"
        seen[base] = seen.get(base, 0) + 1
        ids.append(base if seen[base] == 1 else f"{base}-{seen[base]}")
    return conform(df.with_columns(pl.Series("line_id", ids)))


def _parquet_bytes(df: pl.DataFrame) -> bytes:
    buf = io.BytesIO()
    df.write_parquet(buf, compression="zstd", compression_level=9, statistics=False)
    return buf.getvalue()


def import_lab_set(
    source: str | os.PathLike[str] | bytes,
    set_id: str,
    title: str,
    version: str = "1",
    source_name: str | None = None,
    measured_by: str | None = None,
) -> ReferenceSet:
    """Validate a lab CSV and turn it into a reference set (nothing is written).

    Parameters
    ----------
    source : path or bytes
        The CSV file, or its bytes.
    set_id : str
        Id of the new set (lower-case letters, digits, ``_`` and ``-``); it
        prefixes every ``line_id``.
    title : str
        Human-readable title.
    version : str
        Version label of the set.
    source_name : str, optional
        File name to record when ``source`` is bytes.
    measured_by : str, optional
        Who measured the lines (recorded in the entry).

    Returns
    -------
    ReferenceSet
        The set, with ``entry`` holding the original CSV's name, SHA-256 and bytes.

    Raises
    ------
    LabSetValidationError
        With every problem found, each naming its line number and column.
    """
    if isinstance(source, bytes):
        data, name = source, source_name or "<bytes>"
    else:
        path = Path(source)
        try:
            data = path.read_bytes()
        except OSError as exc:
            raise LabSetValidationError(
                [f"cannot read the file ({exc.strerror})"], str(path)
            ) from None
        name = source_name or path.name
    if not _ID_RE.match(set_id):
        raise ValueRangeError(
            f"lab set id {set_id!r} is not allowed",
            "use 1-64 lower-case letters, digits, '_' or '-', starting with a letter or digit",
        )
    if not title.strip():
        raise ValueRangeError("the lab set needs a title", "give --title")
    rows, axis = _parse(data, name)
    table = _table(rows, axis, set_id)
    payload = _parquet_bytes(table)
    entry: dict[str, Any] = {
        "id": set_id,
        "title": title,
        "version": version,
        "domain": "optical" if axis == "wavelength" else "xray",
        "kind": "lab",
        "axis": axis,
        "unit": "nm" if axis == "wavelength" else "eV",
        "medium": "air+vacuum" if axis == "wavelength" else None,
        "file": f"{set_id}.parquet",
        "sha256": hashlib.sha256(payload).hexdigest(),
        "format": "parquet",
        "row_count": table.height,
        "elements": sorted(set(table["element"].to_list()), key=SYMBOLS.index),
        "stages": sorted(set(table["ion"].to_list())),
        "original_csv": {
            "name": name,
            "file": f"{set_id}.csv",
            "sha256": hashlib.sha256(data).hexdigest(),
            "size_bytes": len(data),
        },
        "measured_by": measured_by,
        "_csv_bytes": data,
        "_parquet_bytes": payload,
    }
    return ReferenceSet(
        id=set_id,
        version=version,
        title=title,
        domain=entry["domain"],
        axis=axis,
        medium=entry["medium"],
        sha256=entry["sha256"],
        table=table,
        entry=entry,
        data_version="lab",
    )


def _write_atomic(path: Path, data: bytes) -> str:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
    os.chmod(tmp, 0o644)
    return tmp


def save_lab_set(refset: ReferenceSet, directory: str | os.PathLike[str]) -> Path:
    """Write a lab set into a lab directory (Parquet + original CSV + lab_manifest.json).

    All files are written to temporaries first; the manifest is replaced last,
    so an interrupted save leaves the previous manifest valid.

    Parameters
    ----------
    refset : ReferenceSet
        A set returned by :func:`import_lab_set`.
    directory : path
        The lab directory (created if needed).

    Returns
    -------
    pathlib.Path
        Path of the lab manifest.
    """
    entry = refset.entry
    if "_csv_bytes" not in entry:
        raise ValueRangeError(
            f"set {refset.id!r} is not a freshly imported lab set",
            "import the CSV with import_lab_set first",
        )
    lab_dir = Path(directory)
    lab_dir.mkdir(parents=True, exist_ok=True)
    manifest_path = lab_dir / LAB_MANIFEST_NAME
    manifest: dict[str, Any] = {"data_version": "lab", "sets": []}
    if manifest_path.exists():
        try:
            manifest = json.loads(manifest_path.read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise ManifestError(
                f"{manifest_path} cannot be read ({exc})",
                "restore it from a backup before saving more lab sets",
            ) from None
    public = {k: v for k, v in entry.items() if not k.startswith("_")}
    manifest["sets"] = [e for e in manifest.get("sets", []) if e.get("id") != refset.id]
    manifest["sets"].append(public)
    manifest["sets"].sort(key=lambda e: e["id"])
    text = json.dumps(manifest, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    temps = [
        (_write_atomic(lab_dir / public["file"], entry["_parquet_bytes"]), public["file"]),
        (
            _write_atomic(lab_dir / public["original_csv"]["file"], entry["_csv_bytes"]),
            public["original_csv"]["file"],
        ),
    ]
    man_tmp = _write_atomic(manifest_path, text.encode("utf-8"))
    for tmp, final in temps:
        os.replace(tmp, lab_dir / final)
    os.replace(man_tmp, manifest_path)
    return manifest_path
