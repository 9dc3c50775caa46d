"""Energy-scale fit (analytic truth)."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.xray.energy_scale import fit_energy_scale, fit_matched_scale


def test_recovers_offset_and_gain():
    ref = np.array([3691.7, 6404.0, 10551.2, 14764.8])  # Ca Kα, Fe Kα, Pb Lα, Pb Lγ (xraylib)
    shown = (ref - 25.0) / 1.002  # E_true = 25 + 1.002·E_shown (invented error)
    s = fit_energy_scale(shown, ref, np.full(4, 2.0))
    assert s.offset_eV == pytest.approx(25.0, abs=1e-6)
    assert s.gain == pytest.approx(1.002, abs=1e-9)
    assert s.significant


def test_small_error_not_significant():
    ref = np.array([3691.7, 10551.2])
    s = fit_energy_scale(ref + np.array([1.0, -1.5]), ref, np.full(2, 3.0))
    assert not s.significant  # below 20 eV and 3σ (module rule)


def test_single_pair_fits_offset_only():
    s = fit_energy_scale(np.array([6379.0]), np.array([6404.0]), np.array([2.0]))
    assert (s.offset_eV, s.gain, s.significant) == (pytest.approx(25.0), 1.0, True)


# fit_matched_scale: pairs from decided families, robust by family.
# Reference energies: Cu Kα 8040, Cu Kβ 8905, Zn Kα 8631, Zn Kβ 9572, Pb Lα
# 10545, Pb Lβ 12611 eV (blend maxima near the xraylib line energies; the
# values only need to be distinct energies for an analytic check).
_REF = np.array([8040.0, 8905.0, 8631.0, 9572.0, 10545.0, 12611.0])
_FAM = np.array(["Cu K", "Cu K", "Zn K", "Zn K", "Pb L", "Pb L"])


def test_matched_recovers_offset_with_its_uncertainty():
    shown = _REF + 12.0  # a unit reading 12 eV high (invented drift)
    sigma = np.array([3.0, 4.0, 3.0, 4.0, 6.0, 6.0])
    s = fit_matched_scale(shown, _REF, sigma, _FAM)
    assert s.offset_eV == pytest.approx(-12.0, abs=1e-9)
    assert s.gain == 1.0  # no gain asked for by exact pairs (|g − 1| not > 3σ)
    # 1/√Σw for the weighted mean (analytic).
    assert s.offset_uncertainty_eV == pytest.approx(1.0 / np.sqrt(np.sum(sigma**-2.0)))
    assert s.significant and s.stage == "matched families" and s.rejected == ()
    assert s.span_eV == (pytest.approx(8052.0), pytest.approx(12623.0))


def test_matched_drops_a_wrong_family_as_a_whole():
    shown = _REF + 20.0
    lines = np.append(_REF, [8652.0, 10010.0])  # "Re L" lines, placed off by −14 eV
    shown = np.append(shown, [8652.0 + 6.0, 10010.0 + 6.0])
    fam = np.append(_FAM, ["Re L", "Re L"])
    s = fit_matched_scale(shown, lines, np.full(8, 2.0), fam)
    assert s.rejected == ("Re L",)
    assert s.offset_eV == pytest.approx(-20.0, abs=1e-9)
    assert s.n_pairs == 6


def test_matched_needs_a_majority_and_two_lines():
    # Two single-line families that disagree: nothing stands.
    s = fit_matched_scale(
        np.array([8060.0, 10545.0]),
        np.array([8040.0, 10545.0]),
        np.full(2, 2.0),
        np.array(["Cu K", "Pb L"]),
    )
    assert s.n_pairs == 0 and not s.significant
    # One line of one family: no reading of the scale.
    s = fit_matched_scale(np.array([8060.0]), np.array([8040.0]), np.ones(1), np.array(["Cu K"]))
    assert s.n_pairs == 0
    # One family of three lines against two single-line families that agree
    # with each other (offset-only fit, so the first family dropped is the
    # one the weighted mean sits furthest from): the majority of pairs stands.
    o = np.array([8060.0, 9592.0, 10545.0, 12611.0, 14764.0])
    r = np.array([8040.0, 9572.0, 10545.0, 12611.0, 14764.0])
    fam = np.array(["Cu K", "Zn K", "Pb L", "Pb L", "Pb L"])
    s = fit_matched_scale(o, r, np.full(5, 2.0), fam)
    assert (s.n_pairs, s.rejected, s.offset_eV) == (3, ("Cu K", "Zn K"), 0.0)
    # With two lines against two, no majority: nothing stands.
    s = fit_matched_scale(o[:4], r[:4], np.full(4, 2.0), fam[:4])
    assert s.n_pairs == 0


def test_matched_gain_only_when_the_data_ask_for_it():
    shown = (_REF - 30.0) / 1.003  # E_true = 30 + 1.003·E_shown (invented)
    s = fit_matched_scale(shown, _REF, np.full(6, 1.0), _FAM)
    assert s.gain == pytest.approx(1.003, abs=1e-9)
    assert s.offset_eV == pytest.approx(30.0, abs=1e-6)
    # A 4 eV correction is below the 5 eV floor (module rule): not significant.
    s = fit_matched_scale(_REF - 4.0, _REF, np.full(6, 0.5), _FAM)
    assert s.offset_eV == pytest.approx(4.0) and not s.significant
