"""Description of an energy-dispersive XRF instrument: tube, filter, detector, geometry.

The :class:`Instrument` holds what the artefact prediction, the detector
resolution and the forward model need. It is saved with every analysis (in
the result's ``parameters.instrument``) and read from or written to a small
JSON file (``--instrument FILE``)::

    {"anode": "Rh", "tube_kV": 40, "detector": "Si", "fwhm_MnKa_eV": 140,
     "atmosphere": "air", "scatter_angle_deg": 90, ...}

Missing keys take the defaults below, which describe a typical silicon-drift
bench or handheld unit (Rh anode, 40 kV, 8 µm Be detector window, 0.5 mm
thick Si sensor, 140 eV FWHM at Mn Kα, about 1 cm of air; common practice,
no source). Unknown keys are an error, so that a misspelt setting is never
silently ignored.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import asdict, dataclass, fields, replace
from pathlib import Path
from typing import Any

from workbench.errors import FileFormatError, InputError, ValueRangeError

__all__ = [
    "ANODES",
    "DEFAULT_INSTRUMENT",
    "DETECTOR_MATERIALS",
    "Instrument",
    "load_instrument",
    "save_instrument",
]

#: Tube anodes the artefact model knows (element symbols).
ANODES: tuple[str, ...] = ("Rh", "W", "Mo", "Ag", "Cr", "Cu", "Pd", "Au", "Ti", "Fe", "Co")

#: Detector materials: Fano factor F and mean energy per electron-hole pair ε (eV).
#: Si: F ≈ 0.115, ε = 3.66 eV at 77–250 K; Ge: F ≈ 0.11, ε = 2.96 eV;
#: CdTe: F ≈ 0.15, ε = 4.43 eV (handbook values, from memory; Knoll,
#: Radiation Detection and Measurement, ch. 11 and 13).
DETECTOR_MATERIALS: dict[str, dict[str, float]] = {
    "Si": {"fano": 0.115, "pair_energy_eV": 3.66, "density_g_cm3": 2.33},
    "Ge": {"fano": 0.11, "pair_energy_eV": 2.96, "density_g_cm3": 5.323},
    "CdTe": {"fano": 0.15, "pair_energy_eV": 4.43, "density_g_cm3": 5.85},
}

_ATMOSPHERES = ("air", "helium", "vacuum")


@dataclass(frozen=True)
class Instrument:
    """An energy-dispersive XRF instrument.

    Attributes
    ----------
    name : str
        Free text shown with the result.
    anode : str
        Tube anode element (one of :data:`ANODES`).
    tube_kV : float
        Tube voltage; no line whose absorption edge lies above it is excited.
    tube_current_uA : float
        Tube current (scales the forward model only).
    tube_window_Be_um : float
        Beryllium exit window of the tube.
    filter_element : str or None
        Primary-beam filter element (e.g. ``"Al"``, ``"Ti"``), or ``None``.
    filter_thickness_um : float
        Its thickness.
    detector : {"Si", "Ge", "CdTe"}
        Sensor material; fixes the escape energies and the Fano statistics.
    detector_thickness_mm : float
        Sensor thickness (high-energy efficiency).
    detector_window_Be_um : float
        Beryllium entrance window (low-energy efficiency).
    fwhm_MnKa_eV : float
        Measured FWHM at Mn Kα (5898.75 eV); the electronic noise term is
        derived from it (:func:`workbench.xray.detector.noise_fwhm_eV`).
    fano : float or None
        Fano factor; the material's value when ``None``.
    energy_offset_eV, energy_gain : float
        The instrument's energy calibration error, E_true = offset + gain · E_shown
        (0 and 1 for a calibrated instrument).
    live_time_s : float
        Live time of the measurement.
    atmosphere : {"air", "helium", "vacuum"}
        Beam path; air adds Ar K lines and hides light elements.
    air_path_mm : float
        Path in the atmosphere from sample to detector (the tube side is
        taken as equal in the forward model).
    incidence_deg, takeoff_deg : float
        Angles of the primary and fluorescent beams to the sample surface.
    scatter_angle_deg : float or None
        Scatter angle for the Compton shift; 180 − (incidence + takeoff) when ``None``.
    pileup_time_ns : float
        Pulse-pair resolving time of the pulse processor: two photons closer
        than this are summed (typically 0.1–1 µs for a silicon-drift detector
        with a fast channel; common practice, no source).
    """

    name: str = "default silicon-drift unit (assumed)"
    anode: str = "Rh"
    tube_kV: float = 40.0
    tube_current_uA: float = 20.0
    tube_window_Be_um: float = 125.0
    filter_element: str | None = None
    filter_thickness_um: float = 0.0
    detector: str = "Si"
    detector_thickness_mm: float = 0.5
    detector_window_Be_um: float = 8.0
    fwhm_MnKa_eV: float = 140.0
    fano: float | None = None
    energy_offset_eV: float = 0.0
    energy_gain: float = 1.0
    live_time_s: float = 60.0
    atmosphere: str = "air"
    air_path_mm: float = 10.0
    incidence_deg: float = 45.0
    takeoff_deg: float = 45.0
    scatter_angle_deg: float | None = None
    pileup_time_ns: float = 300.0

    def __post_init__(self) -> None:
        if self.anode not in ANODES:
            raise ValueRangeError(
                f"unknown tube anode {self.anode!r}", f"use one of {', '.join(ANODES)}"
            )
        if self.detector not in DETECTOR_MATERIALS:
            raise ValueRangeError(
                f"unknown detector material {self.detector!r}",
                f"use one of {', '.join(DETECTOR_MATERIALS)}",
            )
        if self.atmosphere not in _ATMOSPHERES:
            raise ValueRangeError(
                f"unknown atmosphere {self.atmosphere!r}", "use air, helium or vacuum"
            )
        checks = {
            "tube_kV": (4.0, 160.0),
            "fwhm_MnKa_eV": (100.0, 1000.0),
            "energy_gain": (0.8, 1.2),
            "live_time_s": (1e-3, 1e6),
            "incidence_deg": (1.0, 90.0),
            "takeoff_deg": (1.0, 90.0),
        }
        for key, (lo, hi) in checks.items():
            v = getattr(self, key)
            if not (isinstance(v, int | float) and math.isfinite(v) and lo <= v <= hi):
                raise ValueRangeError(
                    f"instrument setting {key} = {v!r} is outside {lo:g}–{hi:g}",
                    "correct the instrument description",
                )
        for key in (
            "tube_current_uA",
            "tube_window_Be_um",
            "filter_thickness_um",
            "detector_thickness_mm",
            "detector_window_Be_um",
            "air_path_mm",
            "pileup_time_ns",
        ):
            v = getattr(self, key)
            if not (isinstance(v, int | float) and math.isfinite(v) and v >= 0):
                raise ValueRangeError(
                    f"instrument setting {key} = {v!r} must be a non-negative number",
                    "correct the instrument description",
                )
        if self.filter_element is not None and self.filter_thickness_um <= 0:
            raise ValueRangeError(
                f"filter {self.filter_element} has no thickness",
                "give filter_thickness_um, or set filter_element to null",
            )
        if self.fano is not None and not 0.0 < self.fano < 1.0:
            raise ValueRangeError(f"Fano factor {self.fano!r} is outside (0, 1)", "use e.g. 0.115")

    @property
    def fano_factor(self) -> float:
        """Fano factor in use (given, or the detector material's)."""
        return self.fano if self.fano is not None else DETECTOR_MATERIALS[self.detector]["fano"]

    @property
    def pair_energy_eV(self) -> float:
        """Mean energy per electron-hole pair of the detector material."""
        return DETECTOR_MATERIALS[self.detector]["pair_energy_eV"]

    @property
    def scatter_angle_rad(self) -> float:
        """Scatter angle (rad): given, or 180° − (incidence + takeoff)."""
        deg = self.scatter_angle_deg
        if deg is None:
            deg = 180.0 - (self.incidence_deg + self.takeoff_deg)
        return math.radians(deg)

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly form (every field, defaults included)."""
        return asdict(self)

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Instrument:
        """Build from a dictionary; unknown keys are an error, missing keys take defaults."""
        if not isinstance(data, dict):
            raise InputError(
                "the instrument description is not a JSON object",
                'write it as {"anode": "Rh", "tube_kV": 40, ...}',
            )
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(data) - known)
        if unknown:
            raise InputError(
                f"unknown instrument setting(s): {', '.join(unknown)}",
                f"use only: {', '.join(sorted(known))}",
            )
        base = cls(name="instrument description")
        try:
            return replace(base, **data)
        except TypeError as exc:  # a value of the wrong type reaching a comparison
            raise InputError(
                f"an instrument setting has the wrong type ({exc})",
                "give numbers for numeric settings",
            ) from None


#: The documented default (see the module docstring).
DEFAULT_INSTRUMENT = Instrument()


def load_instrument(path: str | os.PathLike[str]) -> Instrument:
    """Read an instrument description from a JSON file.

    Parameters
    ----------
    path : str or path
        JSON file holding one object of :class:`Instrument` settings.

    Returns
    -------
    Instrument
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(f"instrument file {str(p)!r} does not exist", "check the path")
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise FileFormatError(
            f"instrument file {p.name!r} is not valid JSON ({exc})",
            'write one JSON object, e.g. {"anode": "Rh", "tube_kV": 40}',
        ) from None
    if isinstance(data, dict) and "name" not in data:
        data = {**data, "name": p.stem}
    return Instrument.from_dict(data)


def save_instrument(instrument: Instrument, path: str | os.PathLike[str]) -> None:
    """Write an instrument description as JSON (atomically)."""
    from workbench.fileio import write_bytes_atomic

    text = json.dumps(instrument.to_dict(), sort_keys=True, indent=2, ensure_ascii=False)
    write_bytes_atomic(path, (text + "\n").encode("utf-8"))
