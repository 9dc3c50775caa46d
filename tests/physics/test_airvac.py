import astropy.units as u
import numpy as np
import pytest
from specutils.utils.wcs_utils import air_to_vac as su_air_to_vac
from specutils.utils.wcs_utils import vac_to_air as su_vac_to_air

from workbench.errors import OutOfRangeError, ValueRangeError
from workbench.physics.airvac import (
    MIN_AIR_NM,
    AirConditions,
    air_to_vacuum_nm,
    refractive_index_ciddor,
    vacuum_to_air_nm,
)

GRID_NM = np.linspace(200.0, 2000.0, 901)


@pytest.mark.parametrize(
    ("vac_nm", "air_nm"),
    # NIST ASD air/vacuum conversion page examples, from memory.
    [(250.0, 249.92465), (500.0, 499.86055), (800.0, 799.78002)],
)
def test_nist_examples(vac_nm, air_nm):
    assert float(vacuum_to_air_nm(vac_nm)) == pytest.approx(air_nm, abs=1e-5)
    assert float(air_to_vacuum_nm(air_nm)) == pytest.approx(vac_nm, abs=1e-5)


@pytest.mark.parametrize(("ours", "theirs"), [("iau", "Morton2000"), ("ciddor", "Ciddor1996")])
def test_agrees_with_specutils(ours, theirs):
    # specutils (registry package) implements both formulas independently.
    ref = su_vac_to_air(GRID_NM * u.nm, method=theirs).to_value(u.nm)
    assert np.max(np.abs(vacuum_to_air_nm(GRID_NM, method=ours) - ref)) < 1e-5


def test_ciddor_co2_agrees_with_specutils():
    ref = su_vac_to_air(GRID_NM * u.nm, method="Ciddor1996", co2=300.0).to_value(u.nm)
    ours = vacuum_to_air_nm(GRID_NM, method="ciddor", conditions=AirConditions(co2_ppm=300.0))
    assert np.max(np.abs(ours - ref)) < 1e-5  # specutils, registry package


def test_inverse_agrees_with_specutils():
    air = vacuum_to_air_nm(GRID_NM[(GRID_NM >= 201) & (GRID_NM <= 1990)])  # specutils: ≥ 200 nm
    ref = su_air_to_vac(air * u.nm, method="Morton2000", scheme="iteration").to_value(u.nm)
    assert np.max(np.abs(air_to_vacuum_nm(air) - ref)) < 1e-5  # specutils, registry package


@pytest.mark.parametrize("method", ["iau", "ciddor"])
def test_round_trip_exact(method):
    # The inverse is a Newton solution of the forward formula: round trip to 1e-6 nm
    # (requirement of the brief; common practice, no source).
    air = vacuum_to_air_nm(GRID_NM, method=method)
    assert np.max(np.abs(air_to_vacuum_nm(air, method=method) - GRID_NM)) < 1e-6
    vac = air_to_vacuum_nm(GRID_NM[GRID_NM < 1999], method=method)
    assert np.max(np.abs(vacuum_to_air_nm(vac, method=method) - GRID_NM[GRID_NM < 1999])) < 1e-6


def test_round_trip_with_lab_conditions():
    cond = AirConditions(temperature_C=22.0, pressure_Pa=98_000.0, relative_humidity=0.45)
    air = vacuum_to_air_nm(GRID_NM, method="ciddor", conditions=cond)
    back = air_to_vacuum_nm(air, method="ciddor", conditions=cond)
    assert np.max(np.abs(back - GRID_NM)) < 1e-6  # exact inverse, common practice
    # Warmer, lower-pressure air is less refractive (Ciddor 1996 trend), so λ_air is longer.
    assert np.all(air > vacuum_to_air_nm(GRID_NM, method="ciddor"))


def test_humidity_lowers_refractivity():
    # Water vapour is less refractive than the dry air it displaces (Ciddor 1996, from memory).
    dry = refractive_index_ciddor(633.0, AirConditions(temperature_C=20.0))
    wet = refractive_index_ciddor(633.0, AirConditions(temperature_C=20.0, relative_humidity=0.8))
    assert wet < dry


def test_below_200_nm():
    with pytest.raises(OutOfRangeError, match="below 200 nm") as err:
        vacuum_to_air_nm([121.567, 500.0])
    assert "below_200nm='vacuum'" in err.value.remedy
    out = vacuum_to_air_nm([121.567, 500.0], below_200nm="vacuum")
    assert out[0] == 121.567  # vacuum convention below 200 nm: value unchanged
    assert out[1] == pytest.approx(499.86055, abs=1e-5)  # NIST ASD, from memory
    with pytest.raises(OutOfRangeError, match="air image of 200 nm"):
        air_to_vacuum_nm(150.0)
    assert float(air_to_vacuum_nm(150.0, below_200nm="vacuum")) == 150.0
    assert MIN_AIR_NM == pytest.approx(float(vacuum_to_air_nm(200.0)))


def test_above_2000_nm():
    with pytest.raises(OutOfRangeError, match="above 2000 nm"):
        vacuum_to_air_nm(2500.0)
    with pytest.raises(OutOfRangeError, match="above 2000 nm"):
        air_to_vacuum_nm([500.0, 2000.5])


@pytest.mark.parametrize(
    ("kwargs", "pattern"),
    [
        ({"temperature_C": 300.0}, "air temperature"),
        ({"pressure_Pa": 1013.25}, "hPa or mbar"),
        ({"relative_humidity": 45.0}, "fraction"),
        ({"co2_ppm": -1.0}, "CO2"),
    ],
)
def test_bad_air_conditions(kwargs, pattern):
    with pytest.raises(ValueRangeError, match=pattern):
        AirConditions(**kwargs)


def test_bad_method_and_inputs():
    with pytest.raises(ValueRangeError, match="use method='ciddor'"):
        vacuum_to_air_nm(500.0, conditions=AirConditions())
    with pytest.raises(ValueRangeError, match="unknown air-vacuum method"):
        vacuum_to_air_nm(500.0, method="edlen")  # type: ignore[arg-type]
    with pytest.raises(ValueRangeError, match="NaN"):
        air_to_vacuum_nm([np.nan])
    with pytest.raises(ValueRangeError, match="positive"):
        vacuum_to_air_nm([0.0])
