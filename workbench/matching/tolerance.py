"""Match tolerance: how far an observed line may lie from a reference line.

The tolerance is a *half-window* in the axis unit (nm or eV): a reference
line at ``r`` is a candidate for an observed line at ``x`` when
``|x - r| <= tol(x)``. Three ways to set it:

``fixed``
    one value for every line (``--tolerance-nm`` / ``--tolerance-eV``);
``resolving_power``
    ``tol = k · x / R``: the instrumental FWHM at ``x`` is ``x / R``, and two
    lines closer than that are not resolved, so a window of one FWHM
    (``k = 1``) around the centre is the natural "cannot tell apart" zone;
``fwhm``
    ``tol = k · FWHM_i`` from each peak's measured width (``k = 0.5``:
    a line inside the peak's half-maximum span).

``auto`` (the default)
    ``fwhm`` with k = 0.5 when the peaks carry measured widths (raw spectra
    after peak finding); otherwise R = 5000 on a wavelength axis (a typical
    echelle or 0.5 m spectrograph; common practice, no source) or a fixed
    50 eV on an energy axis (half the ~150 eV FWHM of a silicon-drift
    detector at Mn Kα; common practice, no source). The engine records
    which rule it used.

A floor (``min_value``) keeps the window from collapsing for very narrow or
missing widths; the floor also absorbs residual wavelength-scale error.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from workbench.errors import ValueRangeError

__all__ = ["ToleranceSpec"]


@dataclass(frozen=True)
class ToleranceSpec:
    """How the match window is computed.

    Attributes
    ----------
    kind : {"auto", "fixed", "resolving_power", "fwhm"}
        Rule used (see module docstring).
    value : float
        The fixed half-window (axis unit), the resolving power R, or the
        factor k applied to each peak's FWHM.
    factor : float
        k for ``resolving_power`` (window = k·x/R); ignored otherwise.
    min_value : float
        Floor of the half-window in the axis unit.
    """

    kind: Literal["auto", "fixed", "resolving_power", "fwhm"] = "auto"
    value: float = 0.5
    factor: float = 1.0
    min_value: float = 0.0

    def __post_init__(self) -> None:
        if self.kind not in ("auto", "fixed", "resolving_power", "fwhm"):
            raise ValueRangeError(
                f"unknown tolerance kind {self.kind!r}",
                "use 'auto', 'fixed', 'resolving_power' or 'fwhm'",
            )
        if not np.isfinite(self.value) or self.value <= 0:
            raise ValueRangeError(
                f"tolerance value must be a positive number, got {self.value!r}",
                "give e.g. --tolerance-nm 0.05 or --resolving-power 5000",
            )
        if self.factor <= 0 or self.min_value < 0:
            raise ValueRangeError(
                "tolerance factor must be positive and its floor non-negative",
                "check the tolerance settings",
            )
        if self.kind == "resolving_power" and self.value < 10:
            raise ValueRangeError(
                f"resolving power {self.value:g} is implausibly low",
                "give R = λ/Δλ (typically 500–100000), or use a fixed tolerance",
            )

    def resolve(self, axis: str, fwhm: np.ndarray | None) -> ToleranceSpec:
        """The concrete rule ``auto`` stands for with these data (others: unchanged)."""
        if self.kind != "auto":
            return self
        if fwhm is not None and np.any(np.isfinite(fwhm) & (fwhm > 0)):
            floor = self.min_value
            return ToleranceSpec("fwhm", self.value, min_value=floor)
        if axis == "energy":
            return ToleranceSpec("fixed", 50.0, min_value=self.min_value)
        return ToleranceSpec("resolving_power", 5000.0, min_value=self.min_value)

    def half_window(self, positions: np.ndarray, fwhm: np.ndarray | None = None) -> np.ndarray:
        """Half-window for each observed position.

        Parameters
        ----------
        positions : numpy.ndarray
            Observed positions in the axis unit.
        fwhm : numpy.ndarray, optional
            Measured FWHM per peak (axis unit); required for ``kind="fwhm"``.
            Missing widths (NaN) fall back to the floor, or to 1/2000 of the
            position when no floor is set.

        Returns
        -------
        numpy.ndarray
            Half-window per position, in the axis unit.
        """
        x = np.asarray(positions, dtype=np.float64)
        if self.kind == "auto":
            raise ValueRangeError(
                "an 'auto' tolerance must be resolved against the data first",
                "call ToleranceSpec.resolve(axis, fwhm) before half_window",
            )
        if self.kind == "fixed":
            tol = np.full_like(x, self.value)
        elif self.kind == "resolving_power":
            tol = self.factor * x / self.value
        else:
            if fwhm is None:
                raise ValueRangeError(
                    "tolerance from peak widths was asked for, but the peak list has no FWHM",
                    "use a fixed tolerance or a resolving power instead",
                )
            w = np.asarray(fwhm, dtype=np.float64) * self.value
            fallback = np.full_like(x, self.min_value) if self.min_value > 0 else x / 2000.0
            tol = np.where(np.isfinite(w) & (w > 0), w, fallback)
        return np.maximum(tol, self.min_value)

    def resolving_power_at(self, position: float) -> float:
        """Effective resolving power implied by the window at ``position``."""
        tol = float(self.half_window(np.array([position]))[0]) if self.kind != "fwhm" else np.nan
        return position / tol if tol and np.isfinite(tol) else float("nan")

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form for the result record."""
        return {
            "kind": self.kind,
            "value": self.value,
            "factor": self.factor,
            "min_value": self.min_value,
        }
