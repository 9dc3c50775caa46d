"""The per-chunk fit: counts → family maps, their uncertainty, ROI preview, χ².

:class:`FitModel` holds everything a worker needs (templates, shared channel
weights, the estimator matrix) and :meth:`FitModel.fit_block` turns one chunk
of the cube ``(ry, rx, n_channels)`` into ``(ry, rx, 3·n_families + 1)``:
fitted counts per family, their standard uncertainty, the ROI preview, and
the reduced Pearson χ² of the pixel's fit.

Weights are shared by all pixels (1 / mean counts per channel, floor 1), an
approximation of Poisson weighting that keeps one Gram matrix per chunk so
that the solve is batched (:mod:`workbench.maps.nnls`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.maps.nnls import nnls_batch
from workbench.maps.templates import TemplateSet

__all__ = ["FitModel", "measured_pixels", "poisson_sigma_matrix", "roi_counts"]


def poisson_sigma_matrix(P: np.ndarray, A: np.ndarray) -> np.ndarray:
    """``(P∘P) A``: with it, Var(x) = ((P∘P) A) x for Poisson counts ŷ = A x.

    The same propagation as :func:`workbench.maps.nnls.poisson_sigma`
    (JCGM 100:2008 §5.1), folded through the model so that it costs k² per
    pixel instead of k × n_channels.
    """
    return (P * P) @ A


def roi_counts(Y: np.ndarray, windows: list[tuple[int, int]]) -> np.ndarray:
    """Net counts in each window minus a linear background from equal side windows.

    Parameters
    ----------
    Y : numpy.ndarray
        Counts, shape ``(n_channels, n)``.
    windows : list of (lo, hi)
        Channel slices, one per family.

    Returns
    -------
    numpy.ndarray
        Shape ``(len(windows), n)``.
    """
    c = np.concatenate([np.zeros((1, Y.shape[1])), np.cumsum(Y, axis=0, dtype=np.float64)])
    n_ch = Y.shape[0]
    out = np.empty((len(windows), Y.shape[1]))

    def total(a: int, b: int) -> np.ndarray:
        a, b = max(a, 0), min(b, n_ch)
        return c[max(b, a)] - c[a]

    for i, (lo, hi) in enumerate(windows):
        w = hi - lo
        left = total(lo - w, lo)
        right = total(hi, hi + w)
        n_side = (min(lo, w) if lo > 0 else 0) + (min(n_ch - hi, w) if hi < n_ch else 0)
        bg = (left + right) * (w / n_side) if n_side else 0.0
        out[i] = total(lo, hi) - bg
    return out


@dataclass(frozen=True)
class FitModel:
    """Templates plus the shared weighting, ready to fit chunks."""

    templates: TemplateSet
    weights: np.ndarray  # (n_channels,)

    @classmethod
    def from_mean_spectrum(cls, templates: TemplateSet, mean_counts: np.ndarray) -> FitModel:
        """Weights 1/max(mean counts, 1) per channel (Poisson variance of the mean pixel)."""
        w = 1.0 / np.maximum(np.asarray(mean_counts, dtype=float), 1.0)
        return cls(templates, w)

    @property
    def n_families(self) -> int:
        """Number of family templates."""
        return self.templates.n_families

    @property
    def n_out(self) -> int:
        """Values per pixel in a fitted block."""
        return 3 * self.n_families + 1

    def solve(self, Y: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Fit columns of ``Y`` (``(n_channels, n)``): coefficients, σ, χ²/dof, converged."""
        A = self.templates.matrix
        AW = A.T * self.weights  # (k, c)
        G = AW @ A
        B = AW @ Y
        X, converged = nnls_batch(G, B)
        P = np.linalg.solve(G, AW)
        # Ŷ = A X, so Σ_c P²_jc ŷ_c = ((P∘P) A) X: a k × k product instead of k × c × n.
        sigma = np.sqrt(np.maximum(poisson_sigma_matrix(P, A) @ X, 0.0))
        Y_hat = A @ X
        dof = max(Y.shape[0] - A.shape[1], 1)
        r = Y - Y_hat
        r *= r
        r /= np.maximum(Y_hat, 1.0, out=Y_hat)
        chi2 = r.sum(axis=0) / dof
        return X, sigma, chi2, converged

    def fit_block(self, block: np.ndarray, batch: int = 2048) -> np.ndarray:
        """Fit one chunk ``(ry, rx, n_channels)`` → ``(ry, rx, n_out)`` float32.

        Pixels are fitted ``batch`` at a time so that the float64 working
        arrays stay near ``batch × n_channels × 8`` bytes (32 MB for 2,048
        channels) whatever the chunk size.
        """
        ry, rx, nch = block.shape
        flat = block.reshape(ry * rx, nch)
        nf = self.n_families
        out = np.empty((ry * rx, self.n_out), np.float32)
        for start in range(0, ry * rx, batch):
            rows = flat[start : start + batch]
            bad = ~measured_pixels(rows)
            Y = rows.T.astype(np.float64)
            if bad.any():
                Y[:, bad] = 0.0  # solved as zeros (NaN would spoil the batch), then blanked
            X, sigma, chi2, _ = self.solve(Y)
            roi = roi_counts(Y, self.templates.roi_windows)
            part = np.concatenate([X[:nf], sigma[:nf], roi, chi2[None]], axis=0).T
            part[bad] = np.nan
            out[start : start + batch] = part
        return out.reshape(ry, rx, self.n_out)


def measured_pixels(flat: np.ndarray) -> np.ndarray:
    """Pixels (rows of ``flat``, one spectrum each) whose every channel is a finite number.

    A scan writes NaN (or leaves garbage) where a pixel was not measured: a
    dropped fly-scan point, a beam loss, a masked dead pixel. Such a pixel
    takes no part in the sum spectrum and is left blank (NaN) in every map
    rather than fitted on made-up counts.
    """
    if not np.issubdtype(flat.dtype, np.floating):
        return np.ones(flat.shape[0], dtype=bool)  # integer counts are always numbers
    return np.isfinite(flat).all(axis=1)


def _sum_max_block(block: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """Per-chunk channel sum and maximum over the measured pixels, and how many were not."""
    flat = block.reshape(-1, block.shape[-1])
    ok = measured_pixels(flat)
    if not ok.all():
        flat = flat[ok]
    if flat.shape[0] == 0:
        n = block.shape[-1]
        return np.zeros(n), np.full(n, -np.inf), int(ok.size)
    return (
        flat.sum(axis=0, dtype=np.float64),
        flat.max(axis=0).astype(np.float64),
        int(ok.size - np.count_nonzero(ok)),
    )
