"""X-ray terms of the evidence model (workbench.matching.xray_scoring, scoring)."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import PeakList
from workbench.matching import MatchParameters, match_peaks
from workbench.matching.scoring import (
    LOSS_PROBABILITY,
    SpeciesEvidence,
    closeness_probability,
    decide_verdict,
    misses_tail_probability,
)
from workbench.matching.xray_scoring import XRAY_SOLE_DEX, xray_agreement
from workbench.refdata import load_set


def _groups(delta, *, inten, predicted, snr, unique=True):
    n = len(delta)
    return {
        "delta": np.asarray(delta, dtype=float),
        "sigma_pos": np.full(n, 12.0),
        "window": np.array([180.0, 168.0][:n]),
        "log_range": np.full(n, 2.0),
        "obs_intensity": np.asarray(inten, dtype=float),
        "saturated": np.zeros(n, dtype=bool),
        "snr": np.asarray(snr, dtype=float),
        "known": np.ones(n, dtype=bool),
        "predicted": np.asarray(predicted, dtype=float),
        "sigma": np.full(n, 0.2),
        "dl": np.full(n, 30.0),
        "unique": np.full(n, unique),
    }


@pytest.mark.parametrize(
    ("delta_kb", "expected"),
    [
        # Worked example of docs/evidence-model.md (hand-computed there):
        # Kα 3 eV off (0.68), Kβ 5 eV off (0.63), ratio 0.05 dex off with
        # σ_r ≈ 0.2 (0.52), sole explanation 1.30.
        (-5.0, 0.685 + 0.633 + 0.518 + 1.301),
        # Kβ 40 eV off with σ 12 eV: log10(0.8·168·φ(3.33)/12 + 0.2) = −0.66
        # (same formula, hand-computed).
        (-40.0, 0.685 - 0.664 + 0.518 + 1.301),
    ],
)
def test_position_ratio_and_sole_terms_add_up(delta_kb, expected):
    # Kα 5000 counts predicted 5000; Kβ observed 0.05 dex above its prediction.
    kb = 850.0 * 10**0.05
    # SNR so high that counting adds nothing to σ_r (3·I/DL ≫ 1).
    g = _groups([3.0, delta_kb], inten=[5000.0, kb], predicted=[5000.0, 850.0], snr=[1e6, 1e6])
    g["dl"] = np.full(2, 1e-3)
    got = xray_agreement(g, np.array([True, True]), loss_probability=LOSS_PROBABILITY)
    assert got == pytest.approx(expected, abs=0.01)


def test_a_far_displaced_peak_costs_at_most_the_loss_probability():
    g = _groups([500.0], inten=[100.0], predicted=[100.0], snr=[100.0])
    # One group, 500 eV off: position term → log10 ε; no sole term (|δ| > 2σ).
    assert xray_agreement(g, np.array([True]), loss_probability=LOSS_PROBABILITY) == pytest.approx(
        np.log10(LOSS_PROBABILITY)
    )


@pytest.mark.parametrize(("snr", "sole"), [(9.0, False), (10.0, True), (50.0, True)])
def test_sole_explanation_needs_a_ten_sigma_peak(snr, sole):
    g = _groups([0.0], inten=[100.0], predicted=[100.0], snr=[snr])
    base = float(np.log10(0.8 * 180.0 / (12.0 * np.sqrt(2 * np.pi)) + 0.2))  # δ = 0
    assert xray_agreement(g, np.array([True]), loss_probability=LOSS_PROBABILITY) == pytest.approx(
        base + sole * XRAY_SOLE_DEX
    )


@pytest.mark.parametrize(("significance", "sole"), [(9.0, False), (12.0, True)])
def test_sole_explanation_reads_the_counting_significance(significance, sole):
    # Height over the median peak noise 6 (a weak peak among strong ones),
    # its own counting significance N/√(N + 2B) beside it: the rule reads the
    # latter (workbench.matching.xray_scoring._sole; threshold 10 there).
    g = _groups([0.0], inten=[100.0], predicted=[100.0], snr=[6.0])
    g["significance"] = np.array([significance])
    base = float(np.log10(0.8 * 180.0 / (12.0 * np.sqrt(2 * np.pi)) + 0.2))  # δ = 0
    assert xray_agreement(g, np.array([True]), loss_probability=LOSS_PROBABILITY) == pytest.approx(
        base + sole * XRAY_SOLE_DEX
    )


def test_ideal_cu_k_is_probable_and_nothing_else_is():
    # Cu Kα1/Kα2 8048/8028 eV and Kβ1 8905 eV (Elam, the shipped set); heights
    # in the Elam ratio Kβ/Kα ≈ 0.13 (relative intensities of the set).
    peaks = PeakList(
        pl.DataFrame({"energy_eV": [8046.0, 8905.0], "intensity": [10000.0, 1350.0]}),
        "energy",
        None,
    )
    rep = match_peaks(peaks, [load_set("xray")], MatchParameters()).report()
    levels = {el["species"]: el["verdict_level"] for el in rep["elements"]}
    assert levels["Cu K"] >= 2
    assert all(v == 0 for sp, v in levels.items() if sp != "Cu K"), levels


# --- optical terms: missing-line tail and closeness (issue 9 follow-up) ---


def _brute_force_tail(m, missed):
    """P(W ≥ W_obs) by enumerating every miss pattern (oracle for small n; derived here)."""
    import itertools

    w = np.maximum(np.log((1 - m) / m), 0.0)
    w_obs = float(np.sum(w[missed]))
    total = 0.0
    for pattern in itertools.product([False, True], repeat=m.size):
        pat = np.array(pattern)
        prob = float(np.prod(np.where(pat, m, 1 - m)))
        if np.sum(w[pat]) >= w_obs - 1e-9:
            total += prob
    return total


@pytest.mark.parametrize(
    ("m", "missed"),
    [
        ([0.2], [True]),  # one surely-visible line missed: ε itself
        ([0.2, 0.2, 0.2, 0.2, 0.2], [True, False, False, False, False]),  # 1 − 0.8⁵
        ([0.2, 0.2], [True, True]),  # 0.04
        ([0.2, 0.35, 0.5, 0.6, 0.25, 0.3], [False, True, True, True, False, True]),
    ],
)
def test_misses_tail_matches_enumeration(m, missed):
    m, missed = np.array(m), np.array(missed)
    got = misses_tail_probability(m, missed)
    # Weights are rounded to 0.05 nats in the engine: allow that much.
    assert got == pytest.approx(_brute_force_tail(m, missed), abs=0.03)
    # Never harsher than the product of the single-line terms.
    assert got >= float(np.prod(m[missed])) - 1e-12


def test_closeness_is_uniform_under_chance():
    # Under "absent" a peak is uniform in its window, so the closeness probability
    # of k chance peaks must itself be uniform: P(c ≤ 0.05) ≈ 0.05 (definition of a
    # p-value; seeded simulation, tolerance ±0.02 for 4000 draws).
    rng = np.random.default_rng(20261202)
    k = 5
    cs = [
        closeness_probability(
            rng.uniform(-1, 1, k), np.full(k, 2.0), np.ones(k, dtype=int), centre_u=-0.15
        )
        for _ in range(4000)
    ]
    frac = float(np.mean(np.array(cs) <= 0.05))
    assert frac == pytest.approx(0.05, abs=0.02)


def test_close_peaks_are_evidence_and_far_ones_are_not():
    # Five peaks 0.02 half-windows from their lines (after the common offset):
    # c = 0.02 each, Fisher: q = 3.2e-9, q·Σ_{j<5} (−ln q)^j/j! = 2.4e-5 (derived here).
    near = closeness_probability(np.full(5, 0.02), np.full(5, 2.0), np.ones(5, dtype=int))
    far = closeness_probability(np.full(5, 0.9), np.full(5, 2.0), np.ones(5, dtype=int))
    assert near < 1e-4
    assert far > 0.5


@pytest.mark.parametrize(("own_groups", "level"), [(0, 0), (1, 1)])
def test_a_species_left_nothing_by_better_ones_is_not_possible(own_groups, level):
    # Class rules (workbench.matching.scoring docstring): two matched groups, both
    # explained by a better species when own_groups == 0; E = 0 is above the
    # "possible" floor log10 0.5, so only the explained groups decide.
    ev = SpeciesEvidence(code=0, label="Qa I", element="Qa", ion=1, family=None)
    ev.n_groups_matched, ev.n_groups_found = 2, own_groups
    ev.net_evidence_dex, ev.missing_evidence = 0.0, True
    assert decide_verdict(ev) == level
