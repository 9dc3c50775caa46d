"""Wavelength-scale check: a global shift and linear stretch from unambiguous matches.

Pairs are taken from species called at least "probable", using only their
unique (unshared) strong lines, one pair per observed peak. The model is::

    observed − reference = shift + stretch · (reference − centre)

fitted robustly (Theil–Sen slope: the median of pairwise slopes, with Sen's
(1968) distribution-free 95 % interval; intercept as the median residual), so
a few wrong pairs do not move it. The
shift's uncertainty is 1.4826·MAD/√n of the residuals (normal-consistent).
The engine reports the estimate; it applies it only when asked.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["ScaleCheck", "estimate_scale", "theil_sen"]


def theil_sen(x: np.ndarray, y: np.ndarray) -> tuple[float, float, float]:
    """Theil–Sen slope of y on x with its 95 % interval (Sen 1968).

    Parameters
    ----------
    x, y : numpy.ndarray
        Data; at least two distinct x values.

    Returns
    -------
    (slope, low, high) : tuple of float
    """
    i, j = np.triu_indices(x.size, k=1)
    dx = x[j] - x[i]
    keep = dx != 0
    slopes = np.sort((y[j] - y[i])[keep] / dx[keep])
    n_s = slopes.size
    n = x.size
    # Normal approximation to Kendall's statistic (no tie correction), z_0.975.
    c = 1.959963984540054 * np.sqrt(n * (n - 1) * (2 * n + 5) / 18.0)
    lo = int(np.clip(np.round((n_s - c) / 2.0) - 1, 0, n_s - 1))
    hi = int(np.clip(np.round((n_s + c) / 2.0), 0, n_s - 1))
    return float(np.median(slopes)), float(slopes[lo]), float(slopes[hi])


@dataclass(frozen=True)
class ScaleCheck:
    """Estimated wavelength/energy-scale error.

    Attributes
    ----------
    n_pairs : int
        Pairs used.
    shift : float or None
        Observed minus reference at ``centre`` (axis unit).
    shift_uncertainty : float or None
        Standard uncertainty of ``shift``.
    stretch : float or None
        Slope of (observed − reference) against reference (dimensionless).
    stretch_interval : tuple of float or None
        95 % interval of the slope (Theil–Sen).
    centre : float or None
        Reference position about which the stretch is taken.
    applied : bool
        Whether observed positions were corrected before the final match.
    message : str
        Plain-language summary.
    """

    n_pairs: int
    shift: float | None
    shift_uncertainty: float | None
    stretch: float | None
    stretch_interval: tuple[float, float] | None
    centre: float | None
    applied: bool
    message: str

    def correct(self, positions: np.ndarray) -> np.ndarray:
        """Return positions with the estimated error removed."""
        if self.shift is None:
            return positions
        stretch = self.stretch or 0.0
        return positions - (self.shift + stretch * (positions - (self.centre or 0.0)))

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form."""
        return {
            "n_pairs": self.n_pairs,
            "shift": self.shift,
            "shift_uncertainty": self.shift_uncertainty,
            "stretch": self.stretch,
            "stretch_interval": list(self.stretch_interval) if self.stretch_interval else None,
            "centre": self.centre,
            "applied": self.applied,
            "message": self.message,
        }


def estimate_scale(
    observed: np.ndarray, reference: np.ndarray, unit: str, applied: bool = False
) -> ScaleCheck:
    """Estimate shift and stretch from matched (observed, reference) positions.

    Parameters
    ----------
    observed, reference : numpy.ndarray
        Matched positions (same unit), one pair per observed peak.
    unit : str
        Axis unit for the message ("nm" or "eV").
    applied : bool
        Recorded in the result (the caller decides whether to correct).

    Returns
    -------
    ScaleCheck
    """
    obs = np.asarray(observed, dtype=np.float64)
    ref = np.asarray(reference, dtype=np.float64)
    n = int(obs.size)
    if n < 3:
        return ScaleCheck(
            n,
            None,
            None,
            None,
            None,
            None,
            applied,
            f"scale not checked: {n} unambiguous strong match(es), 3 needed",
        )
    d = obs - ref
    centre = float(np.median(ref))
    if n >= 5 and np.ptp(ref) > 0:
        slope, lo, hi = theil_sen(ref, d)
        interval: tuple[float, float] | None = (float(lo), float(hi))
    else:
        slope, interval = 0.0, None
    resid = d - slope * (ref - centre)
    shift = float(np.median(resid))
    mad = float(np.median(np.abs(resid - shift)))
    unc = 1.4826 * mad / np.sqrt(n) if mad > 0 else float(np.std(resid, ddof=1) / np.sqrt(n))
    msg = (
        f"scale check from {n} unambiguous strong lines: shift {shift:+.4g} ± {unc:.2g} {unit}"
        f", stretch {slope:+.3g}"
    )
    return ScaleCheck(n, shift, unc, float(slope), interval, centre, applied, msg)
