import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from workbench.compare.similarity import Tolerance, line_overlap, nearest_index
from workbench.errors import ComparisonError, ValueRangeError


def test_identical_lists_score_one():
    x = np.array([300.0, 400.0, 500.0])
    i = np.array([1.0, 5.0, 2.0])
    res = line_overlap(x, i, x, i, Tolerance(fixed=0.05))
    assert res.line_overlap == pytest.approx(1.0)  # definition: all paired, equal weights
    assert res.intensity_agreement == pytest.approx(1.0)  # correlation of a vector with itself
    assert res.n_pairs == 3


def test_disjoint_lists_score_zero():
    res = line_overlap(
        np.array([300.0, 400.0]),
        np.array([1.0, 1.0]),
        np.array([350.0, 450.0]),
        np.array([1.0, 1.0]),
        Tolerance(fixed=0.05),
    )
    assert res.line_overlap == 0.0  # definition: no pair, numerator 0
    assert res.n_pairs == 0
    assert res.intensity_agreement is None


def test_hand_computed_partial_overlap():
    # q: 500, 600 (equal weights 0.5); k: 500.01, 700 (0.5 each); one pair.
    # score = 0.5 / (0.5 + 0.5 + 0.5) = 1/3 (computed by hand from the definition).
    res = line_overlap(
        np.array([500.0, 600.0]),
        np.array([2.0, 2.0]),
        np.array([500.01, 700.0]),
        np.array([7.0, 7.0]),
        Tolerance(fixed=0.05),
    )
    assert res.line_overlap == pytest.approx(1 / 3)
    assert res.mean_offset == pytest.approx(0.01)  # 500.01 - 500.00


def test_resolving_power_tolerance():
    # R = 10000 at 500 nm gives tol = 0.05 nm (λ/R).
    tol = Tolerance(resolving_power=10_000)
    near = line_overlap(
        np.array([500.0]), np.array([1.0]), np.array([500.04]), np.array([1.0]), tol
    )
    far = line_overlap(np.array([500.0]), np.array([1.0]), np.array([500.06]), np.array([1.0]), tol)
    assert near.n_pairs == 1 and far.n_pairs == 0  # 0.04 < 0.05 < 0.06


def test_pairing_is_one_to_one():
    # Two questioned lines near one known line: only the nearer one is paired.
    res = line_overlap(
        np.array([500.00, 500.03]),
        np.array([1.0, 1.0]),
        np.array([500.02]),
        np.array([1.0]),
        Tolerance(fixed=0.05),
    )
    assert res.n_pairs == 1  # mutual nearest neighbours, by definition one-to-one


def test_nearest_index_ties_go_low():
    assert list(nearest_index(np.array([1.0, 3.0]), np.array([2.0, 0.0, 9.0]))) == [0, 0, 1]


def test_bad_tolerance_and_empty_lists():
    with pytest.raises(ValueRangeError):
        Tolerance()
    with pytest.raises(ValueRangeError):
        Tolerance(fixed=-1.0)
    with pytest.raises(ComparisonError):
        line_overlap(np.array([]), np.array([]), np.array([1.0]), np.array([1.0]), Tolerance(0.1))


lists = st.lists(
    st.tuples(st.floats(200, 900), st.floats(0.1, 1e5)),
    min_size=1,
    max_size=30,
    unique_by=lambda t: t[0],
)


def _brute_force(xa, ia, xb, ib, tol):
    # Independent O(n*m) oracle of the documented definition (pairs by full distance matrix).
    wa, wb = ia / ia.sum(), ib / ib.sum()
    d = np.abs(xa[:, None] - xb[None, :])
    pairs = []
    for i in range(xa.size):
        j = int(np.argmin(d[i]))
        if int(np.argmin(d[:, j])) == i and d[i, j] <= tol:
            pairs.append((i, j))
    smin = sum(min(wa[i], wb[j]) for i, j in pairs)
    return smin / (2 - smin), len(pairs)


@settings(max_examples=60, deadline=None)
@given(lists, lists)
def test_symmetric_bounded_and_equal_to_brute_force(a, b):
    # Sorted input so that the oracle's first-index ties equal "ties go low".
    xa, ia = (np.array(v) for v in zip(*sorted(a), strict=True))
    xb, ib = (np.array(v) for v in zip(*sorted(b), strict=True))
    tol = Tolerance(fixed=0.5)
    ab = line_overlap(xa, ia, xb, ib, tol)
    ba = line_overlap(xb, ib, xa, ia, tol)
    assert 0.0 <= ab.line_overlap <= 1.0 + 1e-12  # definition: weighted Jaccard in [0, 1]
    assert ab.line_overlap == pytest.approx(ba.line_overlap)  # min/max form is symmetric
    # S / (2 - S) identity and pairing rule from the module docstring, by brute force.
    expect, n_pairs = _brute_force(xa, ia, xb, ib, 0.5)
    assert ab.n_pairs == n_pairs
    assert ab.line_overlap == pytest.approx(expect)
