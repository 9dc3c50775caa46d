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

__all__ = [
    "MAD_TO_SIGMA",
    "NOISE_BLOCK",
    "QUIET_FACTOR",
    "median_overwrite",
    "noise_sigma",
    "quiet_segment_sigma",
]

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


#: Samples per block of :func:`quiet_segment_sigma` (its MAD's relative
#: standard error is about 1.1/√511 ≈ 5 %; common practice, no source).
NOISE_BLOCK: int = 512
#: A block whose own σ is more than this many times below the whole
#: spectrum's is a quieter segment. Lines inflate a block's first-difference
#: MAD by up to 2.4× over the whole spectrum's in the real lamps of
#: ``tests/data/realspectra`` (measured at stop 33; 1.0–2.4 outside the Th-Ar
#: atlas), so 3 is beyond what ordinary variation gives.
QUIET_FACTOR: float = 3.0


def quiet_segment_sigma(s: np.ndarray, sigma: float) -> np.ndarray | None:
    """Per-sample σ where parts of a spectrum are much quieter than the whole; else None.

    A spectrum stitched from parts recorded or scaled differently (echelle
    orders, detector segments with their own gain, an atlas assembled from
    several exposures) has one noise level per part. The whole spectrum's σ
    (:func:`noise_sigma`) is that of its noisier parts, and in a part 50×
    quieter a threshold of k·σ misses every line weaker than 50·k of its own
    σ: the KPNO Th-Ar atlas (``tests/data/realspectra/pyreduce``) is scaled
    about 100× lower from 620 to 700 nm (median 0.027 against 3–8 elsewhere,
    block σ 0.05 against 2.4), and 256 of the lines its own list identifies
    there were not found (measured at stop 33).

    Blocks of :data:`NOISE_BLOCK` samples whose first-difference σ is more
    than :data:`QUIET_FACTOR` times below ``sigma`` keep their own σ; every
    other sample keeps ``sigma`` (a line-rich block's MAD is raised by its
    lines, not its noise, so no block is made *less* sensitive). The blocks'
    medians are taken by one in-place partition along the block axis (no
    per-block loop).
    The peak finder uses it for its thresholds and the peaks' SNR only: with
    it 279 of the atlas's 386 identified lines in 620–700 nm are found, 139
    without. Two things are deliberately left as they were (stop 33):

    * the detection limit of the matching engine stays the whole spectrum's.
      A part scaled lower is scaled lower in intensity too, which the
      engine's one scale per species and smooth response cannot follow: with
      the part's own limit every species was predicted "surely visible"
      there at its global scale, and missing-line penalties of −15 decades
      turned on the last bit of the positions
      (``tests/realdata/test_last_bit_stability.py``);
    * the baseline keeps the whole spectrum's noise centre, which lies about
      2σ of the noisier parts above a quiet part's own. Centred per part as
      well, 384 of the 386 were found, but those hundreds of weak forest
      lines raised Zr II to "probable" in the atlas degraded to R 2000 over
      380–900 nm (``benchmarks/thar_degraded.py``), where chance hits are
      that dense.

    Parameters
    ----------
    s : numpy.ndarray
        The signal peaks are detected on (baseline removed).
    sigma : float
        The whole spectrum's σ (positive).

    Returns
    -------
    numpy.ndarray or None
        σ per sample, or None when no block is quieter by that factor (or the
        spectrum has fewer than two blocks).
    """
    n = s.size
    nb = n // NOISE_BLOCK
    if nb < 2 or not sigma > 0:
        return None
    d = np.diff(s[: nb * NOISE_BLOCK].reshape(nb, NOISE_BLOCK), axis=1)
    k = (NOISE_BLOCK - 1) // 2  # 511 differences per block: the median is element k
    # Differences of a baseline-free signal centre on zero, so the median of
    # |Δ| is their MAD (to well within the 3× this test asks about); in place,
    # one array of the spectrum's size.
    np.abs(d, out=d)
    d.partition(k, axis=1)
    block = MAD_TO_SIGMA * d[:, k] / np.sqrt(2.0)
    quiet = (block > 0) & (block * QUIET_FACTOR < sigma)
    if not np.any(quiet):
        return None
    per_block = np.where(quiet, block, sigma)
    # The last block also covers the samples left over at the end.
    counts = np.full(nb, NOISE_BLOCK)
    counts[-1] += n - nb * NOISE_BLOCK
    return np.repeat(per_block, counts)
