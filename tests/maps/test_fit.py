import numpy as np
import pytest

from workbench.maps.fit import roi_counts


def test_roi_counts_subtract_a_linear_background():
    # Linear background 10 + 0.5·c plus 300 counts in channels 40..49 (analytic truth).
    c = np.arange(100, dtype=float)
    y = 10 + 0.5 * c
    y[40:50] += 30.0
    out = roi_counts(y[:, None], [(40, 50)])
    assert out[0, 0] == pytest.approx(300.0)


def test_sigma_through_the_model_equals_direct_propagation():
    from workbench.maps.fit import poisson_sigma_matrix
    from workbench.maps.nnls import poisson_sigma

    rng = np.random.default_rng(20261202)
    A = np.abs(rng.normal(size=(64, 5)))
    X = np.abs(rng.normal(size=(5, 30))) * 100
    P = np.linalg.pinv(A)
    # Identity Ŷ = A X makes both routes equal (algebra; JCGM 100 §5.1 propagation).
    direct = poisson_sigma(P, A @ X)
    folded = np.sqrt(poisson_sigma_matrix(P, A) @ X)
    np.testing.assert_allclose(folded, direct, rtol=1e-10)
