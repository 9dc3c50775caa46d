"""Blending hyperfine and isotope components into one line per transition.

Some line lists give one transition as several rows: the Gaia-ESO list splits
Ba II 493.41 nm into eleven hyperfine and isotope components, Morton (2003)
gives Mg I 285.21 nm for the natural mixture *and* for ²⁴Mg, ²⁵Mg and ²⁶Mg.
A spectrometer below R ≈ 50 000 sees one line there, and counting the rows as
separate lines inflates the evidence. The reference build therefore blends
them into one row per transition and keeps the components in a separate
table (``optical_components``, keyed by the blended line's ``line_id``) for
high-resolution work.

Which rows are components of one transition
-------------------------------------------
Within **one source**, rows are components of one transition when

* element, ion and the source's level description agree (a *transition key*
  given by the build: lower-level energy, upper-level statistical weight and,
  for the Gaia-ESO list, the damping constants and level labels, which all
  components of one transition share), and
* their vacuum wavelengths form a chain with neighbouring gaps of at most
  :data:`BLEND_GAP_NM` (0.01 nm: hyperfine gaps in the Gaia-ESO list reach
  0.008 nm, e.g. Mn I 874.07 nm), or :data:`ISOTOPE_GAP_NM` (0.02 nm) where
  either neighbour is isotope-tagged (the largest optical isotope shift in the
  sets is ⁶Li–⁷Li at 670.8 nm, 0.016 nm).

Isotope-tagged rows are always components (a lone tagged row is a one-
component blend), so that no line with the gf of a pure isotope remains.

How the blended line is formed
------------------------------
Each component ``c`` gets the weight ``w_c = x_c · gf_c``, where ``x_c`` is the
natural isotopic abundance fraction of its isotope (1 for rows of the natural
element) and ``gf_c = 10**log_gf`` (or ``g_k A λ²/6.6702e15`` with λ in Å when
the source gives only A). The abundance factor is needed because the sources
give each isotope's components with the gf of the *pure* isotope (in the
Gaia-ESO list every Ba isotope's components add up to log gf = −0.157, the
value of the whole line). Then

* **summed**: ``gf = Σ w_c`` (so ``log_gf = log10 Σ x_c gf_c``), ``g_k A`` (so
  ``A = Σ x_c g_k,c A_c / g_k``; for a source whose A values are derived from
  log gf the blend's A is derived in the same way from the summed gf), and
  ``rel_intensity = Σ x_c I_c`` when every component has one;
* **weighted by w_c**: the vacuum wavelength (``Σ w λ / Σ w``, the intensity
  weighted position: at one upper level in emission, or one lower level in
  absorption, the component strengths scale as gf to 1 part in 10⁴ across a
  0.02 nm group), ``E_lower_eV`` and ``E_upper_eV``;
* **shared**: ``g_upper`` (part of the key), ``g_lower``, ``transition``,
  ``accuracy`` and the A origin, from the strongest component.

When a source lists the natural-mixture row *and* isotope rows of one
transition (Morton), the natural-mixture row is the line (its own values are
kept; several untagged rows are blended as above with ``x = 1``) and the
isotope rows are recorded as components that did not enter the sum
(``in_blend`` false).

In the components table ``kind`` is ``"isotope"`` (an isotope-tagged row),
``"natural"`` (an untagged row beside isotope rows), ``"hyperfine"`` (one
of several untagged rows: hyperfine components, or rarely one transition
listed twice at the same place) or ``"multiply classified"`` (one of the
transitions of one observed line, last section below); ``weight_gf`` is ``x · gf`` for the rows
that were summed and null for the others. When any summed component lacks both gf and A, the
position is the plain mean and gf and A are left null.

The air wavelength and photon energy of the blend are recomputed from its
vacuum wavelength by the build, as for every other row.

One observed line of several transitions (NIST's shared intensity)
-------------------------------------------------------------------
The NIST extract (``nist_rascal``) lists an unresolved multiplet, or a line
with several classifications, once per transition: every row carries the
line's observed wavelength and its observed intensity, flagged ``*``
("intensity shared by several lines", NIST ASD legend). He I 587.56 nm is
four rows of intensity 500, He I 447.15 nm five rows of 200. Summing them
made a lamp's 587.56 nm line four times its tabulated strength beside the
single-row He I 667.82 nm line (100), where a He lamp shows them comparable.
:func:`blend_shared_intensity` makes such rows (one element and ion, the
same vacuum wavelength and the same intensity, at least one row flagged
``*``) one line: the
intensity **once**, ``g_k A`` summed over the transitions (the emission of
the blend; ``A`` is that sum over the strongest transition's ``g_k``, null
when a row lacks ``A`` or ``g_k``), the other fields from the transition of
largest ``g_k A`` (the first when none is known). The transitions are kept
as components of kind ``"multiply classified"``.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Hashable, Mapping, Sequence
from typing import Any

import polars as pl

__all__ = [
    "A_CONST_S_PER_A2",
    "BLEND_GAP_NM",
    "COMPONENT_SCHEMA",
    "ISOTOPE_GAP_NM",
    "blend_group",
    "blend_shared_intensity",
    "group_components",
]

#: Largest gap between neighbouring components of one transition (nm).
BLEND_GAP_NM = 0.01
#: Largest gap where either neighbour is isotope-tagged (nm).
ISOTOPE_GAP_NM = 0.02
#: A_ki = A_CONST · gf / (g_k λ²) with λ in Å (e.g. Hilborn 1982, Am. J. Phys. 50, 982).
A_CONST_S_PER_A2 = 6.6702e15

#: Columns of the components table (``optical_components``), in order.
COMPONENT_SCHEMA: dict[str, pl.DataType] = {
    "blend_id": pl.String(),
    "component": pl.Int32(),
    "element": pl.String(),
    "ion": pl.Int32(),
    "kind": pl.String(),
    "isotope": pl.String(),
    "isotope_fraction": pl.Float64(),
    "wavelength_air_nm": pl.Float64(),
    "wavelength_vac_nm": pl.Float64(),
    "log_gf": pl.Float64(),
    "weight_gf": pl.Float64(),
    "in_blend": pl.Boolean(),
    "A_ki_per_s": pl.Float64(),
    "A_ki_origin": pl.String(),
    "E_lower_eV": pl.Float64(),
    "E_upper_eV": pl.Float64(),
    "g_lower": pl.Float64(),
    "g_upper": pl.Float64(),
    "source_id": pl.String(),
}


def group_components(
    rows: Sequence[dict[str, Any]], key: Callable[[dict[str, Any]], Hashable]
) -> list[list[dict[str, Any]]]:
    """Split one source's rows into groups that are components of one transition.

    Parameters
    ----------
    rows : sequence of dict
        Rows of one source with ``element``, ``ion``, ``wavelength_vac_nm`` and
        ``isotope`` (None for the natural element).
    key : callable
        The source's transition key of a row (must not include the isotope).

    Returns
    -------
    list of list of dict
        Groups in a deterministic order (by key order of first appearance, then
        wavelength); a row that is not a component forms a group of one.
    """
    buckets: dict[Hashable, list[dict[str, Any]]] = {}
    for r in rows:
        buckets.setdefault((r["element"], r["ion"], key(r)), []).append(r)
    groups: list[list[dict[str, Any]]] = []
    for bucket in buckets.values():
        bucket = sorted(bucket, key=lambda r: (r["wavelength_vac_nm"], r.get("isotope") or ""))
        current = [bucket[0]]
        for prev, r in itertools.pairwise(bucket):
            gap = r["wavelength_vac_nm"] - prev["wavelength_vac_nm"]
            limit = ISOTOPE_GAP_NM if (r.get("isotope") or prev.get("isotope")) else BLEND_GAP_NM
            if gap <= limit:
                current.append(r)
            else:
                groups.append(current)
                current = [r]
        groups.append(current)
    return groups


def _gf(r: Mapping[str, Any]) -> float | None:
    if r.get("log_gf") is not None:
        return 10.0 ** r["log_gf"]
    a, g = r.get("A_ki_per_s"), r.get("g_upper")
    if a is not None and g is not None:
        lam_A = r["wavelength_vac_nm"] * 10.0
        return g * a * lam_A * lam_A / A_CONST_S_PER_A2
    return None


def _gA(r: Mapping[str, Any], gf: float | None) -> float | None:
    if r.get("A_ki_per_s") is not None and r.get("g_upper") is not None:
        return r["g_upper"] * r["A_ki_per_s"]
    if gf is not None:
        lam_A = r["wavelength_vac_nm"] * 10.0
        return A_CONST_S_PER_A2 * gf / (lam_A * lam_A)
    return None


def _isotope_fraction(r: Mapping[str, Any], abundance: Mapping[str, float]) -> float:
    iso = r.get("isotope")
    if not iso:
        return 1.0
    if iso not in abundance:
        raise ValueError(f"no natural abundance for isotope {iso}")
    return abundance[iso]


def _component(
    r: Mapping[str, Any],
    *,
    kind: str,
    isotope_fraction: float | None,
    log_gf: float | None,
    weight_gf: float | None,
    in_blend: bool,
) -> dict[str, Any]:
    """One row of the components table from a source row (without the blend's keys)."""
    return {
        "element": r["element"],
        "ion": r["ion"],
        "kind": kind,
        "isotope": r.get("isotope"),
        "isotope_fraction": isotope_fraction,
        "wavelength_vac_nm": r["wavelength_vac_nm"],
        "log_gf": log_gf,
        "weight_gf": weight_gf,
        "in_blend": in_blend,
        "A_ki_per_s": r.get("A_ki_per_s"),
        "A_ki_origin": r.get("A_ki_origin"),
        "E_lower_eV": r.get("E_lower_eV"),
        "E_upper_eV": r.get("E_upper_eV"),
        "g_lower": r.get("g_lower"),
        "g_upper": r.get("g_upper"),
        "source_id": r["source_id"],
    }


def blend_group(
    group: Sequence[dict[str, Any]], abundance: Mapping[str, float]
) -> tuple[dict[str, Any], list[dict[str, Any]]]:
    """Blend one group of components into one line (rules in the module docstring).

    Parameters
    ----------
    group : sequence of dict
        Rows of one source and transition (from :func:`group_components`).
    abundance : mapping
        Natural abundance fraction (0-1) per isotope label (``"138Ba"``).

    Returns
    -------
    line : dict
        The blended row (a copy of the single row when the group is one
        untagged row), with ``n_components`` set.
    components : list of dict
        The component rows (:data:`COMPONENT_SCHEMA` fields except ``blend_id``,
        ``component`` and ``wavelength_air_nm``); empty for a single untagged row.
    """
    if len(group) == 1 and not group[0].get("isotope"):
        return {**group[0], "n_components": 1}, []
    natural = [r for r in group if not r.get("isotope")]
    summed = natural if natural else list(group)
    fractions = [_isotope_fraction(r, abundance) for r in group]
    gfs = [_gf(r) for r in group]
    in_sum = [(not natural) or (not r.get("isotope")) for r in group]
    has_iso = any(r.get("isotope") for r in group)
    comps = [
        _component(
            r,
            kind="isotope" if r.get("isotope") else ("natural" if has_iso else "hyperfine"),
            isotope_fraction=x if r.get("isotope") else None,
            log_gf=math.log10(gf) if gf is not None else None,
            weight_gf=x * gf if (gf is not None and used) else None,
            in_blend=used,
        )
        for r, x, gf, used in zip(group, fractions, gfs, in_sum, strict=True)
    ]
    if len(summed) == 1 and natural:
        line = {**summed[0]}
    else:
        line = _blend_values(summed, abundance)
    isotopes = sorted({r["isotope"] for r in group if r.get("isotope")})
    kinds = []
    if isotopes:
        kinds.append("isotopes " + ", ".join(isotopes) + " at natural abundance")
    if len(summed) > 1 and natural:
        kinds.append(f"{len(summed)} natural-element rows")
    elif not natural and len(group) > len(isotopes):
        kinds.append("hyperfine structure")
    note = f"blend of {len(group)} components ({'; '.join(kinds)}); see optical_components"
    if natural and isotopes:
        note += "; the source's natural-mixture values are kept, isotope rows not summed"
    old = line.get("notes")
    if old and "not merged" in old:  # the per-isotope note no longer applies
        old = None
    line["notes"] = f"{old}; {note}" if old else note
    line["isotope"] = None
    line["source_air_nm"] = None
    line["n_components"] = len(group)
    return line, comps


def _blend_values(summed: Sequence[dict[str, Any]], abundance: Mapping[str, float]) -> dict:
    xs = [_isotope_fraction(r, abundance) for r in summed]
    gfs = [_gf(r) for r in summed]
    strongest = max(
        range(len(summed)),
        key=lambda i: (xs[i] * gfs[i] if gfs[i] is not None else -1.0, -i),
    )
    line = {**summed[strongest]}
    lams = [r["wavelength_vac_nm"] for r in summed]
    if any(g is None for g in gfs):
        line["wavelength_vac_nm"] = sum(lams) / len(lams)
        for f in ("log_gf", "A_ki_per_s", "A_ki_origin", "rel_intensity"):
            line[f] = None
        for f in ("E_lower_eV", "E_upper_eV"):
            vals = [r.get(f) for r in summed]
            line[f] = sum(vals) / len(vals) if None not in vals else None
        return line
    w = [x * g for x, g in zip(xs, gfs, strict=True)]
    total = sum(w)
    lam = sum(wi * li for wi, li in zip(w, lams, strict=True)) / total
    line["wavelength_vac_nm"] = lam
    line["log_gf"] = math.log10(total)
    for f in ("E_lower_eV", "E_upper_eV"):
        vals = [r.get(f) for r in summed]
        line[f] = (
            sum(wi * v for wi, v in zip(w, vals, strict=True)) / total if None not in vals else None
        )
    g_up = line.get("g_upper")
    origins = {r.get("A_ki_origin") for r in summed}
    if g_up and origins == {"derived_from_log_gf"}:
        lam_A = lam * 10.0
        line["A_ki_per_s"] = A_CONST_S_PER_A2 * total / (g_up * lam_A * lam_A)
    elif g_up:
        gas = [_gA(r, g) for r, g in zip(summed, gfs, strict=True)]
        line["A_ki_per_s"] = sum(x * ga for x, ga in zip(xs, gas, strict=True) if ga) / g_up
        line["A_ki_origin"] = "summed_over_components"
    else:
        line["A_ki_per_s"] = None
        line["A_ki_origin"] = None
    rels = [r.get("rel_intensity") for r in summed]
    line["rel_intensity"] = (
        sum(x * v for x, v in zip(xs, rels, strict=True)) if None not in rels else None
    )
    return line


def blend_shared_intensity(
    group: Sequence[dict[str, Any]],
) -> tuple[dict[str, Any], list[dict[str, Any]]]:
    """One observed line from the rows of its transitions (module docstring, last section).

    Parameters
    ----------
    group : sequence of dict
        Rows of one source, element and ion at one vacuum wavelength, each
        carrying the line's shared observed intensity (``rel_intensity``,
        equal in every row or null in every row).

    Returns
    -------
    line : dict
        The line, with ``n_components`` set (a copy of the row for one row).
    components : list of dict
        The transitions as component rows (:data:`COMPONENT_SCHEMA` fields
        except ``blend_id``, ``component`` and ``wavelength_air_nm``); empty
        for one row.

    Raises
    ------
    ValueError
        If the rows are not one observed line (element, ion, wavelength or
        intensity differ).
    """
    first = group[0]
    for r in group[1:]:
        if (r["element"], r["ion"], r["wavelength_vac_nm"], r.get("rel_intensity")) != (
            first["element"],
            first["ion"],
            first["wavelength_vac_nm"],
            first.get("rel_intensity"),
        ):
            raise ValueError(
                "rows with a shared intensity must be one element and ion at one "
                f"wavelength with one intensity: {first['element']} {first['ion']} "
                f"{first['wavelength_vac_nm']} nm and {r['element']} {r['ion']} "
                f"{r['wavelength_vac_nm']} nm"
            )
    if len(group) == 1:
        return {**first, "n_components": 1}, []
    gas = [
        r["g_upper"] * r["A_ki_per_s"]
        if r.get("A_ki_per_s") is not None and r.get("g_upper") is not None
        else None
        for r in group
    ]
    strongest = max(range(len(group)), key=lambda i: (gas[i] if gas[i] is not None else -1.0, -i))
    line = {**group[strongest]}
    if None in gas:
        line["A_ki_per_s"] = None
        line["A_ki_origin"] = None
    else:
        line["A_ki_per_s"] = sum(gas) / line["g_upper"]
        line["A_ki_origin"] = "summed_over_components"
    if None not in gas and sum(gas) > 0:
        for f in ("E_lower_eV", "E_upper_eV"):
            vals = [r.get(f) for r in group]
            if None not in vals:
                line[f] = sum(g * v for g, v in zip(gas, vals, strict=True)) / sum(gas)
    comps = []
    for r in group:
        gf = _gf(r)
        comps.append(
            _component(
                r,
                kind="multiply classified",
                isotope_fraction=None,
                log_gf=math.log10(gf) if gf else None,
                weight_gf=gf,
                in_blend=True,
            )
        )
    note = (
        f"one observed line of {len(group)} transitions whose rows share its intensity "
        "(NIST flag '*'): the intensity counted once, g_k*A summed; see optical_components"
    )
    old = line.get("notes")
    line["notes"] = f"{old}; {note}" if old else note
    line["n_components"] = len(group)
    return line, comps
