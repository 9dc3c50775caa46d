"""Abundance priors (workbench.matching.priors); values follow from the module's formula."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.errors import ValueRangeError
from workbench.matching.prior_test import PRIOR_DATA_P, prior_capped
from workbench.matching.priors import ABUNDANCE_PRIORS, prior_dex


def test_none_is_neutral():
    assert prior_dex("none", "Dy") == 0.0


@pytest.mark.parametrize(
    ("prior", "element"),
    [("solar", "Ca"), ("solar", "Dy"), ("crustal", "Ti"), ("crustal", "Au")],
)
def test_formula(prior, element):
    table = ABUNDANCE_PRIORS[prior]
    median = float(np.median(list(table.values())))
    expected = float(np.clip(0.5 * (table[element] - median), -2.0, 2.0))  # module docstring
    assert prior_dex(prior, element) == pytest.approx(expected)


def test_solar_orders_common_over_rare():
    # Ca (log ε 6.34) is far more abundant in the Sun than Dy (1.10): Asplund et al.
    # 2009 (from memory); the prior must prefer Ca.
    assert prior_dex("solar", "Ca") > prior_dex("solar", "Dy")
    assert prior_dex("solar", "Ca") == pytest.approx(2.0)  # clipped at +2


def test_unknown_prior_is_one_clear_error():
    with pytest.raises(ValueRangeError):
        prior_dex("lunar", "Fe")


@pytest.mark.parametrize(
    ("level", "prior", "p", "expected"),
    [
        (2, 2.0, 0.5, 1),  # probable on the prior alone: capped
        (3, 2.0, 0.2, 1),
        (2, 2.0, 0.036, 2),  # the data alone significant (p ≤ 0.05): kept
        (2, 0.0, 0.9, 2),  # no prior in its favour: the class rules alone
        (3, -0.5, 0.9, 3),
        (1, 2.0, 0.9, 1),
    ],
)
def test_a_prior_tips_a_call_but_does_not_make_one(level, prior, p, expected):
    # PRIOR_DATA_P = 0.05, the conventional single-test level (common practice, no source).
    assert PRIOR_DATA_P == 0.05
    assert prior_capped(level, prior, p) == expected
