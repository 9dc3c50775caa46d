import math

import numpy as np
import pytest

from workbench.errors import PhysicsError, ValueRangeError
from workbench.physics.saha import (
    partition_function_from_levels,
    saha_boltzmann_line_ratio,
    saha_factor_per_cm3,
    saha_ion_neutral_ratio,
    temperature_from_saha_boltzmann_ratio,
)

# Fe I → Fe II ionisation energy 7.9025 eV (NIST ASD, from memory). The partition
# functions U_II = 42, U_I = 26 are illustrative assumptions, not tabulated values.
E_ION = 7.9025
U_ION, U_NEU = 42.0, 26.0


def test_saha_factor_textbook_constant():
    # 2(2π m_e k T/h²)^{3/2} = 4.8294e15 T^{3/2} cm⁻³ (textbook constant, e.g. Griem 1964;
    # from memory).
    assert saha_factor_per_cm3(1.0) == pytest.approx(4.8294e15, rel=1e-4)
    assert saha_factor_per_cm3(1e4) == pytest.approx(4.8294e15 * 1e6, rel=1e-4)


def test_saha_fe_by_hand():
    # Hand calculation, step by step (constants: CODATA k/e = 8.617333e-5 eV/K, from memory).
    t, ne = 10_000.0, 1e17
    kt_eV = 8.617333e-5 * t  # = 0.8617333 eV
    thermal = 4.8294e15 * t**1.5  # = 4.8294e21 cm⁻³
    step = thermal / ne  # = 4.8294e4
    step *= U_ION / U_NEU  # × 1.61538 = 7.8013e4
    boltz = math.exp(-E_ION / kt_eV)  # exp(−9.17045) = 1.0416e-4
    expected = step * boltz  # ≈ 8.126
    assert expected == pytest.approx(8.126, rel=1e-3)  # the arithmetic above, by hand
    got = saha_ion_neutral_ratio(t, ne, E_ION, U_ION, U_NEU)
    assert got == pytest.approx(expected, rel=1e-4)


def test_saha_limits():
    base = saha_ion_neutral_ratio(10_000.0, 1e17, E_ION, U_ION, U_NEU)
    assert saha_ion_neutral_ratio(12_000.0, 1e17, E_ION, U_ION, U_NEU) > base  # grows with T
    assert saha_ion_neutral_ratio(10_000.0, 1e18, E_ION, U_ION, U_NEU) == pytest.approx(base / 10)
    lowered = saha_ion_neutral_ratio(10_000.0, 1e17, E_ION, U_ION, U_NEU, 0.1)
    # Lowering ΔE multiplies by exp(ΔE/kT): analytic.
    assert lowered / base == pytest.approx(math.exp(0.1 / (8.617333262e-5 * 1e4)), rel=1e-9)


def test_line_ratio_consistent_with_populations():
    # I_ion/I_neu built from populations n g exp(−E/kT)/U · A/λ (definition), T = 10000 K.
    t, ne = 10_000.0, 1e17
    ion = (8.0, 2.0e8, 5.5, 259.94)  # invented Fe II-like line
    neu = (11.0, 1.6e7, 3.33, 371.99)  # invented Fe I-like line
    kt = 8.617333262e-5 * t
    n_ratio = saha_ion_neutral_ratio(t, ne, E_ION, U_ION, U_NEU)
    pop_ion = n_ratio * ion[0] * math.exp(-ion[2] / kt) / U_ION
    pop_neu = neu[0] * math.exp(-neu[2] / kt) / U_NEU
    expected = (pop_ion * ion[1] / ion[3]) / (pop_neu * neu[1] / neu[3])
    got = saha_boltzmann_line_ratio(t, ne, E_ION, ion, neu)
    assert got == pytest.approx(expected, rel=1e-9)  # k/e typed to 10 digits above
    back = temperature_from_saha_boltzmann_ratio(got, ne, E_ION, ion, neu)
    assert back == pytest.approx(t, rel=1e-8)  # inverse of the line above
    with pytest.raises(PhysicsError, match="not reached"):
        temperature_from_saha_boltzmann_ratio(got * 1e30, ne, E_ION, ion, neu)


def test_partition_function_from_levels():
    # Σ g exp(−E/kT) evaluated by hand for two levels at T = 5000 K.
    kt = 8.617333262e-5 * 5000.0
    expected = 9.0 + 7.0 * math.exp(-0.0516 / kt)
    assert partition_function_from_levels([0.0, 0.0516], [9, 7], 5000.0) == pytest.approx(
        expected, rel=1e-9
    )
    assert partition_function_from_levels(np.zeros(1), [2], 300.0) == 2.0  # ground level only


def test_bad_inputs():
    with pytest.raises(ValueRangeError, match="electron_density_per_cm3"):
        saha_ion_neutral_ratio(1e4, 0.0, E_ION, U_ION, U_NEU)
    with pytest.raises(ValueRangeError, match="temperature_K"):
        saha_ion_neutral_ratio(-1.0, 1e17, E_ION, U_ION, U_NEU)
    with pytest.raises(ValueRangeError, match="ionization_lowering_eV"):
        saha_ion_neutral_ratio(1e4, 1e17, E_ION, U_ION, U_NEU, ionization_lowering_eV=9.0)
    with pytest.raises(ValueRangeError, match="level 1 weight"):
        partition_function_from_levels([0.0, 1.0], [1, 0], 1e4)
    with pytest.raises(ValueRangeError, match="ion_line must be"):
        saha_boltzmann_line_ratio(1e4, 1e17, E_ION, (1.0, 2.0), (1.0, 1.0, 1.0, 300.0))
