"""Line physics: units, air/vacuum, hydrogen-like lines, Boltzmann, Saha, LTE, synthesis.

Modules
-------
units
    Wavelength, wavenumber, frequency and photon-energy conversions (CODATA).
airvac
    Air ↔ vacuum wavelengths (IAU/Morton 2000 with exact inverse; Ciddor 1996).
rydberg, dirac, e1rates, hydrogen
    Hydrogen-like lines: species and Rydberg gross structure (``rydberg``), Dirac
    levels and fine-structure components (``dirac``), exact nonrelativistic E1
    rates (``e1rates``); the ``hydrogen_like`` reference table (``hydrogen``).
boltzmann
    LTE relative line intensities and the Boltzmann-plot temperature.
saha
    Saha ionisation balance, Saha–Boltzmann line ratios, partition functions.
lte
    The McWhirter criterion (necessary, not sufficient, for LTE).
synth
    Synthetic emission and absorption spectra (invented data for demos and tests).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # what the names are, for type checkers; at run time see __getattr__
    from workbench.physics.airvac import (
        AirConditions,
        air_to_vacuum_nm,
        refractive_index_ciddor,
        refractive_index_iau,
        vacuum_to_air_nm,
    )
    from workbench.physics.boltzmann import (
        K_B_EV_PER_K,
        BoltzmannFit,
        boltzmann_plot,
        relative_line_intensities,
    )
    from workbench.physics.hydrogen import (
        FineStructureComponent,
        HydrogenLikeSpecies,
        dirac_binding_energy_eV,
        einstein_A_nl_per_s,
        fine_structure_components,
        gf_from_A,
        gross_einstein_A_per_s,
        hydrogen_like_blends,
        hydrogen_like_line_table,
        level_energy_eV,
        radial_integral_au,
        rydberg_wavelength_vac_nm,
        series_limit_vac_nm,
    )
    from workbench.physics.lte import (
        LteCheck,
        check_mcwhirter,
        mcwhirter_min_electron_density_per_cm3,
    )
    from workbench.physics.saha import (
        partition_function_from_levels,
        saha_boltzmann_line_ratio,
        saha_factor_per_cm3,
        saha_ion_neutral_ratio,
        temperature_from_saha_boltzmann_ratio,
    )
    from workbench.physics.synth import (
        absorption_spectrum,
        line_profile,
        render_lines,
        synthetic_spectrum,
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

#: Public name → the sub-module that defines it. The sub-modules are imported
#: when one of their names is first used (PEP 562 ``__getattr__``), so that a
#: reader needing only :mod:`workbench.physics.units` does not pay for
#: scipy.constants, polars and the hydrogen tables (about 0.15 s of start-up).
_DEFINED_IN: dict[str, tuple[str, ...]] = {
    "airvac": (
        "AirConditions",
        "air_to_vacuum_nm",
        "refractive_index_ciddor",
        "refractive_index_iau",
        "vacuum_to_air_nm",
    ),
    "boltzmann": (
        "K_B_EV_PER_K",
        "BoltzmannFit",
        "boltzmann_plot",
        "relative_line_intensities",
    ),
    "hydrogen": (
        "FineStructureComponent",
        "HydrogenLikeSpecies",
        "dirac_binding_energy_eV",
        "einstein_A_nl_per_s",
        "fine_structure_components",
        "gf_from_A",
        "gross_einstein_A_per_s",
        "hydrogen_like_blends",
        "hydrogen_like_line_table",
        "level_energy_eV",
        "radial_integral_au",
        "rydberg_wavelength_vac_nm",
        "series_limit_vac_nm",
    ),
    "lte": (
        "LteCheck",
        "check_mcwhirter",
        "mcwhirter_min_electron_density_per_cm3",
    ),
    "saha": (
        "partition_function_from_levels",
        "saha_boltzmann_line_ratio",
        "saha_factor_per_cm3",
        "saha_ion_neutral_ratio",
        "temperature_from_saha_boltzmann_ratio",
    ),
    "synth": (
        "absorption_spectrum",
        "line_profile",
        "render_lines",
        "synthetic_spectrum",
    ),
    "units": (
        "HC_EV_NM",
        "energy_eV_to_wavelength_vac_nm",
        "energy_to_eV",
        "normalise_unit",
        "wavelength_nm_to_energy_eV",
        "wavelength_to_nm",
        "wavelength_vac_nm_to_energy_eV",
        "wavenumber_per_cm_to_energy_eV",
        "wavenumber_per_cm_to_wavelength_vac_nm",
    ),
}
_MODULE_OF: dict[str, str] = {name: mod for mod, names in _DEFINED_IN.items() for name in names}

__all__ = [
    "HC_EV_NM",
    "K_B_EV_PER_K",
    "AirConditions",
    "BoltzmannFit",
    "FineStructureComponent",
    "HydrogenLikeSpecies",
    "LteCheck",
    "absorption_spectrum",
    "air_to_vacuum_nm",
    "boltzmann_plot",
    "check_mcwhirter",
    "dirac_binding_energy_eV",
    "einstein_A_nl_per_s",
    "energy_eV_to_wavelength_vac_nm",
    "energy_to_eV",
    "fine_structure_components",
    "gf_from_A",
    "gross_einstein_A_per_s",
    "hydrogen_like_blends",
    "hydrogen_like_line_table",
    "level_energy_eV",
    "line_profile",
    "mcwhirter_min_electron_density_per_cm3",
    "normalise_unit",
    "partition_function_from_levels",
    "radial_integral_au",
    "refractive_index_ciddor",
    "refractive_index_iau",
    "relative_line_intensities",
    "render_lines",
    "rydberg_wavelength_vac_nm",
    "saha_boltzmann_line_ratio",
    "saha_factor_per_cm3",
    "saha_ion_neutral_ratio",
    "series_limit_vac_nm",
    "synthetic_spectrum",
    "temperature_from_saha_boltzmann_ratio",
    "vacuum_to_air_nm",
    "wavelength_nm_to_energy_eV",
    "wavelength_to_nm",
    "wavelength_vac_nm_to_energy_eV",
    "wavenumber_per_cm_to_energy_eV",
    "wavenumber_per_cm_to_wavelength_vac_nm",
]


def __getattr__(name: str) -> object:
    module_name = _MODULE_OF.get(name)
    if module_name is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    if module_name == "airvac":
        from workbench.physics import airvac as module
    elif module_name == "boltzmann":
        from workbench.physics import boltzmann as module
    elif module_name == "hydrogen":
        from workbench.physics import hydrogen as module
    elif module_name == "lte":
        from workbench.physics import lte as module
    elif module_name == "saha":
        from workbench.physics import saha as module
    elif module_name == "synth":
        from workbench.physics import synth as module
    elif module_name == "units":
        from workbench.physics import units as module
    else:  # pragma: no cover - _DEFINED_IN names only the modules above
        raise AttributeError(name)
    value = getattr(module, name)
    globals()[name] = value  # later look-ups find it directly
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
