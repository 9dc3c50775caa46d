import numpy as np
import pytest
from scipy.optimize import nnls

from workbench.maps.nnls import nnls_batch, poisson_sigma


@pytest.mark.parametrize(("n_channels", "k", "n"), [(60, 5, 200), (200, 15, 500), (512, 30, 300)])
def test_nnls_batch_matches_scipy(n_channels, k, n):
    rng = np.random.default_rng(20261202)
    A = np.abs(rng.normal(size=(n_channels, k)))
    X_true = np.maximum(rng.normal(size=(k, n)), 0)  # about half the coefficients are 0
    Y = A @ X_true + rng.normal(size=(n_channels, n)) * 0.5
    X, converged = nnls_batch(A.T @ A, A.T @ Y)
    # Oracle: scipy.optimize.nnls (Lawson-Hanson active set), one column at a time.
    ref = np.column_stack([nnls(A, Y[:, i])[0] for i in range(n)])
    assert converged.all()
    assert (X >= 0).all()
    np.testing.assert_allclose(X, ref, atol=1e-6 * np.abs(ref).max())


def test_feasible_unconstrained_solution_is_returned_as_is():
    rng = np.random.default_rng(20261202)
    A = np.abs(rng.normal(size=(80, 4)))
    X_true = rng.uniform(5, 10, size=(4, 50))
    Y = A @ X_true  # noise-free: the exact solution is X_true (analytic)
    X, converged = nnls_batch(A.T @ A, A.T @ Y)
    assert converged.all()
    np.testing.assert_allclose(X, X_true, rtol=1e-9)


def test_poisson_sigma_is_square_root_of_counts_for_a_single_channel_template():
    # One template that is a unit spike: x = y, so Var(x) = ŷ (Poisson; analytic).
    P = np.array([[0.0, 1.0, 0.0]])
    Y_hat = np.array([[0.0], [400.0], [0.0]])
    assert poisson_sigma(P, Y_hat)[0, 0] == pytest.approx(20.0)
