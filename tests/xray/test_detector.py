"""Detector resolution, efficiency and escape peaks (xraylib 4.3 atomic data)."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from workbench.xray.detector import (
    MN_KA_EV,
    detector_efficiency,
    escape_fraction,
    escape_lines,
    fwhm_eV,
    noise_fwhm_eV,
)
from workbench.xray.instrument import Instrument


@pytest.mark.parametrize("fwhm_mn", [125.0, 140.0, 180.0])
def test_fwhm_reproduces_the_given_value_at_mn_ka(fwhm_mn):
    inst = replace(Instrument(), fwhm_MnKa_eV=fwhm_mn)
    # By construction FWHM(Mn Kα) equals the stated value (derived).
    assert float(fwhm_eV(MN_KA_EV, inst)) == pytest.approx(fwhm_mn, rel=1e-9)


def test_fwhm_follows_fano_statistics():
    inst = Instrument()
    noise = noise_fwhm_eV(inst)
    e = np.array([2000.0, 10000.0, 20000.0])
    # FWHM² − noise² = 2.3548²·F·ε·E with F = 0.115, ε = 3.66 eV for Si
    # (Knoll, Radiation Detection and Measurement, from memory).
    expected = np.sqrt(noise**2 + (2 * np.sqrt(2 * np.log(2))) ** 2 * 0.115 * 3.66 * e)
    assert np.allclose(fwhm_eV(e, inst), expected)
    assert np.all(np.diff(fwhm_eV(e, inst)) > 0)


def test_si_escape_energy_is_si_ka():
    (esc,) = escape_lines(Instrument())
    # Si Kα 1739.98 eV, K edge 1838.9 eV (xraylib 4.3 / Deslattes et al. 2003).
    assert esc.energy_eV == pytest.approx(1740.0, abs=1.0)
    assert esc.edge_eV == pytest.approx(1839.0, abs=2.0)


def test_escape_fraction_is_small_and_falls_with_energy():
    f = escape_fraction(np.array([1500.0, 2500.0, 6000.0, 15000.0]), Instrument())["Si Kα"]
    assert f[0] == 0.0  # below the Si K edge no escape is possible (physics)
    # Si escape is of order 1 % just above the edge and ≪ 1 % at 15 keV
    # (Reed & Ware 1972, J. Phys. E 5, 582, from memory).
    assert 0.003 < f[1] < 0.03
    assert f[1] > f[2] > f[3] > 0


def test_cdte_has_cd_and_te_escapes():
    names = {f"{e.element} {e.line}" for e in escape_lines(replace(Instrument(), detector="CdTe"))}
    assert {"Cd Kα", "Te Kα", "Cd Kβ", "Te Kβ"} <= names


def test_efficiency_limits():
    eff = detector_efficiency(np.array([1000.0, 6000.0, 60000.0]), Instrument())
    # 8 µm Be passes most of 1 keV less well than 6 keV; 0.5 mm Si stops little
    # at 60 keV (xraylib CS_Total; common practice, no source for the shape).
    assert eff[1] > 0.9
    assert eff[0] < eff[1]
    assert eff[2] < 0.1


@pytest.mark.parametrize(("fwhm_mn", "channel", "expected"), [(140.0, 10.0, 21), (180.0, 20.0, 14)])
def test_snip_window_matches_detector(fwhm_mn, channel, expected):
    from workbench.xray.detector import snip_iterations_for

    # 1.5 × FWHM / channel width, rounded (module rule).
    assert snip_iterations_for(replace(Instrument(), fwhm_MnKa_eV=fwhm_mn), channel) == expected
