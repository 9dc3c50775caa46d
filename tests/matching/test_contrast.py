"""The contrast exponent of a species' tabulated strengths (workbench.matching.contrast).

Truth: seeded invented species whose heights follow S^b (b known), seeded
chance hits whose heights and places are unrelated to S, scipy's
Mann-Whitney U for the order test, and one real lamp of the tune set (the
Goodman 1200M4 Ne lamp, tests/data/realspectra).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from tests.realdata.loader import load
from tests.realdata.run import run_real
from workbench.matching.contrast import (
    GRID,
    _found_above_missed,
    contrast_exponents,
    miss_prediction,
)

SIGMA = 0.8  # discharge-lamp σ (workbench.matching.sourcemodels)
LOSS = 0.2  # scoring.LOSS_PROBABILITY


def _species(rng, b_true: float, n: int = 40, scatter_dex: float = 0.2):
    """One species: strengths log-uniform over 2 decades, heights S^b_true, a detection limit."""
    log_s = rng.uniform(-2.0, 0.0, n)
    log_s[0] = 0.0
    log_i = 3.0 + b_true * log_s + rng.normal(0.0, scatter_dex, n)
    log_dl = np.full(n, 3.0 - 1.5)
    found = log_i >= log_dl
    return log_s, log_i, log_dl, found


def _fit(log_s, log_i, log_dl, found):
    n = log_s.size
    return contrast_exponents(
        np.array([0]),
        np.array([n]),
        log_s,
        np.where(found, log_i, np.nan),
        log_dl,
        np.full(n, SIGMA),
        found,
        ~found,
        LOSS,
    )[0]


@pytest.mark.parametrize("b_true", [2.0, 2.5, 3.0])
def test_a_steeper_lamp_scale_is_found(b_true):
    rng = np.random.default_rng(20261204)
    b = _fit(*_species(rng, b_true))
    assert b >= 2.0, b


def test_the_scale_as_tabulated_keeps_b_one():
    rng = np.random.default_rng(20261205)
    fitted = [_fit(*_species(rng, 1.0)) for _ in range(50)]
    # b = 1 generates the data: a steeper fit needs the likelihood-ratio test
    # (5 %) and the order test to pass by chance.
    assert np.mean(np.asarray(fitted) > 1.0) <= 0.1


def test_chance_hits_keep_b_one():
    # Hits placed at random among the groups, heights unrelated to S: the
    # order test (found tabulated above missed, one-sided p <= 0.01) passes
    # about once in 100 draws, so b leaves 1 rarely.
    rng = np.random.default_rng(20261206)
    moved = 0
    for _ in range(300):
        n = 40
        log_s = rng.uniform(-2.0, 0.0, n)
        found = rng.random(n) < 0.4
        log_i = rng.normal(2.0, 0.7, n)
        moved += _fit(log_s, log_i, np.full(n, 1.0), found) > 1.0
    assert moved / 300 <= 0.03


def test_order_test_matches_scipy():
    rng = np.random.default_rng(20261207)
    x = rng.normal(size=60)
    s = np.repeat([0, 1, 2], 20)
    f = rng.random(60) < 0.5
    p = _found_above_missed(s, x, f, ~f, 3)
    for k in range(3):
        sel = s == k
        want = stats.mannwhitneyu(
            x[sel & f],
            x[sel & ~f],
            alternative="greater",
            method="asymptotic",
            use_continuity=False,
        ).pvalue
        assert p[k] == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize("b", GRID)
def test_the_contrast_never_raises_a_prediction(b):
    rng = np.random.default_rng(20261208)
    pred = rng.lognormal(3.0, 1.0, 50)
    strength = np.concatenate([[1.0, 1.4], rng.uniform(0.001, 1.0, 48)])
    known = rng.random(50) < 0.9
    out = miss_prediction(pred, strength, known, b)
    assert np.all(out <= pred)
    assert np.array_equal(out[~known], pred[~known])
    assert np.array_equal(out[strength >= 1.0], pred[strength >= 1.0])
    if b == 1.0:
        assert out is pred


def test_the_real_neon_lamp_pays_no_longer_for_its_weak_lines():
    # Goodman 1200M4 Ne (tune): its weaker tabulated Ne I lines lie 1-2
    # decades below their ratios together; as independent misses they cost
    # -4.4 decades (stop 25).
    outcome = run_real(load("goodman_comp_1200M4_GG455_Ne"))
    ne = next(v for v in outcome.result.evidence.evidence.values() if v.label == "Ne I")
    assert ne.contrast >= 1.5
    assert ne.missing_penalty_dex > -1.0
    row = next(e for e in outcome.report["elements"] if e["species"] == "Ne I")
    assert row["intensity_contrast"] == pytest.approx(ne.contrast)
    notes = [w for w in outcome.report["warnings"] if w["kind"] == "intensity_contrast"]
    assert [n["elements"] for n in notes if "Ne I" in n["elements"]] == [["Ne I"]]
