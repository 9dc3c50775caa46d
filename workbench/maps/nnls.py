"""Batched non-negative least squares: many pixels, one design matrix.

Every pixel of a chunk is fitted on the same templates, so the normal
equations share one Gram matrix ``G = AᵀWA`` (k × k, k ≈ 10–40) and differ
only in ``B = AᵀWY`` (k × n_pixels). :func:`nnls_batch` solves
``min ½xᵀGx − bᵀx  s.t. x ≥ 0`` for all columns at once:

1. the unconstrained solution ``G⁻¹B``; columns already non-negative are the
   NNLS optimum and are done (usually most pixels);
2. for the rest, rounds of (a) a few vectorised projected Gauss–Seidel
   (coordinate-descent) sweeps, then (b) an active-set step: columns are
   grouped by their current support F, ``G_FF x_F = b_F`` is solved for each
   group in one call, and columns whose solution is feasible and satisfies
   the Karush–Kuhn–Tucker conditions (gradient ≥ 0 on the zero set) are
   exact optima; infeasible solutions are approached as far as feasibility
   allows (the inner loop of Lawson & Hanson) (Lawson & Hanson, *Solving Least Squares
   Problems*, 1974, ch. 23, for the conditions).

Nothing loops over pixels in Python: loops run over coordinates (k) and over
stacks of 2,048 columns, each step vectorised across all of them.
"""

from __future__ import annotations

import numpy as np

__all__ = ["nnls_batch", "poisson_sigma"]


def _cd_sweeps(G: np.ndarray, B: np.ndarray, X: np.ndarray, n_sweeps: int) -> np.ndarray:
    diag = np.diag(G)
    for _ in range(n_sweeps):
        for j in range(G.shape[0]):
            grad = G[j] @ X - B[j]
            X[j] = np.maximum(X[j] - grad / diag[j], 0.0)
    return X


def _support_solve(G: np.ndarray, B: np.ndarray, support: np.ndarray) -> np.ndarray:
    """Per column, solve G_FF x_F = b_F on its support F (x = 0 elsewhere), batched.

    Each column's system is embedded in a k × k one (identity rows and columns
    off the support), so all columns go to one stacked ``numpy.linalg.solve``.
    """
    k, n = B.shape
    out = np.zeros_like(B)
    eye = np.eye(k)
    for start in range(0, n, 2048):  # bounds the (n, k, k) stack to ~k²·16 kB
        s = support[:, start : start + 2048].T  # (m, k)
        mask = s[:, :, None] & s[:, None, :]
        M = np.where(mask, G[None], eye[None])
        rhs = np.where(s, B[:, start : start + 2048].T, 0.0)
        out[:, start : start + 2048] = np.linalg.solve(M, rhs[:, :, None])[:, :, 0].T
    return out


def _kkt_ok(G: np.ndarray, B: np.ndarray, X: np.ndarray, tol: np.ndarray) -> np.ndarray:
    grad = G @ X - B
    zero = X <= 0
    # Optimal: gradient ~0 on the support, ≥ 0 on the zero set.
    free_ok = np.all(np.where(zero, True, np.abs(grad) <= tol), axis=0)
    zero_ok = np.all(np.where(zero, grad >= -tol, True), axis=0)
    return free_ok & zero_ok & np.all(X >= 0, axis=0)


def nnls_batch(
    G: np.ndarray,
    B: np.ndarray,
    *,
    max_rounds: int = 30,
    sweeps_per_round: int = 8,
    rtol: float = 1e-9,
) -> tuple[np.ndarray, np.ndarray]:
    """Solve many NNLS problems sharing one Gram matrix.

    Parameters
    ----------
    G : numpy.ndarray
        ``AᵀWA``, shape ``(k, k)``, symmetric positive definite.
    B : numpy.ndarray
        ``AᵀWY``, shape ``(k, n)``: one column per problem.
    max_rounds, sweeps_per_round : int
        Limits of the coordinate-descent / active-set rounds.
    rtol : float
        Relative tolerance of the optimality check (scaled per column by the
        largest ``|G x|`` term).

    Returns
    -------
    X : numpy.ndarray
        Shape ``(k, n)``, non-negative.
    converged : numpy.ndarray of bool
        Shape ``(n,)``: True where the KKT conditions hold within ``rtol``.
    """
    G = np.asarray(G, dtype=np.float64)
    B = np.asarray(B, dtype=np.float64)
    X = np.linalg.solve(G, B)
    converged = np.all(X >= 0, axis=0)
    todo = np.flatnonzero(~converged)
    if todo.size:
        Xs = np.maximum(X[:, todo], 0.0)
        Bs = B[:, todo]
        scale = np.abs(G).max() * np.abs(np.linalg.solve(G, Bs)).max(axis=0) + np.abs(Bs).max(
            axis=0
        )
        tol = rtol * np.maximum(scale, np.finfo(float).tiny)
        ok = np.zeros(todo.size, dtype=bool)
        for _ in range(max_rounds):
            live = np.flatnonzero(~ok)
            if live.size == 0:
                break
            Bl = Bs[:, live]
            Xl = _cd_sweeps(G, Bl, Xs[:, live], sweeps_per_round)
            cand = _support_solve(G, Bl, Xl > 0)
            # Feasible subspace optimum: take it. Otherwise step from the
            # current point towards it as far as feasibility allows (the inner
            # loop of Lawson & Hanson); both lower the objective.
            d = cand - Xl
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.where(cand < 0, Xl / np.where(cand < 0, Xl - cand, 1.0), np.inf)
            alpha = np.minimum(ratio.min(axis=0), 1.0)
            Xl = np.maximum(Xl + alpha * d, 0.0)
            Xl[(cand < 0) & (ratio <= alpha)] = 0.0
            good = _kkt_ok(G, Bl, Xl, tol[live])
            Xs[:, live] = Xl
            ok[live[good]] = True
        X[:, todo] = Xs
        converged[todo] = ok
    return X, converged


def poisson_sigma(P: np.ndarray, Y_hat: np.ndarray) -> np.ndarray:
    """Standard uncertainty of linear coefficients under Poisson counting noise.

    For the linear estimator ``x = P y`` (``P = G⁻¹AᵀW``) with independent
    channels of variance ``ŷ`` (the fitted counts), ``Var(x_j) = Σ_c P_jc² ŷ_c``
    (propagation of variance; JCGM 100:2008 (GUM) §5.1). It ignores the
    non-negativity constraint, so it is the uncertainty of the free fit.

    Parameters
    ----------
    P : numpy.ndarray
        Shape ``(k, n_channels)``.
    Y_hat : numpy.ndarray
        Fitted counts, shape ``(n_channels, n)``.

    Returns
    -------
    numpy.ndarray
        Shape ``(k, n)``.
    """
    return np.sqrt((P * P) @ np.maximum(Y_hat, 0.0))
