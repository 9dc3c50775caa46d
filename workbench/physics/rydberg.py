"""Hydrogen-like species and their gross (Rydberg) structure.

A hydrogen-like species is one electron bound to a nucleus of charge ``Z`` and
mass ``M`` (:class:`HydrogenLikeSpecies`, the shipped ones in :data:`SPECIES`).
Gross structure: 1/λ_vac = R_M Z² (1/n_l² − 1/n_u²) with R_M = R_∞ · μ/m_e and
the reduced mass μ = m_e M/(m_e + M). This alone puts H I Hα about 0.009 nm
longward of the observed (fine-structure-blended) line; fine structure is in
:mod:`~workbench.physics.dirac`.

All constants come from :mod:`scipy.constants` (CODATA). Air wavelengths use
:func:`workbench.physics.airvac.vacuum_to_air_nm` (IAU) and are ``None`` outside
200 nm – 2 µm (vacuum), where by convention only vacuum wavelengths are quoted.
"""

from __future__ import annotations

from dataclasses import dataclass

from scipy import constants as sc

from workbench.errors import ValueRangeError
from workbench.physics.airvac import MAX_NM, MIN_NM, vacuum_to_air_nm

__all__ = [
    "SPECIES",
    "HydrogenLikeSpecies",
    "check_n",
    "check_pair",
    "get_species",
    "rydberg_constant_per_m",
    "rydberg_wavelength_vac_nm",
    "series_limit_vac_nm",
    "series_name",
    "vacuum_to_air_or_none_nm",
]

_SERIES = {1: "Lyman", 2: "Balmer", 3: "Paschen", 4: "Brackett", 5: "Pfund", 6: "Humphreys"}


@dataclass(frozen=True)
class HydrogenLikeSpecies:
    """A one-electron atom or ion.

    Attributes
    ----------
    label : str
        Spectroscopic name, e.g. ``"He II"``.
    element : str
        Symbol written to line tables (``"D"`` for deuterium).
    Z : int
        Nuclear charge; also the ion stage (1 = neutral).
    nuclear_mass_kg : float
        Mass of the bare nucleus in kg.
    note : str
        Free text carried into the ``notes`` column (e.g. ``"deuterium"``).
    """

    label: str
    element: str
    Z: int
    nuclear_mass_kg: float
    note: str = ""

    def __post_init__(self) -> None:
        if self.Z < 1:
            raise ValueRangeError(
                f"nuclear charge Z={self.Z} of {self.label!r} is not positive",
                "give Z ≥ 1",
            )
        if not self.nuclear_mass_kg > 0:
            raise ValueRangeError(
                f"nuclear mass of {self.label!r} must be positive, got {self.nuclear_mass_kg}",
                "give the bare-nucleus mass in kg",
            )

    @property
    def ion(self) -> int:
        """Ion stage (1 = neutral); equals Z for a one-electron species."""
        return self.Z

    @property
    def reduced_mass_kg(self) -> float:
        """Reduced mass μ = m_e M/(m_e + M) in kg."""
        return sc.m_e * self.nuclear_mass_kg / (sc.m_e + self.nuclear_mass_kg)


def _mass(name: str) -> float:
    return sc.physical_constants[name][0]


# 7Li atomic mass 7.016003437 u (AME2020, from memory) minus three electrons;
# the electron binding energy (~203 eV, i.e. 2e-7 u) is below any effect here.
_LI7_NUCLEUS_KG = 7.016003437 * sc.atomic_mass - 3 * sc.m_e

#: Built-in species by spectroscopic label.
SPECIES: dict[str, HydrogenLikeSpecies] = {
    "H I": HydrogenLikeSpecies("H I", "H", 1, _mass("proton mass"), "protium (1H)"),
    "D I": HydrogenLikeSpecies("D I", "D", 1, _mass("deuteron mass"), "deuterium (2H)"),
    "T I": HydrogenLikeSpecies("T I", "T", 1, _mass("triton mass"), "tritium (3H)"),
    "He II": HydrogenLikeSpecies("He II", "He", 2, _mass("alpha particle mass"), "4He+"),
    "Li III": HydrogenLikeSpecies("Li III", "Li", 3, _LI7_NUCLEUS_KG, "7Li2+"),
}


def get_species(species: str | HydrogenLikeSpecies) -> HydrogenLikeSpecies:
    """Return a species by label, or the object itself.

    Parameters
    ----------
    species : str or HydrogenLikeSpecies
        A label from :data:`SPECIES` (``"H I"``, ``"D I"``, ``"T I"``,
        ``"He II"``, ``"Li III"``) or a custom species.

    Returns
    -------
    HydrogenLikeSpecies
        The species.

    Raises
    ------
    ValueRangeError
        If the label is unknown.
    """
    if isinstance(species, HydrogenLikeSpecies):
        return species
    found = SPECIES.get(str(species).strip())
    if found is None:
        raise ValueRangeError(
            f"unknown hydrogen-like species {species!r}",
            f"use one of {', '.join(SPECIES)} or build a HydrogenLikeSpecies(label, element, "
            "Z, nuclear_mass_kg)",
        )
    return found


def check_n(n: int, what: str) -> int:
    """Return ``n`` as an int, or raise ValueRangeError unless it is a positive integer."""
    if isinstance(n, bool) or int(n) != n or n < 1:
        raise ValueRangeError(f"{what} must be a positive integer, got {n!r}", "give n ≥ 1")
    return int(n)


def check_pair(n_lower: int, n_upper: int) -> tuple[int, int]:
    """Return ``(n_lower, n_upper)`` checked: positive integers with ``n_upper > n_lower``."""
    n_l = check_n(n_lower, "n_lower")
    n_u = check_n(n_upper, "n_upper")
    if n_u <= n_l:
        raise ValueRangeError(
            f"n_upper={n_u} is not above n_lower={n_l}",
            "give n_upper > n_lower (emission from the upper level)",
        )
    return n_l, n_u


def series_name(n_lower: int) -> str:
    """Name of the series ending on ``n_lower`` (``"Balmer"`` for 2; ``"n=7"`` beyond 6)."""
    return _SERIES.get(n_lower, f"n={n_lower}")


def rydberg_constant_per_m(species: str | HydrogenLikeSpecies = "H I") -> float:
    """Mass-corrected Rydberg constant R_M = R_∞ μ/m_e in m⁻¹ (without the Z² factor)."""
    sp = get_species(species)
    return sc.Rydberg * sp.reduced_mass_kg / sc.m_e


def rydberg_wavelength_vac_nm(
    n_lower: int, n_upper: int, species: str | HydrogenLikeSpecies = "H I"
) -> float:
    """Gross-structure vacuum wavelength from the Rydberg formula.

    Parameters
    ----------
    n_lower, n_upper : int
        Principal quantum numbers, ``n_upper > n_lower``.
    species : str or HydrogenLikeSpecies
        The one-electron species.

    Returns
    -------
    float
        λ_vac in nm, 1/λ = R_M Z² (1/n_l² − 1/n_u²).
    """
    n_l, n_u = check_pair(n_lower, n_upper)
    sp = get_species(species)
    sigma_per_m = rydberg_constant_per_m(sp) * sp.Z**2 * (1.0 / n_l**2 - 1.0 / n_u**2)
    return 1e9 / sigma_per_m


def series_limit_vac_nm(n_lower: int, species: str | HydrogenLikeSpecies = "H I") -> float:
    """Vacuum wavelength in nm of the series limit (n_upper → ∞), gross structure."""
    n_l = check_n(n_lower, "n_lower")
    sp = get_species(species)
    return 1e9 * n_l**2 / (rydberg_constant_per_m(sp) * sp.Z**2)


def vacuum_to_air_or_none_nm(wavelength_vac_nm: float) -> float | None:
    """IAU air wavelength, or ``None`` outside 200 nm – 2 µm (vacuum) by convention."""
    if not MIN_NM <= wavelength_vac_nm <= MAX_NM:
        return None
    return float(vacuum_to_air_nm(wavelength_vac_nm)[()])
