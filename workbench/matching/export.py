"""Writing results to files: canonical JSON and flat CSV tables, always atomically."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import polars as pl

from workbench.fileio import write_bytes_atomic

__all__ = ["result_tables", "write_csv_tables"]


def result_tables(report: dict[str, Any]) -> dict[str, pl.DataFrame]:
    """Flat tables of a report: elements, matched_lines, missing_lines, lines, warnings."""
    u = report["input"]["unit"]
    elements = pl.DataFrame(
        [
            {
                k: el[k]
                for k in (
                    "species",
                    "element",
                    "ion",
                    "verdict",
                    "verdict_level",
                    "score",
                    "found_fraction",
                    "n_strong_found",
                    "n_strong_in_range",
                    "n_unique_found",
                )
            }
            | {"n_missing": len(el["missing_lines"])}
            for el in report["elements"]
        ],
        infer_schema_length=None,
    )
    matched = [
        m | {"species": el["species"]} for el in report["elements"] for m in el["matched_lines"]
    ]
    missing = [
        m | {"species": el["species"]} for el in report["elements"] for m in el["missing_lines"]
    ]
    lines = [
        {
            "index": ln["index"],
            f"observed_{u}": ln[f"observed_{u}"],
            "intensity": ln["intensity"],
            "status": ln["status"],
            "assigned_to": ";".join(ln["assigned_to"]),
            "n_candidates": ln["n_candidates"],
        }
        for ln in report["lines"]
    ]
    warnings = [
        {"kind": w["kind"], "elements": ";".join(w.get("elements", [])), "message": w["message"]}
        for w in report["warnings"]
    ]
    return {
        "elements": elements,
        "matched_lines": pl.DataFrame(matched, infer_schema_length=None),
        "missing_lines": pl.DataFrame(missing, infer_schema_length=None),
        "lines": pl.DataFrame(lines, infer_schema_length=None),
        "warnings": pl.DataFrame(warnings, infer_schema_length=None),
    }


def write_csv_tables(report: dict[str, Any], directory: Path) -> list[str]:
    """Write :func:`result_tables` as CSV files into ``directory`` (created if needed)."""
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    names = []
    for name, table in result_tables(report).items():
        target = directory / f"{name}.csv"
        write_bytes_atomic(target, table.write_csv().encode("utf-8"))
        names.append(target.name)
    return names
