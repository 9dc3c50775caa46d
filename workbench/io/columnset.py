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

__all__ = ["Columns"]


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
