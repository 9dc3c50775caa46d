"""Many single spectra on one scheduler: the same call as ``workbench match`` per file.

Each file is read and matched by :func:`workbench.matching.analyse_input`
with the options ``workbench match`` would use, on a Dask worker; the
per-file JSON is the engine's canonical record, byte-identical to
``workbench match FILE --json OUT``. One summary table (Parquet and CSV)
lists file, SHA-256, the species by verdict class and the warnings count.
A file that cannot be read is listed with its error; the others go on.
"""

from __future__ import annotations

import glob
import hashlib
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from workbench.errors import InputError
from workbench.maps.cluster import Runner

__all__ = ["SUMMARY_COLUMNS", "BatchOptions", "analyse_file", "expand_paths", "run_batch"]

#: Columns of the summary table, in order.
SUMMARY_COLUMNS = (
    "file",
    "sha256",
    "established",
    "probable",
    "possible",
    "n_warnings",
    "json",
    "error",
)


@dataclass(frozen=True)
class BatchOptions:
    """What ``workbench match`` would be given for each file (same names and defaults)."""

    set_ids: tuple[str, ...] | None = None
    params: Any = None  # MatchParameters
    unit: str | None = None
    medium: str | None = None
    kind: str | None = None
    peak_options: dict[str, Any] | None = None
    lab_dir: Path | None = None
    columns: dict[str, str] | None = None
    block: int | str | None = None
    extra: dict[str, Any] = field(default_factory=dict)


def expand_paths(paths: Sequence[str | Path]) -> list[Path]:
    """Files named directly, in folders (not recursive, hidden files skipped) or by glob.

    Returns the files sorted and without duplicates; InputError when nothing
    matches or a named path does not exist.
    """
    found: dict[str, Path] = {}
    for raw in paths:
        s = str(raw)
        p = Path(s)
        if any(c in s for c in "*?[") and not p.exists():
            hits = [Path(h) for h in sorted(glob.glob(s)) if Path(h).is_file()]
            if not hits:
                raise InputError(f"the pattern {s!r} matches no file", "check the pattern")
        elif p.is_dir():
            hits = sorted(q for q in p.iterdir() if q.is_file() and not q.name.startswith("."))
        elif p.is_file():
            hits = [p]
        else:
            raise InputError(f"{s!r} does not exist", "check the path")
        for h in hits:
            found.setdefault(str(h.resolve()), h)
    if not found:
        raise InputError("no input files", "name files, folders or glob patterns")
    return sorted(found.values(), key=lambda q: str(q))


def analyse_file(path: Path, options: BatchOptions) -> dict[str, Any]:
    """Match one file (runs on a worker); a WorkbenchError becomes the row's ``error``."""
    from workbench.errors import WorkbenchError
    from workbench.matching import analyse_input

    row: dict[str, Any] = {"file": str(path)}
    try:
        data = Path(path).read_bytes()
    except OSError as exc:
        return {**row, "sha256": None, "error": f"cannot read {path} ({exc.strerror})"}
    row["sha256"] = hashlib.sha256(data).hexdigest()
    try:
        outcome = analyse_input(
            path,
            name=Path(path).name,
            set_ids=options.set_ids,
            params=options.params,
            unit=options.unit,
            medium=options.medium,
            kind=options.kind,
            peak_options=options.peak_options,
            lab_dir=options.lab_dir,
            columns=options.columns,
            block=options.block,
        )
    except WorkbenchError as exc:
        return {**row, "error": str(exc)}
    by = outcome.report.get("summary", {}).get("by_verdict", {})
    return {
        **row,
        "json_bytes": outcome.json_bytes,
        "established": "; ".join(by.get("established", [])),
        "probable": "; ".join(by.get("probable", [])),
        "possible": "; ".join(by.get("possible", [])),
        "n_warnings": len(outcome.report.get("warnings") or []),
        "error": None,
    }


def _json_names(files: list[Path]) -> list[str]:
    names = [f"{p.name}.json" for p in files]
    counts: dict[str, int] = {}
    for n in names:
        counts[n] = counts.get(n, 0) + 1
    out = []
    for p, n in zip(files, names, strict=True):
        if counts[n] > 1:  # same file name in two folders: tell them apart by path hash
            tag = hashlib.sha256(str(p.resolve()).encode()).hexdigest()[:8]
            n = f"{p.name}-{tag}.json"
        out.append(n)
    return out


def run_batch(
    paths: Sequence[str | Path],
    runner: Runner,
    out_dir: str | Path,
    options: BatchOptions | None = None,
) -> list[dict[str, Any]]:
    """Match every file on the runner's workers and write the per-file JSON and summary.

    Parameters
    ----------
    paths : sequence of path or glob
        Files, folders or patterns (see :func:`expand_paths`).
    runner : Runner
        An entered runner.
    out_dir : path
        Receives ``<file name>.json`` per file, ``summary.parquet`` and ``summary.csv``.
    options : BatchOptions, optional
        Engine and reading options (``workbench match`` defaults).

    Returns
    -------
    list of dict
        The summary rows (in file order).
    """
    import polars as pl

    from workbench.fileio import write_bytes_atomic

    options = options or BatchOptions()
    files = expand_paths(paths)
    names = _json_names(files)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    rows: list[dict[str, Any]] = [{} for _ in files]

    def keep(i: int, row: dict[str, Any]) -> None:
        data = row.pop("json_bytes", None)
        if data is not None:
            write_bytes_atomic(out / names[i], data)
            row["json"] = names[i]
        rows[i] = row

    runner.map(lambda p: analyse_file(p, options), files, keep, "batch")
    table = pl.DataFrame(
        [{c: r.get(c) for c in SUMMARY_COLUMNS} for r in rows],
        schema={c: (pl.Int64 if c == "n_warnings" else pl.Utf8) for c in SUMMARY_COLUMNS},
        orient="row",
    )
    for name, writer in (
        ("summary.parquet", table.write_parquet),
        ("summary.csv", table.write_csv),
    ):
        tmp = out / f".tmp-{name}"
        writer(tmp)
        os.replace(tmp, out / name)
    return [{c: r.get(c) for c in SUMMARY_COLUMNS} for r in rows]
