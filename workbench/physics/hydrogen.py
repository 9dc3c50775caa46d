"""Hydrogen-like line tables: series of fine-structure components and their blends.

A hydrogen-like species is one electron bound to a nucleus of charge ``Z`` and
mass ``M``. Three levels of description are offered, one module each:

:mod:`~workbench.physics.rydberg`
    The species and their gross structure, 1/λ_vac = R_M Z² (1/n_l² − 1/n_u²).
:mod:`~workbench.physics.dirac`
    Dirac level energies E(n, j) with reduced-mass corrections (Lamb shift
    neglected) and every E1 fine-structure component of a line.
:mod:`~workbench.physics.e1rates`
    Exact nonrelativistic E1 rates from rational radial matrix elements, and
    the LS fractions that share a multiplet's strength among its components.

This module builds the tables from them: :func:`hydrogen_like_line_table`
(one row per component, the shipped ``hydrogen_like`` reference set) and
:func:`hydrogen_like_blends` (components of one n → n' line blended). It also
re-exports the names above, which callers import from here.

All constants come from :mod:`scipy.constants` (CODATA). Energies are in eV,
wavelengths in nm; air wavelengths use :func:`workbench.physics.airvac.vacuum_to_air_nm`
(IAU) and are ``None``/null outside 200 nm – 2 µm (vacuum), where by convention
only vacuum wavelengths are quoted.
"""

from __future__ import annotations

import math

import numpy as np
import polars as pl

from workbench.errors import ValueRangeError
from workbench.physics.dirac import (
    FineStructureComponent,
    dirac_binding_energy_eV,
    fine_structure_components,
    level_energy_eV,
)
from workbench.physics.e1rates import (
    einstein_A_nl_per_s,
    gf_from_A,
    gross_einstein_A_per_s,
    radial_integral_au,
    wigner_6j,
)
from workbench.physics.rydberg import (
    SPECIES,
    HydrogenLikeSpecies,
    check_n,
    get_species,
    rydberg_constant_per_m,
    rydberg_wavelength_vac_nm,
    series_limit_vac_nm,
    series_name,
    vacuum_to_air_or_none_nm,
)
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

_GREEK = "αβγδεζηθ"


def _check_table_args(
    species: tuple[str | HydrogenLikeSpecies, ...],
    n_upper_max: int,
    n_lower_max: int,
    wavelength_vac_range_nm: tuple[float, float],
) -> tuple[list[HydrogenLikeSpecies], int, int, float, float]:
    sps = [get_species(s) for s in species]
    if not sps:
        raise ValueRangeError("no species given", "pass e.g. species=('H I',)")
    n_lower_max = check_n(n_lower_max, "n_lower_max")
    n_upper_max = check_n(n_upper_max, "n_upper_max")
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
