"""X-ray terms of the evidence model (workbench.matching.scoring)."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import PeakList
from workbench.matching import MatchParameters, match_peaks
from workbench.matching.scoring import LOSS_PROBABILITY, XRAY_SOLE_DEX, xray_agreement
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
    got = xray_agreement(g, np.array([True, True]))
    assert got == pytest.approx(expected, abs=0.01)


def test_a_far_displaced_peak_costs_at_most_the_loss_probability():
    g = _groups([500.0], inten=[100.0], predicted=[100.0], snr=[100.0])
    # One group, 500 eV off: position term → log10 ε; no sole term (|δ| > 2σ).
    assert xray_agreement(g, np.array([True])) == pytest.approx(np.log10(LOSS_PROBABILITY))


@pytest.mark.parametrize(("snr", "sole"), [(9.0, False), (10.0, True), (50.0, True)])
def test_sole_explanation_needs_a_ten_sigma_peak(snr, sole):
    g = _groups([0.0], inten=[100.0], predicted=[100.0], snr=[snr])
    base = float(np.log10(0.8 * 180.0 / (12.0 * np.sqrt(2 * np.pi)) + 0.2))  # δ = 0
    assert xray_agreement(g, np.array([True])) == pytest.approx(base + sole * XRAY_SOLE_DEX)


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
