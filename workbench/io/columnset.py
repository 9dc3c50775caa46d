"""Columns of any tabular input: the one shape every table reader hands on.

Delimited text, Parquet and FITS tables and images all become
:class:`Columns`: numeric columns fetched on demand by index, each with row
labels for messages, so that the column mapping, unit, medium and value
checks are written once (:mod:`workbench.io.spectra`,
:mod:`workbench.io.peaklists`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from workbench.errors import ValueRangeError

__all__ = ["Columns", "array_columns"]


@dataclass
class Columns:
    """Columns of any tabular input, with row labels for messages."""

    name: str
    headers: list[str] | None
    n_rows: int
    get: Callable[[int, str, bool], tuple[np.ndarray, np.ndarray, str | None]]
    row_label: Callable[[int], str]
    comments: list[str] = field(default_factory=list)
    fmt: str = "delimited"
    details: dict[str, object] = field(default_factory=dict)

    @property
    def text_columns(self) -> tuple[int, ...]:
        """Columns whose first data cell is text (``Table.text_columns``)."""
        return tuple(self.details.get("text_columns", ()))  # type: ignore[arg-type]

    @property
    def label_columns(self) -> tuple[int, ...]:
        """Columns of names (``Table.label_columns``: text in every one of the first rows)."""
        return tuple(self.details.get("label_columns", ()))  # type: ignore[arg-type]


def array_columns(
    name: str,
    headers: list[str] | None,
    values: list[np.ndarray],
    row_label: Callable[[int], str],
    *,
    fmt: str,
    note: str,
    sampled: str | None = None,
) -> Columns:
    """Columns over arrays already parsed (FITS, JSON, EMSA/MAS readers).

    NaN is a missing value: returned, flagged in the mask, where the caller
    allows missing values, else refused naming the row; infinity is always
    refused. ``note`` says what the reader decided (it reaches the input's
    notes); ``sampled`` names why the input is a sampled spectrum whatever its
    shape (a FITS 1-D image, an EMSA/MAS file), for the kind detection.
    """
    n = values[0].size

    def get(index: int, label: str, allow_empty: bool):
        v = values[index]
        missing = np.isnan(v)
        bad = ~np.isfinite(v) & ~(missing if allow_empty else False)
        if bad.any():
            i = int(np.argmax(bad))
            what = "empty (null or NaN)" if np.isnan(v[i]) else f"{v[i]} (not a finite number)"
            raise ValueRangeError(
                f"{name}: {row_label(i)}, {label!r} is {what}",
                "correct the value in the file, or leave the row out",
            )
        return v, missing, None

    return Columns(
        name=name,
        headers=headers,
        n_rows=n,
        get=get,
        row_label=row_label,
        comments=[],
        fmt=fmt,
        details={"note": note, "sampled": sampled, "n_columns": len(values)},
    )
