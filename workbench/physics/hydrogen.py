"""Hydrogen-like lines: Rydberg gross structure, Dirac fine structure and exact E1 rates.

A hydrogen-like species is one electron bound to a nucleus of charge ``Z`` and
mass ``M``. Three levels of description are offered:

Gross structure (Rydberg)
    1/λ_vac = R_M Z² (1/n_l² − 1/n_u²) with R_M = R_∞ · μ/m_e and the reduced
    mass μ = m_e M/(m_e + M). This alone puts H I Hα about 0.009 nm longward of
    the observed (fine-structure-blended) line.
Fine structure (Dirac)
    Level energies E(n, j) from the closed-form Dirac energy of a point nucleus,
    with the leading reduced-mass corrections (Bethe & Salpeter 1957, §§ 14-16;
    the same form as the CODATA adjustment, Mohr, Taylor & Newell 2008,
    Rev. Mod. Phys. 80, 633, eq. 27, without its recoil and QED terms):
    ``E = μc²[f(n,j) − 1] − μ²c²[f(n,j) − 1]²/(2(m_e+M))`` with
    ``f = [1 + (Zα/(n − δ))²]^(-1/2)``, ``δ = j + ½ − √((j+½)² − (Zα)²)``.
    **The Lamb shift (QED) is neglected**: it lifts 2s½ of H I by about
    0.035 cm⁻¹ (≈ 0.0015 nm at Hα) and grows roughly as Z⁴/n³. Levels with
    equal n and j (e.g. 2s½ and 2p½) are therefore degenerate here.
Transition rates (E1, nonrelativistic)
    l-resolved spontaneous rates from the exact nonrelativistic radial
    matrix element ⟨n'l'|r|nl⟩, evaluated here in exact rational arithmetic
    from the closed-form Laguerre radial functions (equivalent to Gordon's 1929
    hypergeometric formula; Bethe & Salpeter 1957, § 63), with
    A = ω³ e² S / (3π ε₀ ħ c³ g_upper) and the line strength
    S = max(l, l') · |⟨r⟩|² · (2s+1) in units of (e·a_μ/Z)², a_μ = a₀ m_e/μ.
    The multiplet line strength is split over the fine-structure components
    with the standard LS fractions (2J+1)(2J'+1){L J S; J' L' 1}²/(2S+1)
    (e.g. 2P3/2→2S1/2 : 2P1/2→2S1/2 = 2 : 1). Each component uses its own
    Dirac transition frequency in ω³.

All constants come from :mod:`scipy.constants` (CODATA). Energies are in eV,
wavelengths in nm; air wavelengths use :func:`workbench.physics.airvac.vacuum_to_air_nm`
(IAU) and are ``None``/null outside 200 nm – 2 µm (vacuum), where by convention
only vacuum wavelengths are quoted.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

import numpy as np
import polars as pl
from scipy import constants as sc

from workbench.errors import ValueRangeError
from workbench.physics.airvac import MAX_NM, MIN_NM, vacuum_to_air_nm
from workbench.physics.units import HC_EV_NM

__all__ = [
    "A_KI_ORIGIN",
    "SOURCE_ID",
    "SPECIES",
    "FineStructureComponent",
    "HydrogenLikeSpecies",
    "dirac_binding_energy_eV",
    "einstein_A_nl_per_s",
    "fine_structure_components",
    "get_species",
    "gf_from_A",
    "gross_einstein_A_per_s",
    "hydrogen_like_blends",
    "hydrogen_like_line_table",
    "level_energy_eV",
    "radial_integral_au",
    "rydberg_constant_per_m",
    "rydberg_wavelength_vac_nm",
    "series_limit_vac_nm",
    "series_name",
    "vacuum_to_air_or_none_nm",
    "wigner_6j",
]

#: ``source_id`` written in every table row.
SOURCE_ID = "computed_rydberg_dirac"
#: ``A_ki_origin`` written in every table row.
A_KI_ORIGIN = "computed_nonrelativistic_E1"

_L_LETTERS = "spdfghiklmnoqrtuvwxyz"  # spectroscopic letters (j skipped by convention)
_SERIES = {1: "Lyman", 2: "Balmer", 3: "Paschen", 4: "Brackett", 5: "Pfund", 6: "Humphreys"}
_GREEK = "αβγδεζηθ"


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


def _check_n(n: int, what: str) -> int:
    if isinstance(n, bool) or int(n) != n or n < 1:
        raise ValueRangeError(f"{what} must be a positive integer, got {n!r}", "give n ≥ 1")
    return int(n)


def _check_pair(n_lower: int, n_upper: int) -> tuple[int, int]:
    n_l = _check_n(n_lower, "n_lower")
    n_u = _check_n(n_upper, "n_upper")
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
    n_l, n_u = _check_pair(n_lower, n_upper)
    sp = get_species(species)
    sigma_per_m = rydberg_constant_per_m(sp) * sp.Z**2 * (1.0 / n_l**2 - 1.0 / n_u**2)
    return 1e9 / sigma_per_m


def series_limit_vac_nm(n_lower: int, species: str | HydrogenLikeSpecies = "H I") -> float:
    """Vacuum wavelength in nm of the series limit (n_upper → ∞), gross structure."""
    n_l = _check_n(n_lower, "n_lower")
    sp = get_species(species)
    return 1e9 * n_l**2 / (rydberg_constant_per_m(sp) * sp.Z**2)


def vacuum_to_air_or_none_nm(wavelength_vac_nm: float) -> float | None:
    """IAU air wavelength, or ``None`` outside 200 nm – 2 µm (vacuum) by convention."""
    if not MIN_NM <= wavelength_vac_nm <= MAX_NM:
        return None
    return float(vacuum_to_air_nm(wavelength_vac_nm)[()])


# --------------------------------------------------------------------------- Dirac levels


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
    n = _check_n(n, "n")
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


# ----------------------------------------------------------------- radial matrix elements


def _radial_poly(n: int, ell: int) -> tuple[Fraction, list[Fraction]]:
    """Return (N², coefficients c_i of r^(l+i)) for R_nl = N e^(−r/n) Σ c_i r^(l+i), Z = 1."""
    k = n - ell - 1
    alpha = 2 * ell + 1
    two_over_n = Fraction(2, n)
    coeffs = [
        Fraction((-1) ** i * math.comb(k + alpha, k - i), math.factorial(i))
        * two_over_n ** (ell + i)
        for i in range(k + 1)
    ]
    norm2 = two_over_n**3 * Fraction(math.factorial(k), 2 * n * math.factorial(n + ell))
    return norm2, coeffs


@lru_cache(maxsize=4096)
def _radial_integral_squared(n1: int, l1: int, n2: int, l2: int) -> Fraction:
    norm1, c1 = _radial_poly(n1, l1)
    norm2, c2 = _radial_poly(n2, l2)
    a = Fraction(n1 + n2, n1 * n2)  # e^{-r/n1} e^{-r/n2} = e^{-a r}
    total = Fraction(0)
    for i, ci in enumerate(c1):
        for k, ck in enumerate(c2):
            p = 3 + l1 + i + l2 + k  # r² dr measure times r times r^(l1+i) r^(l2+k)
            total += ci * ck * Fraction(math.factorial(p)) / a ** (p + 1)
    return norm1 * norm2 * total * total


def radial_integral_au(n1: int, l1: int, n2: int, l2: int) -> float:
    """Radial dipole integral |∫ R_n1l1 R_n2l2 r³ dr| for hydrogen (Z = 1, infinite mass).

    Evaluated exactly in rational arithmetic from the closed-form Laguerre
    radial functions (Bethe & Salpeter 1957, eq. 3.17), then rounded once to
    float. For charge Z and reduced mass μ multiply by a₀ m_e/(μ Z).

    Parameters
    ----------
    n1, l1, n2, l2 : int
        Quantum numbers of the two states (0 ≤ l < n).

    Returns
    -------
    float
        The integral in Bohr radii (absolute value).
    """
    for n, ell in ((n1, l1), (n2, l2)):
        _check_n(n, "n")
        if not 0 <= ell < n:
            raise ValueRangeError(f"l={ell} is not in 0..{n - 1} for n={n}", "give 0 ≤ l < n")
    return math.sqrt(float(_radial_integral_squared(int(n1), int(l1), int(n2), int(l2))))


def wigner_6j(j1: float, j2: float, j3: float, j4: float, j5: float, j6: float) -> float:
    """Wigner 6j symbol {j1 j2 j3; j4 j5 j6} by Racah's formula.

    Arguments are integers or half-integers. Returns 0 when a triangle
    condition fails.
    """
    t2 = [round(2 * x) for x in (j1, j2, j3, j4, j5, j6)]
    a, b, c, d, e, f = t2
    triads = ((a, b, c), (a, e, f), (d, b, f), (d, e, c))
    for x, y, z in triads:
        if (x + y + z) % 2 or x + y < z or x + z < y or y + z < x:
            return 0.0

    def delta(x: int, y: int, z: int) -> float:
        num = (
            math.factorial((x + y - z) // 2)
            * math.factorial((x - y + z) // 2)
            * math.factorial((-x + y + z) // 2)
        )
        return math.sqrt(Fraction(num, math.factorial((x + y + z) // 2 + 1)))

    pref = 1.0
    for x, y, z in triads:
        pref *= delta(x, y, z)
    sums = [(x + y + z) // 2 for x, y, z in triads]
    tops = [(a + b + d + e) // 2, (b + c + e + f) // 2, (c + a + f + d) // 2]
    total = Fraction(0)
    for t in range(max(sums), min(tops) + 1):
        den = 1
        for s in sums:
            den *= math.factorial(t - s)
        for top in tops:
            den *= math.factorial(top - t)
        total += Fraction((-1) ** t * math.factorial(t + 1), den)
    return pref * float(total)


def _fs_fraction(l_u: int, j_u: float, l_l: int, j_l: float) -> float:
    """Share of the LS multiplet line strength in component (L J → L' J'), S = 1/2."""
    six = wigner_6j(l_u, j_u, 0.5, j_l, l_l, 1)
    return (2 * j_u + 1) * (2 * j_l + 1) * six * six / 2.0


def _rate_prefactor(omega_per_s: float, sp: HydrogenLikeSpecies) -> float:
    """ω³ e² a² / (3π ε₀ ħ c³) with a = a₀ m_e/(μ Z): A = this · S_au / g_upper."""
    a_m = sc.physical_constants["Bohr radius"][0] * sc.m_e / (sp.reduced_mass_kg * sp.Z)
    return omega_per_s**3 * sc.e**2 * a_m**2 / (3.0 * math.pi * sc.epsilon_0 * sc.hbar * sc.c**3)


def _gross_omega(n_u: int, n_l: int, sp: HydrogenLikeSpecies) -> float:
    return 2.0 * math.pi * sc.c * 1e9 / rydberg_wavelength_vac_nm(n_l, n_u, sp)


def einstein_A_nl_per_s(
    n_upper: int,
    l_upper: int,
    n_lower: int,
    l_lower: int,
    species: str | HydrogenLikeSpecies = "H I",
) -> float:
    """Nonrelativistic E1 rate A(n l → n' l') in s⁻¹, at the gross (Rydberg) frequency.

    A = ω³ e² max(l, l') |⟨r⟩|² / (3π ε₀ ħ c³ (2l+1)), the radial integral
    scaled by a₀ m_e/(μZ) (so A ∝ Z⁴ μ). Returns 0 unless |Δl| = 1.

    Parameters
    ----------
    n_upper, l_upper, n_lower, l_lower : int
        Quantum numbers, ``n_upper > n_lower``.
    species : str or HydrogenLikeSpecies
        The one-electron species.

    Returns
    -------
    float
        The rate, summed over final magnetic sub-levels and spin-averaged.
    """
    n_l, n_u = _check_pair(n_lower, n_upper)
    sp = get_species(species)
    if abs(l_upper - l_lower) != 1:
        return 0.0
    r2 = radial_integral_au(n_u, l_upper, n_l, l_lower) ** 2
    s_orbital = max(l_upper, l_lower) * r2
    return _rate_prefactor(_gross_omega(n_u, n_l, sp), sp) * s_orbital / (2 * l_upper + 1)


def gross_einstein_A_per_s(
    n_upper: int, n_lower: int, species: str | HydrogenLikeSpecies = "H I"
) -> float:
    """Total rate between gross levels, A(n→n') = Σ_l (2l+1) Σ_l' A(nl→n'l') / n².

    This is the statistically averaged value quoted for an unresolved
    multiplet (g_upper = 2n², g_lower = 2n'²).
    """
    n_l, n_u = _check_pair(n_lower, n_upper)
    total = 0.0
    for l_u in range(n_u):
        for l_l in (l_u - 1, l_u + 1):
            if 0 <= l_l < n_l:
                total += (2 * l_u + 1) * einstein_A_nl_per_s(n_u, l_u, n_l, l_l, species)
    return total / n_u**2


# ------------------------------------------------------------- fine-structure components


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
    n_l, n_u = _check_pair(n_lower, n_upper)
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
                    s_comp = s_mult * _fs_fraction(l_u, j_u, l_l, j_l)
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
                            A_ki_per_s=_rate_prefactor(omega, sp) * s_comp / g_u,
                            line_strength_au=s_comp,
                        )
                    )
    return out


def gf_from_A(g_upper: float, A_ki_per_s: float, wavelength_vac_nm: float) -> float:
    """Weighted oscillator strength g_l f_lu = g_u A λ² ε₀ m_e c / (2π e²).

    Numerically gf = g_u A λ[Å]² / 6.6702e15; the factor is computed from
    CODATA constants here rather than typed in.
    """
    lam_m = wavelength_vac_nm * 1e-9
    return g_upper * A_ki_per_s * lam_m**2 * sc.epsilon_0 * sc.m_e * sc.c / (2 * math.pi * sc.e**2)


# ----------------------------------------------------------------------------- tables


def _check_table_args(
    species: tuple[str | HydrogenLikeSpecies, ...],
    n_upper_max: int,
    n_lower_max: int,
    wavelength_vac_range_nm: tuple[float, float],
) -> tuple[list[HydrogenLikeSpecies], int, int, float, float]:
    sps = [get_species(s) for s in species]
    if not sps:
        raise ValueRangeError("no species given", "pass e.g. species=('H I',)")
    n_lower_max = _check_n(n_lower_max, "n_lower_max")
    n_upper_max = _check_n(n_upper_max, "n_upper_max")
    if n_upper_max <= n_lower_max:
        raise ValueRangeError(
            f"n_upper_max={n_upper_max} is not above n_lower_max={n_lower_max}",
            "give n_upper_max > n_lower_max",
        )
    if n_upper_max > 40:
        raise ValueRangeError(
            f"n_upper_max={n_upper_max} is above 40, where exact rational rates get slow "
            "and the lines crowd into the series limit",
            "use n_upper_max ≤ 40",
        )
    try:
        lo, hi = (float(v) for v in wavelength_vac_range_nm)
    except (TypeError, ValueError) as exc:
        raise ValueRangeError(
            f"wavelength_vac_range_nm={wavelength_vac_range_nm!r} is not a pair of numbers",
            "give (lowest_nm, highest_nm)",
        ) from exc
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise ValueRangeError(
            f"wavelength_vac_range_nm=({lo}, {hi}) is not an increasing positive range",
            "give (lowest_nm, highest_nm) with 0 < lowest < highest",
        )
    return sps, n_upper_max, n_lower_max, lo, hi


def _line_name(sp: HydrogenLikeSpecies, n_l: int, n_u: int) -> str:
    dn = n_u - n_l
    greek = _GREEK[dn - 1] if dn <= len(_GREEK) else f"n={n_u}"
    return f"{series_name(n_l)} {greek} (n={n_u}→{n_l})"


def hydrogen_like_line_table(
    species: tuple[str | HydrogenLikeSpecies, ...] = ("H I", "D I", "He II"),
    n_upper_max: int = 12,
    n_lower_max: int = 5,
    wavelength_vac_range_nm: tuple[float, float] = (90.0, 2000.0),
    set_id: str = "hydrogen_like",
) -> pl.DataFrame:
    """Fine-structure components of hydrogen-like lines as a canonical reference table.

    Parameters
    ----------
    species : tuple of str or HydrogenLikeSpecies
        Species labels (see :data:`SPECIES`).
    n_upper_max : int
        Highest upper principal quantum number.
    n_lower_max : int
        Highest lower principal quantum number (1 = Lyman, 2 = Balmer, ...).
    wavelength_vac_range_nm : (float, float)
        Keep components whose vacuum wavelength lies in this closed range.
    set_id : str
        Prefix of ``line_id``.

    Returns
    -------
    polars.DataFrame
        One row per component with the canonical reference columns
        (``line_id`` … ``notes``), sorted by ``wavelength_vac_nm``, then
        element, ion and ``line_id``. ``line_id`` is
        ``"<set_id>:<element>:<ion>:<λ>"`` with λ the air wavelength (vacuum
        where no air value exists) to 5 decimals; components that share that
        text (levels degenerate in Dirac theory, e.g. 3s½→2p½ and 3p½→2s½)
        get ``":<3s1/2-2p1/2>"`` appended so every id is unique.
    """
    sps, n_upper_max, n_lower_max, lo, hi = _check_table_args(
        species, n_upper_max, n_lower_max, wavelength_vac_range_nm
    )
    rows: list[dict[str, object]] = []
    for sp in sps:
        for n_l in range(1, n_lower_max + 1):
            for n_u in range(n_l + 1, n_upper_max + 1):
                for comp in fine_structure_components(n_u, n_l, sp):
                    if not lo <= comp.wavelength_vac_nm <= hi:
                        continue
                    notes = [_line_name(sp, n_l, n_u), "Dirac fine-structure component"]
                    if sp.note:
                        notes.append(sp.note)
                    if comp.wavelength_air_nm is None:
                        notes.append("vacuum wavelength only (outside 200-2000 nm)")
                    shown = comp.wavelength_air_nm or comp.wavelength_vac_nm
                    rows.append(
                        {
                            "_base_id": f"{set_id}:{sp.element}:{sp.ion}:{shown:.5f}",
                            "_short": comp.short_label,
                            "element": sp.element,
                            "ion": sp.ion,
                            "wavelength_air_nm": comp.wavelength_air_nm,
                            "wavelength_vac_nm": comp.wavelength_vac_nm,
                            "energy_eV": comp.energy_eV,
                            "transition": comp.transition,
                            "siegbahn": None,
                            "initial_level": None,
                            "A_ki_per_s": comp.A_ki_per_s,
                            "A_ki_origin": A_KI_ORIGIN,
                            "E_lower_eV": comp.E_lower_eV,
                            "E_upper_eV": comp.E_upper_eV,
                            "g_lower": float(comp.g_lower),
                            "g_upper": float(comp.g_upper),
                            "log_gf": math.log10(
                                gf_from_A(comp.g_upper, comp.A_ki_per_s, comp.wavelength_vac_nm)
                            ),
                            "rel_intensity": None,
                            "accuracy": "theory; Lamb (QED) shift neglected",
                            "source_id": SOURCE_ID,
                            "n_sources": 1,
                            "alt_sources": None,
                            "wavelength_spread_nm": None,
                            "log_A_spread_dex": None,
                            "notes": "; ".join(notes),
                        }
                    )
    counts: dict[str, int] = {}
    for r in rows:
        counts[r["_base_id"]] = counts.get(r["_base_id"], 0) + 1  # type: ignore[index]
    for r in rows:
        base = r.pop("_base_id")
        short = r.pop("_short")
        r["line_id"] = base if counts[base] == 1 else f"{base}:{short}"  # type: ignore[index]
    schema = {
        "line_id": pl.Utf8,
        "element": pl.Utf8,
        "ion": pl.Int32,
        "wavelength_air_nm": pl.Float64,
        "wavelength_vac_nm": pl.Float64,
        "energy_eV": pl.Float64,
        "transition": pl.Utf8,
        "siegbahn": pl.Utf8,
        "initial_level": pl.Utf8,
        "A_ki_per_s": pl.Float64,
        "A_ki_origin": pl.Utf8,
        "E_lower_eV": pl.Float64,
        "E_upper_eV": pl.Float64,
        "g_lower": pl.Float64,
        "g_upper": pl.Float64,
        "log_gf": pl.Float64,
        "rel_intensity": pl.Float64,
        "accuracy": pl.Utf8,
        "source_id": pl.Utf8,
        "n_sources": pl.Int32,
        "alt_sources": pl.Utf8,
        "wavelength_spread_nm": pl.Float64,
        "log_A_spread_dex": pl.Float64,
        "notes": pl.Utf8,
    }
    table = pl.DataFrame(rows, schema=schema, orient="row") if rows else pl.DataFrame(schema=schema)
    return table.sort(["wavelength_vac_nm", "element", "ion", "line_id"])


def hydrogen_like_blends(
    species: tuple[str | HydrogenLikeSpecies, ...] = ("H I", "D I", "He II"),
    n_upper_max: int = 12,
    n_lower_max: int = 5,
    wavelength_vac_range_nm: tuple[float, float] = (90.0, 2000.0),
) -> pl.DataFrame:
    """Gross lines n_upper → n_lower as intensity-weighted blends of their components.

    The blend wavelength is the mean of the component vacuum wavelengths
    weighted by g_k A_ki (optically thin emission with the fine-structure
    sub-levels populated in proportion to their weights, which holds when the
    splitting ≪ kT). The air value is converted from that mean.

    Parameters
    ----------
    species, n_upper_max, n_lower_max, wavelength_vac_range_nm
        As for :func:`hydrogen_like_line_table`; the range applies to the blend.

    Returns
    -------
    polars.DataFrame
        Columns ``species``, ``element``, ``ion``, ``series``, ``n_lower``,
        ``n_upper``, ``wavelength_vac_nm``, ``wavelength_air_nm`` (null outside
        200–2000 nm), ``wavelength_gross_vac_nm`` (Rydberg), ``energy_eV``,
        ``A_ki_per_s`` (gross, statistically averaged), ``g_lower`` (2n_l²),
        ``g_upper`` (2n_u²), ``E_lower_eV``, ``E_upper_eV`` (g-weighted Dirac
        level means above the ground level), ``n_components`` and ``notes``;
        sorted by ``wavelength_vac_nm``.
    """
    sps, n_upper_max, n_lower_max, lo, hi = _check_table_args(
        species, n_upper_max, n_lower_max, wavelength_vac_range_nm
    )
    rows: list[dict[str, object]] = []
    for sp in sps:
        for n_l in range(1, n_lower_max + 1):
            for n_u in range(n_l + 1, n_upper_max + 1):
                comps = fine_structure_components(n_u, n_l, sp)
                w = np.array([c.g_upper * c.A_ki_per_s for c in comps])
                lam = np.array([c.wavelength_vac_nm for c in comps])
                lam_blend = float(np.sum(w * lam) / np.sum(w))
                if not lo <= lam_blend <= hi:
                    continue
                notes = [_line_name(sp, n_l, n_u), "g·A-weighted blend of Dirac components"]
                if sp.note:
                    notes.append(sp.note)
                rows.append(
                    {
                        "species": sp.label,
                        "element": sp.element,
                        "ion": sp.ion,
                        "series": series_name(n_l),
                        "n_lower": n_l,
                        "n_upper": n_u,
                        "wavelength_vac_nm": lam_blend,
                        "wavelength_air_nm": vacuum_to_air_or_none_nm(lam_blend),
                        "wavelength_gross_vac_nm": rydberg_wavelength_vac_nm(n_l, n_u, sp),
                        "energy_eV": HC_EV_NM / lam_blend,
                        "A_ki_per_s": gross_einstein_A_per_s(n_u, n_l, sp),
                        "g_lower": float(2 * n_l**2),
                        "g_upper": float(2 * n_u**2),
                        "E_lower_eV": _mean_level_energy(n_l, sp),
                        "E_upper_eV": _mean_level_energy(n_u, sp),
                        "n_components": len(comps),
                        "notes": "; ".join(notes),
                    }
                )
    schema = {
        "species": pl.Utf8,
        "element": pl.Utf8,
        "ion": pl.Int32,
        "series": pl.Utf8,
        "n_lower": pl.Int32,
        "n_upper": pl.Int32,
        "wavelength_vac_nm": pl.Float64,
        "wavelength_air_nm": pl.Float64,
        "wavelength_gross_vac_nm": pl.Float64,
        "energy_eV": pl.Float64,
        "A_ki_per_s": pl.Float64,
        "g_lower": pl.Float64,
        "g_upper": pl.Float64,
        "E_lower_eV": pl.Float64,
        "E_upper_eV": pl.Float64,
        "n_components": pl.Int32,
        "notes": pl.Utf8,
    }
    table = pl.DataFrame(rows, schema=schema, orient="row") if rows else pl.DataFrame(schema=schema)
    return table.sort(["wavelength_vac_nm", "element", "ion"])


def _mean_level_energy(n: int, sp: HydrogenLikeSpecies) -> float:
    """g-weighted mean energy of the gross level n over its (l, j) sub-levels."""
    total = 0.0
    for ell in range(n):
        for j in (ell - 0.5, ell + 0.5):
            if j > 0:
                total += (2 * j + 1) * level_energy_eV(n, j, sp)
    return total / (2 * n * n)
