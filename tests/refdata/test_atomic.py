import pytest

from workbench.errors import OutOfRangeError, ValueRangeError
from workbench.refdata import (
    ionization_energy_eV,
    partition_function,
    partition_function_method,
)


@pytest.mark.parametrize(
    ("element", "expect_eV"),
    # first ionisation energies, NIST ASD via mendeleev's table (values from memory)
    [("Fe", 7.9025), ("Pb", 7.4167), ("Ca", 6.1132)],
)
def test_first_ionization_energies(element, expect_eV):
    assert ionization_energy_eV(element, 1) == pytest.approx(expect_eV, abs=1e-3)


def test_second_ionization_energy_and_errors():
    # Ca II → Ca III: 11.8717 eV (NIST ASD, from memory)
    assert ionization_energy_eV("Ca", 2) == pytest.approx(11.8717, abs=1e-3)
    with pytest.raises(ValueRangeError):
        ionization_energy_eV("Ca", 0)
    with pytest.raises(ValueRangeError):
        ionization_energy_eV("Xx", 1)


@pytest.mark.parametrize(
    ("element", "ion", "log10_u"),
    # log10 U at θ = 5040/T = 1.0 (Gray, "The Observation and Analysis of Stellar
    # Photospheres", Table D.2; values from memory)
    [("Fe", 1, 1.43), ("Na", 1, 0.31), ("Ca", 1, 0.07), ("H", 1, 0.30), ("Fe", 2, 1.63)],
)
def test_irwin_partition_functions(element, ion, log10_u):
    assert partition_function_method(element, ion) == "irwin1981_polynomial"
    assert partition_function(element, ion, 5040.0) == pytest.approx(10**log10_u, rel=0.08)


def test_partition_function_range_and_fallback():
    with pytest.raises(OutOfRangeError):
        partition_function("Fe", 1, 500.0)
    # He II is hydrogen-like: U = 2 (ground doublet) at moderate T (exact, textbook)
    assert partition_function("He", 2, 10000.0) == pytest.approx(2.0, rel=1e-6)
    # extrapolation above 16 000 K grows monotonically (partf.f scheme)
    assert partition_function("Fe", 1, 20000.0) > partition_function("Fe", 1, 16000.0)
    # Fe V is not in the Irwin file (stages I-III only): documented lower bound >= g_ground
    assert partition_function_method("Fe", 5) == "level_sum_lower_bound"
    assert partition_function("Fe", 5, 10000.0) >= 1.0
