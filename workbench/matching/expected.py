"""Expected relative strengths of reference lines at a plasma temperature.

Emission (optically thin plasma near LTE, Boltzmann distribution)::

    I_ki ∝ g_k · A_ki / λ · exp(−E_k / kT)

Absorption (weak-line limit of the curve of growth; equivalent width)::

    W ∝ g_i f_ik · λ² · exp(−E_i / kT)

with gA derived from log gf where only that is given
(g_k A_ki = 6.6702e15 · gf / λ_Å², the standard oscillator-strength relation).
Where a line has no atomic data, the source's own relative intensity is used,
on its own scale per species. X-ray lines use the Elam relative intensities
within their initial level, weighted per sub-shell (see
:mod:`workbench.matching.reference`).

Strengths are normalised per species so that the strongest line *inside the
observed range* has 1. Lines with no way to estimate strength get NaN: they
can still match, but they neither count towards the found fraction nor can
they be "missing".
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

from workbench.matching.reference import ReferenceIndex

__all__ = ["GF_TO_GA", "atomic_log_strength", "expected_strengths", "strength_method"]

#: g_k·A_ki = GF_TO_GA · gf / λ[Å]² (s⁻¹): 8π²e²/(m_e c) in Gaussian units, i.e. 6.6702e15.
GF_TO_GA: float = 8 * np.pi**2 * sc.e**2 / (4 * np.pi * sc.epsilon_0 * sc.m_e * sc.c) * 1e20

_K_B_EV = sc.k / sc.e  # Boltzmann constant in eV/K


def _group_max(values: np.ndarray, groups: np.ndarray, n_groups: int) -> np.ndarray:
    out = np.full(n_groups, -np.inf)
    finite = np.isfinite(values)
    np.maximum.at(out, groups[finite], values[finite])
    return out


def strength_method(index: ReferenceIndex) -> np.ndarray:
    """Per line, how its strength is estimated: "atomic", "source" or "none"."""
    lam = index.wavelength_vac_nm
    has_gA = np.isfinite(index.g_upper) & np.isfinite(index.A_ki_per_s)
    has_gf = np.isfinite(index.log_gf)
    has_energy = np.isfinite(index.E_upper_eV) | np.isfinite(index.E_lower_eV)
    atomic = (has_gA | has_gf) & has_energy & np.isfinite(lam)
    source = ~atomic & np.isfinite(index.rel_intensity) & (index.rel_intensity > 0)
    return np.where(atomic, "atomic", np.where(source, "source", "none"))


#: Temperature-independent terms of :func:`atomic_log_strength` per index
#: (the index is held, so its id is not reused while the entry lives).
_ATOMIC_TERMS: dict[int, tuple[ReferenceIndex, dict[str, np.ndarray]]] = {}


def _atomic_terms(index: ReferenceIndex) -> dict[str, np.ndarray]:
    """ln(gA), ln(gf), ln(λ), E_upper, E_lower and the "atomic" mask, once per index."""
    hit = _ATOMIC_TERMS.get(id(index))
    if hit is not None and hit[0] is index:
        return hit[1]
    lam_nm = index.wavelength_vac_nm
    lam_A = lam_nm * 10.0
    with np.errstate(divide="ignore", invalid="ignore"):
        gA = np.where(
            np.isfinite(index.g_upper) & np.isfinite(index.A_ki_per_s),
            index.g_upper * index.A_ki_per_s,
            GF_TO_GA * 10.0**index.log_gf / lam_A**2,
        )
        gf = np.where(np.isfinite(index.log_gf), 10.0**index.log_gf, gA * lam_A**2 / GF_TO_GA)
        photon_eV = sc.h * sc.c / sc.e / (lam_nm * 1e-9)
        terms = {
            "log_gA": np.log(gA),
            "log_gf": np.log(gf),
            "log_lam": np.log(lam_nm),
            "E_up": np.where(
                np.isfinite(index.E_upper_eV), index.E_upper_eV, index.E_lower_eV + photon_eV
            ),
            "E_lo": np.where(
                np.isfinite(index.E_lower_eV), index.E_lower_eV, index.E_upper_eV - photon_eV
            ),
            "atomic": strength_method(index) == "atomic",
        }
    for v in terms.values():
        v.flags.writeable = False
    if len(_ATOMIC_TERMS) >= 16:
        _ATOMIC_TERMS.pop(next(iter(_ATOMIC_TERMS)))
    _ATOMIC_TERMS[id(index)] = (index, terms)
    return terms


def atomic_log_strength(index: ReferenceIndex, temperature_K: float, mode: str) -> np.ndarray:
    """Natural log of the (unnormalised) strength from atomic data; NaN without it.

    Emission: ln(gA/λ) − E_k/kT; absorption: ln(gf·λ²) − E_i/kT (weak-line limit).
    The temperature-independent terms are worked out once per index.
    """
    kT = _K_B_EV * float(temperature_K)
    t = _atomic_terms(index)
    with np.errstate(divide="ignore", invalid="ignore"):
        if mode == "absorption":
            log_s = t["log_gf"] + 2 * t["log_lam"] - t["E_lo"] / kT
        else:
            log_s = t["log_gA"] - t["log_lam"] - t["E_up"] / kT
    return np.where(t["atomic"], log_s, np.nan)


def expected_strengths(
    index: ReferenceIndex,
    temperature_K: float,
    mode: str = "emission",
    in_range: np.ndarray | None = None,
) -> np.ndarray:
    """Relative expected strength of every reference line, normalised per species.

    Parameters
    ----------
    index : ReferenceIndex
        Reference lines.
    temperature_K : float
        Excitation temperature.
    mode : {"emission", "absorption"}
        Emission uses E_upper and gA/λ; absorption uses E_lower and gf·λ².
    in_range : numpy.ndarray of bool, optional
        Lines inside the observed range; normalisation uses only these.

    Returns
    -------
    numpy.ndarray
        Strength in (0, 1] per line (1 = strongest line of its species in
        range), NaN where it cannot be estimated.
    """
    n = index.n_lines
    if in_range is None:
        in_range = np.ones(n, dtype=bool)
    log_s = atomic_log_strength(index, temperature_K, mode)
    method = strength_method(index)
    log_s = np.where(method == "atomic", log_s, np.nan)
    if index.axis == "energy":
        # X-ray: the source's relative intensity within the initial level,
        # weighted per sub-shell; there is no Boltzmann factor.
        with np.errstate(divide="ignore", invalid="ignore"):
            log_s = np.log(index.rel_intensity * index.subshell_weight)
        method = np.where(np.isfinite(log_s), "source", "none")
    log_src = np.where(
        method == "source",
        np.log(np.where(index.rel_intensity > 0, index.rel_intensity, np.nan)),
        np.nan,
    )
    if index.axis == "energy":
        log_src = log_s
        log_s = np.full(n, np.nan)
    # Normalise each scale per species over lines in range.
    out = np.full(n, np.nan)
    for values, use in ((log_s, method == "atomic"), (log_src, method == "source")):
        v = np.where(use & in_range, values, np.nan)
        gmax = _group_max(v, index.species, index.n_species)
        with np.errstate(invalid="ignore", over="ignore"):
            scaled = np.exp(values - gmax[index.species])
        out = np.where(use & np.isfinite(scaled), scaled, out)
    # A species whose lines have atomic data for some and only source
    # intensities for others keeps the source-scaled lines on their own
    # scale; both are "relative to the strongest of its kind".
    return out
