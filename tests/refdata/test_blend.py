"""Rules of workbench.refdata.blend on small hand-made groups (values derived by hand)."""

import math

import pytest

from workbench.refdata.blend import (
    A_CONST_S_PER_A2,
    BLEND_GAP_NM,
    ISOTOPE_GAP_NM,
    blend_group,
    blend_shared_intensity,
    group_components,
)

# Natural abundances used only as inputs here (any numbers summing to <= 1 would do).
ABUND = {"63Cu": 0.6915, "65Cu": 0.3085, "6Li": 0.0485, "7Li": 0.9515}


def _row(lam, log_gf=None, iso=None, src="ges2022", g_up=4.0, a=None, origin=None, e_low=1.0):
    gf = 10.0**log_gf if log_gf is not None else None
    if a is None and gf is not None and origin != "source":
        a = A_CONST_S_PER_A2 * gf / (g_up * (lam * 10) ** 2)
        origin = "derived_from_log_gf"
    return {
        "element": "Cu",
        "ion": 1,
        "wavelength_vac_nm": lam,
        "log_gf": log_gf,
        "isotope": iso,
        "source_id": src,
        "g_upper": g_up,
        "g_lower": None,
        "A_ki_per_s": a,
        "A_ki_origin": origin,
        "E_lower_eV": e_low,
        "E_upper_eV": e_low + 1239.84198 / lam,
        "rel_intensity": None,
        "transition": "3d9.4s2 2D - 3d10.4p 2P*",
        "accuracy": None,
        "notes": None,
        "_key": ("k",),
    }


@pytest.mark.parametrize(
    ("gap_nm", "isotope", "n_groups"),
    [
        (0.5 * BLEND_GAP_NM, None, 1),  # hyperfine neighbours: one transition
        (BLEND_GAP_NM, None, 1),  # the limit is inclusive
        (1.5 * BLEND_GAP_NM, None, 2),  # farther apart: two transitions
        (1.5 * BLEND_GAP_NM, "63Cu", 1),  # isotope shifts may be wider (6Li-7Li: 0.016 nm)
        (1.5 * ISOTOPE_GAP_NM, "63Cu", 2),
    ],
)
def test_group_components_gap_rule(gap_nm, isotope, n_groups):
    rows = [_row(500.0, -1.0, iso=isotope), _row(500.0 + gap_nm, -1.0, iso=isotope)]
    assert len(group_components(rows, key=lambda r: r["_key"])) == n_groups


def test_group_components_respects_the_key():
    # two rows 0.001 nm apart but from different lower levels are two transitions
    rows = [_row(500.0, -1.0), _row(500.001, -1.0)]
    rows[1]["_key"] = ("other",)
    assert len(group_components(rows, key=lambda r: r["_key"])) == 2


def test_chained_gaps_join_one_group():
    # single linkage: 0.008 + 0.008 nm gaps make one 0.016 nm wide group
    rows = [_row(500.0, -1.0), _row(500.008, -1.0), _row(500.016, -1.0)]
    assert [len(g) for g in group_components(rows, key=lambda r: r["_key"])] == [3]


def test_isotope_blend_sums_abundance_weighted_gf():
    # 63Cu: two hyperfine components (gf 0.02 and 0.01), 65Cu: one (gf 0.03);
    # expected values derived by hand from the rules in the module docstring
    group = [
        _row(510.690, math.log10(0.02), "63Cu"),
        _row(510.692, math.log10(0.01), "63Cu"),
        _row(510.688, math.log10(0.03), "65Cu"),
    ]
    line, comps = blend_group(group, ABUND)
    w = [0.6915 * 0.02, 0.6915 * 0.01, 0.3085 * 0.03]
    lam = [510.690, 510.692, 510.688]
    assert line["log_gf"] == pytest.approx(math.log10(sum(w)), abs=1e-12)
    assert line["wavelength_vac_nm"] == pytest.approx(
        sum(a * b for a, b in zip(w, lam, strict=True)) / sum(w), abs=1e-12
    )
    # Gaia-ESO-like A (derived from log gf): derived again from the summed gf
    assert line["A_ki_per_s"] == pytest.approx(
        A_CONST_S_PER_A2 * sum(w) / (4.0 * (line["wavelength_vac_nm"] * 10) ** 2), rel=1e-12
    )
    assert line["A_ki_origin"] == "derived_from_log_gf"
    assert line["n_components"] == 3 and line["isotope"] is None
    assert [c["weight_gf"] for c in comps] == pytest.approx(w, rel=1e-12)
    assert all(c["in_blend"] and c["kind"] == "isotope" for c in comps)
    assert "63Cu, 65Cu" in line["notes"]


def test_hyperfine_blend_with_source_a_values_sums_gA():
    # untagged components (x = 1) with A from the source: A = Σ g A / g_k
    group = [
        _row(400.000, None, a=1.0e7, origin="source", g_up=6.0),
        _row(400.004, None, a=3.0e7, origin="source", g_up=6.0),
    ]
    line, comps = blend_group(group, ABUND)
    assert line["A_ki_per_s"] == pytest.approx(4.0e7, rel=1e-12)  # (6·1e7 + 6·3e7)/6
    assert line["A_ki_origin"] == "summed_over_components"
    gf = [6.0 * a * (lam * 10) ** 2 / A_CONST_S_PER_A2 for a, lam in [(1e7, 400.0), (3e7, 400.004)]]
    assert line["log_gf"] == pytest.approx(math.log10(sum(gf)), abs=1e-12)
    assert {c["kind"] for c in comps} == {"hyperfine"}
    # E_lower is shared; E_upper is the gf-weighted mean
    assert line["E_lower_eV"] == pytest.approx(1.0, abs=1e-12)


def test_natural_row_beside_isotope_rows_is_kept():
    # Morton style: the natural-mixture row and isotope rows of one transition
    natural = _row(285.2963, 0.263, src="morton03", g_up=3.0)
    isotopes = [
        _row(285.2960 + 0.0002 * i, 0.0, iso, "morton03", 3.0)
        for i, iso in enumerate(["63Cu", "65Cu"])
    ]
    line, comps = blend_group([natural, *isotopes], ABUND)
    assert line["log_gf"] == 0.263 and line["wavelength_vac_nm"] == 285.2963
    assert line["n_components"] == 3
    assert [c["kind"] for c in comps] == ["natural", "isotope", "isotope"]
    assert comps[0]["in_blend"] is True
    assert [c["in_blend"] for c in comps if c["kind"] == "isotope"] == [False, False]
    assert all(c["weight_gf"] is None for c in comps if c["kind"] == "isotope")


def test_single_row_is_unchanged_and_has_no_components():
    r = _row(500.0, -1.0)
    line, comps = blend_group([r], ABUND)
    assert comps == [] and line["n_components"] == 1
    assert line["wavelength_vac_nm"] == 500.0 and line["log_gf"] == -1.0


def test_lone_minor_isotope_keeps_its_abundance_factor():
    # a line only 6Li gives: in the natural element it is 4.85 % as strong
    line, comps = blend_group([_row(670.9, -0.3, "6Li")], ABUND)
    assert line["log_gf"] == pytest.approx(-0.3 + math.log10(0.0485), abs=1e-12)
    assert len(comps) == 1


def test_missing_strength_gives_plain_mean_and_null_gf():
    group = [_row(500.000, -1.0), _row(500.002, None)]
    group[1]["A_ki_per_s"] = None
    line, _ = blend_group(group, ABUND)
    assert line["wavelength_vac_nm"] == pytest.approx(500.001, abs=1e-12)
    assert line["log_gf"] is None and line["A_ki_per_s"] is None


def test_unknown_isotope_is_refused():
    with pytest.raises(ValueError, match="99Cu"):
        blend_group([_row(500.0, -1.0, "99Cu")], ABUND)


def _shared(g_up, a, rel=500.0, lam=587.7247):
    """A row of the rascal NIST extract whose intensity is shared (NIST flag '*')."""
    return {
        "element": "He",
        "ion": 1,
        "wavelength_vac_nm": lam,
        "log_gf": None,
        "isotope": None,
        "source_id": "nist_rascal",
        "g_upper": g_up,
        "g_lower": 3.0,
        "A_ki_per_s": a,
        "A_ki_origin": "source" if a is not None else None,
        "E_lower_eV": None,
        "E_upper_eV": None,
        "rel_intensity": rel,
        "transition": None,
        "accuracy": None,
        "notes": "NIST intensity flags '*'",
    }


def test_shared_intensity_is_counted_once_and_gA_summed():
    # Four transitions of one observed line, each row with the line's intensity 500
    # (the shape of He I 587.56 nm in the rascal extract; A values invented here).
    rows = [_shared(3.0, 1.0e7), _shared(5.0, 7.0e7), _shared(7.0, 3.0e7), _shared(1.0, 5.0e7)]
    line, comps = blend_shared_intensity(rows)
    assert line["rel_intensity"] == 500.0  # once, not 4 × 500
    assert line["n_components"] == 4 and len(comps) == 4
    # strongest g_k·A: 5 × 7e7 = 3.5e8; A = Σ g_k A / g_k(strongest)
    assert line["g_upper"] == 5.0
    total_gA = 3.0e7 + 3.5e8 + 2.1e8 + 5.0e7
    assert line["A_ki_per_s"] == pytest.approx(total_gA / 5.0, rel=1e-12)
    assert line["A_ki_origin"] == "summed_over_components"
    assert line["wavelength_vac_nm"] == 587.7247
    assert {c["kind"] for c in comps} == {"multiply classified"}
    assert all(c["in_blend"] for c in comps)
    assert "intensity counted once" in line["notes"]


def test_shared_intensity_without_every_A_leaves_A_null():
    line, _ = blend_shared_intensity([_shared(3.0, 1.0e7), _shared(5.0, None)])
    assert line["A_ki_per_s"] is None and line["A_ki_origin"] is None
    assert line["rel_intensity"] == 500.0


def test_shared_intensity_single_row_is_unchanged():
    row = _shared(3.0, 1.0e7)
    line, comps = blend_shared_intensity([row])
    assert comps == [] and line["n_components"] == 1
    assert {k: v for k, v in line.items() if k != "n_components"} == row


@pytest.mark.parametrize(
    "other",
    [_shared(5.0, 7.0e7, rel=200.0), _shared(5.0, 7.0e7, lam=587.7300)],
    ids=["other intensity", "other wavelength"],
)
def test_shared_intensity_refuses_rows_of_two_lines(other):
    with pytest.raises(ValueError, match="one wavelength with one intensity"):
        blend_shared_intensity([_shared(3.0, 1.0e7), other])
