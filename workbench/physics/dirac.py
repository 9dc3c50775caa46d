"""Dirac fine structure of hydrogen-like species: level energies and E1 components.

Level energies E(n, j) from the closed-form Dirac energy of a point nucleus,
with the leading reduced-mass corrections (Bethe & Salpeter 1957, §§ 14-16;
the same form as the CODATA adjustment, Mohr, Taylor & Newell 2008,
Rev. Mod. Phys. 80, 633, eq. 27, without its recoil and QED terms):
``E = μc²[f(n,j) − 1] − μ²c²[f(n,j) − 1]²/(2(m_e+M))`` with
``f = [1 + (Zα/(n − δ))²]^(-1/2)``, ``δ = j + ½ − √((j+½)² − (Zα)²)``.
**The Lamb shift (QED) is neglected**: it lifts 2s½ of H I by about
0.035 cm⁻¹ (≈ 0.0015 nm at Hα) and grows roughly as Z⁴/n³. Levels with
equal n and j (e.g. 2s½ and 2p½) are therefore degenerate here.

:func:`fine_structure_components` lists every E1 component n l j → n' l' j'
of a line, each with its own Dirac transition frequency in ω³ and its share of
the exact multiplet strength (:mod:`~workbench.physics.e1rates`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy import constants as sc

from workbench.errors import ValueRangeError
from workbench.physics.e1rates import e1_rate_prefactor, ls_fraction, radial_integral_au
from workbench.physics.rydberg import (
    HydrogenLikeSpecies,
    check_n,
    check_pair,
    get_species,
    vacuum_to_air_or_none_nm,
)
from workbench.physics.units import HC_EV_NM

__all__ = [
    "FineStructureComponent",
    "dirac_binding_energy_eV",
    "fine_structure_components",
    "level_energy_eV",
]

_L_LETTERS = "spdfghiklmnoqrtuvwxyz"  # spectroscopic letters (j skipped by convention)


def _check_j(n: int, j: float) -> float:
    two_j = 2 * j
    if abs(two_j - round(two_j)) > 1e-9 or round(two_j) % 2 != 1 or not 0 < j < n:
        raise ValueRangeError(
            f"j={j} is not a half-integer between 1/2 and n-1/2 for n={n}",
            "give j = 1/2, 3/2, ... ≤ n - 1/2",
        )
    return round(two_j) / 2


def dirac_binding_energy_eV(n: int, j: float, species: str | HydrogenLikeSpecies = "H I") -> float:
    """Dirac energy of level (n, j) below the ionisation limit, with reduced mass.

    Parameters
    ----------
    n : int
        Principal quantum number.
    j : float
        Total angular momentum, a half-integer ≤ n − ½.
    species : str or HydrogenLikeSpecies
        The one-electron species.

    Returns
    -------
    float
        The (negative) energy in eV relative to the ionisation limit. Lamb
        (QED) shifts and higher-order recoil terms are neglected (see module
        docstring).
    """
    n = check_n(n, "n")
    j = _check_j(n, j)
    sp = get_species(species)
    za2 = (sp.Z * sc.alpha) ** 2
    k = j + 0.5
    # δ = k − √(k² − (Zα)²) written without cancellation.
    delta = za2 / (k + math.sqrt(k * k - za2))
    x = za2 / (n - delta) ** 2
    f_minus_1 = math.expm1(-0.5 * math.log1p(x))  # f − 1 to full precision
    mu = sp.reduced_mass_kg
    total_mass = sc.m_e + sp.nuclear_mass_kg
    energy_J = mu * sc.c**2 * f_minus_1 - (mu**2 * sc.c**2 * f_minus_1**2) / (2.0 * total_mass)
    return energy_J / sc.e


def level_energy_eV(n: int, j: float, species: str | HydrogenLikeSpecies = "H I") -> float:
    """Energy of level (n, j) above the 1s½ ground level, in eV (Dirac, Lamb shift neglected)."""
    return dirac_binding_energy_eV(n, j, species) - dirac_binding_energy_eV(1, 0.5, species)


@dataclass(frozen=True)
class FineStructureComponent:
    """One E1 component n l j → n' l' j' of a hydrogen-like line.

    Attributes
    ----------
    species : str
        Species label.
    n_upper, l_upper, j_upper, n_lower, l_lower, j_lower : int or float
        Quantum numbers.
    E_upper_eV, E_lower_eV : float
        Level energies above the 1s½ ground level (Dirac).
    energy_eV : float
        Photon energy.
    wavelength_vac_nm : float
        Vacuum wavelength.
    wavelength_air_nm : float or None
        IAU air wavelength, ``None`` outside 200–2000 nm (vacuum).
    g_upper, g_lower : int
        2j + 1 of each level.
    A_ki_per_s : float
        Spontaneous emission rate of this component.
    line_strength_au : float
        Line strength S in (e a_μ/Z)².
    """

    species: str
    n_upper: int
    l_upper: int
    j_upper: float
    n_lower: int
    l_lower: int
    j_lower: float
    E_upper_eV: float
    E_lower_eV: float
    energy_eV: float
    wavelength_vac_nm: float
    wavelength_air_nm: float | None
    g_upper: int
    g_lower: int
    A_ki_per_s: float
    line_strength_au: float

    @property
    def transition(self) -> str:
        """Label such as ``"3d 2D5/2 - 2p 2P3/2"``."""
        return f"{_level_label(self.n_upper, self.l_upper, self.j_upper)} - " + _level_label(
            self.n_lower, self.l_lower, self.j_lower
        )

    @property
    def short_label(self) -> str:
        """Compact label such as ``"3d5/2-2p3/2"`` (used to keep line ids unique)."""
        return (
            f"{self.n_upper}{_L_LETTERS[self.l_upper]}{round(2 * self.j_upper)}/2-"
            f"{self.n_lower}{_L_LETTERS[self.l_lower]}{round(2 * self.j_lower)}/2"
        )


def _level_label(n: int, ell: int, j: float) -> str:
    return f"{n}{_L_LETTERS[ell]} 2{_L_LETTERS[ell].upper()}{round(2 * j)}/2"


def fine_structure_components(
    n_upper: int, n_lower: int, species: str | HydrogenLikeSpecies = "H I"
) -> list[FineStructureComponent]:
    """All E1 fine-structure components of the line n_upper → n_lower.

    Components obey Δl = ±1 and Δj = 0, ±1. Each component's rate is
    A = ω³ e² S_JJ' / (3π ε₀ ħ c³ (2J+1)), with S_JJ' the LS share of the
    exact nonrelativistic multiplet strength and ω its Dirac frequency.

    Parameters
    ----------
    n_upper, n_lower : int
        Principal quantum numbers, ``n_upper > n_lower``.
    species : str or HydrogenLikeSpecies
        The one-electron species.

    Returns
    -------
    list of FineStructureComponent
        In order of l_upper, l_lower, j_upper, j_lower.
    """
    n_l, n_u = check_pair(n_lower, n_upper)
    sp = get_species(species)
    out: list[FineStructureComponent] = []
    for l_u in range(n_u):
        for l_l in (l_u - 1, l_u + 1):
            if not 0 <= l_l < n_l:
                continue
            s_mult = 2.0 * max(l_u, l_l) * radial_integral_au(n_u, l_u, n_l, l_l) ** 2
            for j_u in (l_u - 0.5, l_u + 0.5):
                if j_u < 0:
                    continue
                for j_l in (l_l - 0.5, l_l + 0.5):
                    if j_l < 0 or abs(j_u - j_l) > 1:
                        continue
                    s_comp = s_mult * ls_fraction(l_u, j_u, l_l, j_l)
                    if s_comp <= 0:
                        continue
                    e_u = level_energy_eV(n_u, j_u, sp)
                    e_l = level_energy_eV(n_l, j_l, sp)
                    photon_eV = e_u - e_l
                    lam_vac = HC_EV_NM / photon_eV
                    omega = photon_eV * sc.e / sc.hbar
                    g_u = round(2 * j_u + 1)
                    out.append(
                        FineStructureComponent(
                            species=sp.label,
                            n_upper=n_u,
                            l_upper=l_u,
                            j_upper=j_u,
                            n_lower=n_l,
                            l_lower=l_l,
                            j_lower=j_l,
                            E_upper_eV=e_u,
                            E_lower_eV=e_l,
                            energy_eV=photon_eV,
                            wavelength_vac_nm=lam_vac,
                            wavelength_air_nm=vacuum_to_air_or_none_nm(lam_vac),
                            g_upper=g_u,
                            g_lower=round(2 * j_l + 1),
                            A_ki_per_s=e1_rate_prefactor(omega, sp) * s_comp / g_u,
                            line_strength_au=s_comp,
                        )
                    )
    return out
