"""Line physics: units, air/vacuum, hydrogen-like lines, Boltzmann, Saha, LTE, synthesis."""

from workbench.physics.airvac import (
    AirConditions,
    air_to_vacuum_nm,
    refractive_index_ciddor,
    refractive_index_iau,
    vacuum_to_air_nm,
)
from workbench.physics.units import (
    HC_EV_NM,
    energy_eV_to_wavelength_vac_nm,
    energy_to_eV,
    normalise_unit,
    wavelength_nm_to_energy_eV,
    wavelength_to_nm,
    wavelength_vac_nm_to_energy_eV,
    wavenumber_per_cm_to_energy_eV,
    wavenumber_per_cm_to_wavelength_vac_nm,
)

__all__ = [
    "HC_EV_NM",
    "AirConditions",
    "air_to_vacuum_nm",
    "energy_eV_to_wavelength_vac_nm",
    "energy_to_eV",
    "normalise_unit",
    "refractive_index_ciddor",
    "refractive_index_iau",
    "vacuum_to_air_nm",
    "wavelength_nm_to_energy_eV",
    "wavelength_to_nm",
    "wavelength_vac_nm_to_energy_eV",
    "wavenumber_per_cm_to_energy_eV",
    "wavenumber_per_cm_to_wavelength_vac_nm",
]
