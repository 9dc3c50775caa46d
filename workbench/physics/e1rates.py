"""Exact nonrelativistic E1 transition rates of hydrogen-like species.

l-resolved spontaneous rates from the exact nonrelativistic radial matrix
element ⟨n'l'|r|nl⟩, evaluated here in exact rational arithmetic from the
closed-form Laguerre radial functions (equivalent to Gordon's 1929
hypergeometric formula; Bethe & Salpeter 1957, § 63), with
A = ω³ e² S / (3π ε₀ ħ c³ g_upper) and the line strength
S = max(l, l') · |⟨r⟩|² · (2s+1) in units of (e·a_μ/Z)², a_μ = a₀ m_e/μ.
The multiplet line strength is split over the fine-structure components with
the standard LS fractions (2J+1)(2J'+1){L J S; J' L' 1}²/(2S+1)
(:func:`ls_fraction`, e.g. 2P3/2→2S1/2 : 2P1/2→2S1/2 = 2 : 1); the components
themselves are built in :mod:`~workbench.physics.dirac`.
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import lru_cache

from scipy import constants as sc

from workbench.errors import ValueRangeError
from workbench.physics.rydberg import (
    HydrogenLikeSpecies,
    check_n,
    check_pair,
    get_species,
    rydberg_wavelength_vac_nm,
)

__all__ = [
    "e1_rate_prefactor",
    "einstein_A_nl_per_s",
    "gf_from_A",
    "gross_einstein_A_per_s",
    "ls_fraction",
    "radial_integral_au",
    "wigner_6j",
]


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
        check_n(n, "n")
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


def ls_fraction(l_u: int, j_u: float, l_l: int, j_l: float) -> float:
    """Share of the LS multiplet line strength in component (L J → L' J'), S = 1/2."""
    six = wigner_6j(l_u, j_u, 0.5, j_l, l_l, 1)
    return (2 * j_u + 1) * (2 * j_l + 1) * six * six / 2.0


def e1_rate_prefactor(omega_per_s: float, sp: HydrogenLikeSpecies) -> float:
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
    n_l, n_u = check_pair(n_lower, n_upper)
    sp = get_species(species)
    if abs(l_upper - l_lower) != 1:
        return 0.0
    r2 = radial_integral_au(n_u, l_upper, n_l, l_lower) ** 2
    s_orbital = max(l_upper, l_lower) * r2
    return e1_rate_prefactor(_gross_omega(n_u, n_l, sp), sp) * s_orbital / (2 * l_upper + 1)


def gross_einstein_A_per_s(
    n_upper: int, n_lower: int, species: str | HydrogenLikeSpecies = "H I"
) -> float:
    """Total rate between gross levels, A(n→n') = Σ_l (2l+1) Σ_l' A(nl→n'l') / n².

    This is the statistically averaged value quoted for an unresolved
    multiplet (g_upper = 2n², g_lower = 2n'²).
    """
    n_l, n_u = check_pair(n_lower, n_upper)
    total = 0.0
    for l_u in range(n_u):
        for l_l in (l_u - 1, l_u + 1):
            if 0 <= l_l < n_l:
                total += (2 * l_u + 1) * einstein_A_nl_per_s(n_u, l_u, n_l, l_l, species)
    return total / n_u**2


def gf_from_A(g_upper: float, A_ki_per_s: float, wavelength_vac_nm: float) -> float:
    """Weighted oscillator strength g_l f_lu = g_u A λ² ε₀ m_e c / (2π e²).

    Numerically gf = g_u A λ[Å]² / 6.6702e15; the factor is computed from
    CODATA constants here rather than typed in.
    """
    lam_m = wavelength_vac_nm * 1e-9
    return g_upper * A_ki_per_s * lam_m**2 * sc.epsilon_0 * sc.m_e * sc.c / (2 * math.pi * sc.e**2)
