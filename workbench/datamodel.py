"""Shared data types passed between readers, peak finding and matching.

Positions are always held in a canonical unit: nanometres for a wavelength
axis (``wavelength_nm``) and electronvolts for an energy axis (``energy_eV``).
A wavelength axis always states its medium (``"air"`` or ``"vacuum"``); an
energy axis has none.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import polars as pl

from workbench.errors import ValueRangeError

__all__ = [
    "AXIS_COLUMN",
    "FWHM_COLUMN",
    "Axis",
    "InputSource",
    "Medium",
    "PeakList",
    "Spectrum",
]

Axis = Literal["wavelength", "energy"]
Medium = Literal["air", "vacuum"]

#: Name of the position column of a peak table, by axis.
AXIS_COLUMN: dict[str, str] = {"wavelength": "wavelength_nm", "energy": "energy_eV"}
#: Name of the width column of a peak table, by axis.
FWHM_COLUMN: dict[str, str] = {"wavelength": "fwhm_nm", "energy": "fwhm_eV"}


@dataclass(frozen=True)
class InputSource:
    """Where an input came from, so that every result can be traced to its bytes.

    Attributes
    ----------
    name : str
        File name as given by the user (no directories), or ``"<pasted>"``.
    sha256 : str
        Hex SHA-256 of the original bytes, exactly as received.
    size_bytes : int
        Length of the original bytes.
    kind : {"peak_list", "spectrum"}
        What the file holds.
    format : str
        Detected format: ``"delimited"``, ``"jcamp-dx"``, ``"parquet"``, ``"fits"``,
        ``"json"``, ``"emsa-mas"``.
    notes : tuple of str
        What the reader decided (column mapping, unit, block chosen, ...).
    """

    name: str
    sha256: str
    size_bytes: int
    kind: Literal["peak_list", "spectrum"]
    format: str
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        """Return a JSON-friendly dictionary."""
        return {
            "name": self.name,
            "sha256": self.sha256,
            "size_bytes": self.size_bytes,
            "kind": self.kind,
            "format": self.format,
            "notes": list(self.notes),
        }


def _check_axis(axis: str, medium: str | None) -> None:
    if axis not in AXIS_COLUMN:
        raise ValueRangeError(f"unknown axis {axis!r}", "use 'wavelength' or 'energy'")
    if axis == "wavelength" and medium not in ("air", "vacuum"):
        raise ValueRangeError(
            f"a wavelength axis needs its medium, got {medium!r}",
            "state the medium as 'air' or 'vacuum' (--medium)",
        )
    if axis == "energy" and medium is not None:
        raise ValueRangeError("an energy axis has no medium", "pass medium=None for energies")


@dataclass(frozen=True)
class Spectrum:
    """A sampled spectrum on a strictly increasing axis.

    Attributes
    ----------
    x : numpy.ndarray
        Positions in nm (wavelength axis) or eV (energy axis), strictly increasing.
    y : numpy.ndarray
        Signal at each position (counts, intensity or absorbance; may be negative).
    axis : {"wavelength", "energy"}
        Kind of axis.
    medium : {"air", "vacuum"} or None
        Medium of the wavelengths; ``None`` for an energy axis.
    source : InputSource or None
        Provenance of the data; ``None`` for synthesised spectra.
    y_label : str
        What the y values are (for display).
    """

    x: np.ndarray
    y: np.ndarray
    axis: Axis
    medium: Medium | None
    source: InputSource | None = None
    y_label: str = "intensity"

    def __post_init__(self) -> None:
        _check_axis(self.axis, self.medium)
        if self.x.shape != self.y.shape or self.x.ndim != 1:
            raise ValueRangeError(
                f"x and y differ in shape ({self.x.shape} vs {self.y.shape})",
                "give one y value per x value",
            )

    @property
    def unit(self) -> str:
        """Canonical unit of ``x`` (``"nm"`` or ``"eV"``)."""
        return "nm" if self.axis == "wavelength" else "eV"


@dataclass(frozen=True)
class PeakList:
    """Observed lines: one row per peak, positions in the canonical unit.

    The table has the position column (``wavelength_nm`` or ``energy_eV``) and
    ``intensity`` (float, may be null); optionally ``fwhm_nm``/``fwhm_eV``,
    ``area``, ``snr``, ``saturated`` and ``split_top`` (bool). Rows are sorted by position.

    Attributes
    ----------
    table : polars.DataFrame
        The peak table.
    axis : {"wavelength", "energy"}
        Kind of axis.
    medium : {"air", "vacuum"} or None
        Medium of the wavelengths; ``None`` for an energy axis.
    source : InputSource or None
        Provenance; ``None`` for synthesised lists.
    mode : {"emission", "absorption"}
        Whether peaks are emission lines or absorption dips.
    """

    table: pl.DataFrame
    axis: Axis
    medium: Medium | None
    source: InputSource | None = None
    mode: Literal["emission", "absorption"] = "emission"
    extra: dict[str, object] = field(default_factory=dict)

    def __post_init__(self) -> None:
        _check_axis(self.axis, self.medium)
        if self.position_column not in self.table.columns:
            raise ValueRangeError(
                f"peak table has no {self.position_column!r} column",
                "build the table with the canonical position column",
            )

    @property
    def position_column(self) -> str:
        """Name of the position column."""
        return AXIS_COLUMN[self.axis]

    @property
    def positions(self) -> np.ndarray:
        """Peak positions as a float64 array in the canonical unit."""
        return self.table[self.position_column].to_numpy().astype(np.float64)

    @property
    def intensities(self) -> np.ndarray:
        """Peak intensities as float64 (NaN where unknown)."""
        if "intensity" not in self.table.columns:
            return np.full(self.table.height, np.nan)
        return self.table["intensity"].cast(pl.Float64).fill_null(np.nan).to_numpy()
