import numpy as np
import pytest

from workbench.errors import UnitError, ValueRangeError
from workbench.physics import units as un


def test_hc_constant():
    assert un.HC_EV_NM == pytest.approx(1239.84198, rel=1e-8)  # CODATA hc, common practice


def test_energy_of_500_nm_vacuum():
    # E = hc/λ with hc = 1239.84198 eV·nm (CODATA, common practice): 1239.84198/500 = 2.479684.
    assert un.wavelength_vac_nm_to_energy_eV(500.0) == pytest.approx(2.479684, abs=1e-6)
    assert un.energy_eV_to_wavelength_vac_nm(2.479684) == pytest.approx(500.0, abs=1e-3)


def test_air_wavelength_converted_to_vacuum_before_energy():
    # 499.86055 nm air ↔ 500 nm vacuum (NIST ASD air/vacuum page, from memory).
    e_air = un.wavelength_nm_to_energy_eV(499.86055, "air")
    assert e_air == pytest.approx(2.479684, abs=1e-6)
    assert un.wavelength_nm_to_energy_eV(499.86055, "vacuum") > e_air  # no conversion in vacuum
    with pytest.raises(ValueRangeError, match="unknown medium"):
        un.wavelength_nm_to_energy_eV(500.0, "water")  # type: ignore[arg-type]


def test_wavenumber_conversions():
    # 1/500 nm = 20000 cm⁻¹ (definition); 1 eV = 8065.544 cm⁻¹ (CODATA, from memory).
    assert un.wavelength_vac_nm_to_wavenumber_per_cm(500.0) == pytest.approx(20000.0)
    assert un.wavenumber_per_cm_to_wavelength_vac_nm(20000.0) == pytest.approx(500.0)
    assert un.energy_eV_to_wavenumber_per_cm(1.0) == pytest.approx(8065.544, abs=1e-3)
    assert un.wavenumber_per_cm_to_energy_eV(8065.544) == pytest.approx(1.0, abs=1e-7)
    assert un.wavenumber_per_cm_to_energy_eV(0.0) == 0.0  # ground level allowed
    assert un.wavelength_to_nm(20000.0, "cm-1") == pytest.approx(500.0)
    assert un.wavelength_from_nm(500.0, "1/cm") == pytest.approx(20000.0)


def test_frequency_and_joules():
    # f = c/λ with c = 299792458 m/s exactly (SI definition).
    assert un.wavelength_vac_nm_to_frequency_Hz(500.0) == pytest.approx(299792458 / 500e-9)
    assert un.frequency_Hz_to_wavelength_vac_nm(299792458 / 500e-9) == pytest.approx(500.0)
    assert un.energy_eV_to_J(1.0) == pytest.approx(1.602176634e-19, rel=1e-15)  # SI exact e
    assert un.energy_J_to_eV(1.602176634e-19) == pytest.approx(1.0, rel=1e-15)
    f = un.energy_eV_to_frequency_Hz(1.0)
    assert f == pytest.approx(1.602176634e-19 / 6.62607015e-34, rel=1e-15)  # SI exact h


@pytest.mark.parametrize(
    ("alias", "canonical"),
    [("Å", "angstrom"), ("A", "angstrom"), ("Angstroms", "angstrom"), ("µm", "um"),
     ("microns", "um"), ("nanometre", "nm"), ("1/cm", "cm-1"), ("cm⁻¹", "cm-1"),
     ("KeV", "keV"), ("ev", "eV"), (" nm ", "nm")],
)  # fmt: skip
def test_unit_aliases(alias, canonical):
    assert un.normalise_unit(alias) == canonical  # spellings users write, common practice


def test_wavelength_and_energy_units():
    assert un.wavelength_to_nm([5000.0], "Å") == pytest.approx([500.0])  # 1 Å = 0.1 nm
    assert un.wavelength_to_nm(0.5, "um") == pytest.approx(500.0)  # 1 µm = 1000 nm
    assert un.wavelength_from_nm(500.0, "pm") == pytest.approx(500_000.0)
    assert un.energy_to_eV(1.5, "keV") == pytest.approx(1500.0)
    assert un.energy_to_eV(np.array([250.0]), "meV") == pytest.approx([0.25])


def test_unit_errors():
    with pytest.raises(UnitError, match="unknown unit 'furlong'") as err:
        un.normalise_unit("furlong")
    assert "nm" in err.value.remedy
    with pytest.raises(UnitError, match="not an energy unit"):
        un.energy_to_eV(1.0, "nm")
    with pytest.raises(UnitError, match="not a wavelength unit"):
        un.wavelength_to_nm(1.0, "keV")
    with pytest.raises(ValueRangeError, match="must be positive"):
        un.wavelength_to_nm([500.0, -1.0], "nm")
    with pytest.raises(ValueRangeError, match="NaN"):
        un.wavelength_vac_nm_to_energy_eV([np.nan])
