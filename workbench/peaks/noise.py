"""Robust noise estimate from first differences.

For white noise of standard deviation σ the first differences have standard
deviation σ√2, and the median absolute deviation (MAD) of a normal sample
times 1.4826 estimates its standard deviation (Rousseeuw & Croux 1993). So
σ ≈ 1.4826 · MAD(Δy) / √2. Differencing removes a smooth baseline, and the
median ignores the few differences that fall on lines.

The medians are taken by :func:`median_overwrite`, which selects in place
(``ndarray.partition``) in an array the caller no longer needs: the same
value as :func:`numpy.median`, without its copy of a million values and its
extra selection of the maximum (NaN check), which the caller does once.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["MAD_TO_SIGMA", "median_overwrite", "noise_sigma"]

#: 1/Φ⁻¹(3/4): MAD → σ for normally distributed data.
MAD_TO_SIGMA: float = 1.4826


def median_overwrite(a: np.ndarray) -> float:
    """Median of a float array whose order may be destroyed: equal to ``np.median(a)``.

    Parameters
    ----------
    a : numpy.ndarray
        One-dimensional, non-empty, without NaN (the caller checks); it is
        reordered in place.

    Returns
    -------
    float
        The middle value, or for an even count the mean of the two middle
        values computed as numpy.median does, (a + b) / 2.
    """
    n = a.size
    k = n // 2
    if n % 2:
        a.partition(k)
        return float(a[k])
    a.partition((k - 1, k))
    return float((a[k - 1] + a[k]) / 2.0)


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
    if np.isnan(d).any():
        return float("nan")  # what np.median gives; the callers refuse NaN earlier
    # d is ours: select in it, then overwrite it with |d − median| (no copies).
    centre = median_overwrite(d)
    np.subtract(d, centre, out=d)
    np.abs(d, out=d)
    mad = median_overwrite(d)
    sigma = MAD_TO_SIGMA * mad / np.sqrt(2.0)
    if sigma == 0.0:
        # Rare (quantised data); d was reordered and overwritten, so difference again.
        sigma = float(np.std(np.diff(arr))) / np.sqrt(2.0)
    return float(sigma)
