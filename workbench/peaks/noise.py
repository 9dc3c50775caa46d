"""Robust noise estimate from first differences.

For white noise of standard deviation σ the first differences have standard
deviation σ√2, and the median absolute deviation (MAD) of a normal sample
times 1.4826 estimates its standard deviation (Rousseeuw & Croux 1993). So
σ ≈ 1.4826 · MAD(Δy) / √2. Differencing removes a smooth baseline, and the
median ignores the few differences that fall on lines.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["MAD_TO_SIGMA", "noise_sigma"]

#: 1/Φ⁻¹(3/4): MAD → σ for normally distributed data.
MAD_TO_SIGMA: float = 1.4826


def noise_sigma(y: ArrayLike) -> float:
    """Robust noise σ of a signal: 1.4826 · MAD(first differences) / √2.

    Parameters
    ----------
    y : array_like
        Signal (at least 3 points).

    Returns
    -------
    float
        Estimated σ; ``0.0`` for a noise-free (or constant) signal. When the
        MAD is zero but the differences are not all zero (quantised data),
        their standard deviation / √2 is used instead.
    """
    arr = np.asarray(y, dtype=np.float64)
    if arr.size < 3:
        return 0.0
    d = np.diff(arr)
    mad = float(np.median(np.abs(d - np.median(d))))
    sigma = MAD_TO_SIGMA * mad / np.sqrt(2.0)
    if sigma == 0.0:
        sigma = float(np.std(d)) / np.sqrt(2.0)
    return float(sigma)
