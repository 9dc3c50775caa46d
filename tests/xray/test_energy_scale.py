"""Energy-scale fit (analytic truth)."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.xray.energy_scale import fit_energy_scale


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
