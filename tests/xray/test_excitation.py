"""Excitation and measurability (xraylib 4.3 edges; air attenuation from CS_Total)."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from workbench.xray.excitation import edge_energy_eV, excitable, family_ratio, measurable
from workbench.xray.instrument import Instrument


def test_edges():
    # Pb K 88.0 keV, Pb L3 13.04 keV (xraylib 4.3 EdgeEnergy; Elam tables agree).
    assert edge_energy_eV("Pb", "K") == pytest.approx(88005, abs=20)
    assert edge_energy_eV("Pb", "L3") == pytest.approx(13035, abs=5)


@pytest.mark.parametrize(
    ("kv", "expected"),
    [(40.0, [False, True, True]), (100.0, [True, True, True]), (12.0, [False, False, True])],
)
def test_lines_above_tube_voltage_not_excited(kv, expected):
    inst = replace(Instrument(), tube_kV=kv)
    # Pb K (edge 88.0 keV), Pb L3 (13.0 keV), Fe K (7.1 keV): xraylib 4.3 edges.
    got = excitable(["Pb", "Pb", "Fe"], ["K", "L3", "K"], inst)
    assert got.tolist() == expected


def test_light_elements_not_measurable_in_air():
    inst = Instrument()
    # Mg Kα 1254 eV, Al Kα 1487 eV, Si Kα 1740 eV (xraylib 4.3 LineEnergy).
    assert measurable(np.array([1254.0, 1487.0, 1740.0]), inst).tolist() == [False, True, True]
    vac = replace(inst, atmosphere="vacuum")
    assert measurable(np.array([1254.0]), vac).tolist() == [True]


def test_family_ratio_pb_l_over_m():
    ratio, factor = family_ratio("Pb", "L", "M", Instrument())
    # At 40 kV both families are excited; thin-film L/M is of order 1
    # (fundamental parameters via xraylib; a sanity range, common practice).
    assert 0.1 < ratio < 10.0
    assert factor == 3.0
