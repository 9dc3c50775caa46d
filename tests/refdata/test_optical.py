import math

import numpy as np
import polars as pl
import pytest
from scipy import constants as sc

from workbench.physics.airvac import vacuum_to_air_nm
from workbench.physics.units import HC_EV_NM
from workbench.refdata import CANONICAL_SCHEMA, COMPONENT_SCHEMA, load_components, load_set

ELEMENTS_36 = (
    "H He Li C N O Na Mg Al Si K Ca Ti Cr Mn Fe Co Ni Cu Zn As Sr Zr Ag Cd Sn Sb Ba Au Hg "
    "Pb Bi Ne Ar Kr Xe"
).split()


@pytest.fixture(scope="module")
def optical():
    return load_set("optical")


@pytest.fixture(scope="module")
def table(optical):
    return optical.table


def _near(table, element, ion, wavelength_nm, medium="air", tol=0.003):
    col = "wavelength_air_nm" if medium == "air" else "wavelength_vac_nm"
    return table.filter(
        (pl.col("element") == element)
        & (pl.col("ion") == ion)
        & ((pl.col(col) - wavelength_nm).abs() <= tol)
    )


# Handbook air wavelengths (NIST ASD / CRC Handbook), from memory.
KEY_LINES = [
    ("Na", 1, 588.995),
    ("Na", 1, 589.592),
    ("Cu", 1, 324.754),
    ("Cu", 1, 327.395),
    ("Pb", 1, 405.781),
    ("Pb", 1, 368.346),
    ("Ca", 2, 393.366),
    ("Ca", 2, 396.847),
    ("Mg", 2, 279.553),
    ("Mg", 2, 280.271),
    ("Hg", 1, 253.652),
    ("Hg", 1, 435.834),
    ("Hg", 1, 546.074),
]


@pytest.mark.parametrize(("element", "ion", "wavelength_nm"), KEY_LINES)
def test_key_line_present(table, element, ion, wavelength_nm):
    found = _near(table, element, ion, wavelength_nm)
    # one row per transition: isotope/hyperfine components are blended into it
    assert found.height == 1


def test_as_189_vacuum_line_kept(table):
    # As I 189.042 nm vacuum (NIST ASD, from memory); below 200 nm so air is null
    found = _near(table, "As", 1, 189.042, medium="vacuum")
    assert found.height == 1
    assert found["wavelength_air_nm"][0] is None


# NIST accuracy grades as fractions of A (NIST ASD grade definitions, from memory)
NIST_GRADE = {
    "AAA": 0.003,
    "AA": 0.01,
    "A+": 0.02,
    "A": 0.03,
    "B+": 0.07,
    "B": 0.10,
    "C+": 0.18,
    "C": 0.25,
    "D+": 0.40,
    "D": 0.50,
}


@pytest.mark.parametrize(
    ("element", "ion", "wavelength_nm", "grade"),
    [("Cu", 1, 324.754, "AA"), ("Cu", 1, 327.395, "AA"), ("Cd", 1, 228.802, "C")],
    # grades as given in the rascal NIST extract (all_nist.csv, rascal 0.3.11)
)
def test_a_values_agree_between_morton_and_nist(table, element, ion, wavelength_nm, grade):
    row = _near(table, element, ion, wavelength_nm).filter(pl.col("n_sources") >= 2)
    assert row.height == 1
    r = row.row(0, named=True)
    assert r["source_id"] in {"morton00", "morton03"}
    assert "nist_rascal" in r["alt_sources"]
    # Morton and the NIST extract agree within the NIST grade (plus 1 % for Morton's rounding)
    assert r["log_A_spread_dex"] <= math.log10(1 + NIST_GRADE[grade] + 0.01)
    assert r["wavelength_spread_nm"] <= 0.001


def test_every_target_element_covered_and_counts(table, capsys):
    counts = (
        table.group_by("element")
        .agg(pl.len().alias("total"), pl.col("A_ki_per_s").is_not_null().sum().alias("with_A"))
        .sort("element")
    )
    by_el = {r["element"]: r for r in counts.iter_rows(named=True)}
    missing = [e for e in ELEMENTS_36 if e not in by_el]
    assert not missing
    with capsys.disabled():
        print("\nelement  total  with_A")
        for e in ELEMENTS_36:
            print(f"{e:<7} {by_el[e]['total']:>6} {by_el[e]['with_A']:>7}")


def test_columns_and_order(table):
    assert dict(zip(table.columns, table.dtypes, strict=True)) == CANONICAL_SCHEMA
    assert table["line_id"].n_unique() == table.height
    assert table["wavelength_vac_nm"].is_sorted()
    assert table["line_id"].str.starts_with("optical:").all()


def test_positions_consistent(table):
    vac = table["wavelength_vac_nm"].to_numpy()
    assert vac.min() >= 185.0 and vac.max() <= 1500.0
    air = table["wavelength_air_nm"].to_numpy(allow_copy=True)
    below = vac < 200.0
    assert np.all(np.isnan(air[below]))  # null below 200 nm vacuum, by convention
    assert np.allclose(air[~below], vacuum_to_air_nm(vac[~below]), atol=1e-9, rtol=0)
    assert np.allclose(table["energy_eV"].to_numpy(), HC_EV_NM / vac, rtol=1e-12)


def test_sources_and_disagreement_columns(table):
    assert set(table["source_id"].unique()) <= {
        "computed_rydberg_dirac",
        "morton03",
        "morton00",
        "nist_rascal",
        "ges2022",
        "nist_pypeit",
        "nist_pypeit_lamps",
        "verner96",
        "supplement",
    }
    single = table.filter(pl.col("n_sources") == 1)
    assert single["alt_sources"].null_count() == single.height
    assert single["wavelength_spread_nm"].null_count() == single.height
    multi = table.filter(pl.col("n_sources") > 1)
    assert multi.height > 100
    assert multi["alt_sources"].null_count() == 0
    assert (multi["wavelength_spread_nm"] <= 0.005 + 1e-12).all()
    # nothing is stored as zero for "unknown"
    assert (table["A_ki_per_s"].drop_nulls() > 0).all()


def test_ges_a_values_derived_with_the_standard_constant(table):
    # A = 2π e² /(ε0 m_e c λ²) · gf/g_k (standard relation, e.g. Hilborn 1982 eq. 17);
    # in Å and s⁻¹ the constant is 6.6702e15 (NIST ASD documentation)
    const = 2 * math.pi * sc.e**2 / (sc.epsilon_0 * sc.m_e * sc.c) / 1e-20
    assert const == pytest.approx(6.6702e15, rel=1e-4)
    ges = table.filter(
        (pl.col("source_id") == "ges2022") & (pl.col("A_ki_origin") == "derived_from_log_gf")
    )
    assert ges.height > 50_000
    lam_A = ges["wavelength_vac_nm"].to_numpy() * 10
    expect = 6.6702e15 * 10 ** ges["log_gf"].to_numpy() / (ges["g_upper"].to_numpy() * lam_A**2)
    assert np.allclose(ges["A_ki_per_s"].to_numpy(), expect, rtol=1e-9)


def test_supplement_rows_are_marked(table):
    sup = table.filter(pl.col("source_id") == "supplement")
    assert 0 < sup.height <= 20
    assert (sup["accuracy"] == "handbook_from_memory").all()
    assert sup["notes"].str.contains("handbook_from_memory").all()


def test_ca_ii_h_and_k_from_verner(table):
    # Ca II K and H, 393.366 / 396.847 nm air (NIST ASD, from memory)
    for lam in (393.366, 396.847):
        r = _near(table, "Ca", 2, lam).row(0, named=True)
        assert r["source_id"] == "verner96"
        # A ≈ 1.4e8 s⁻¹ (NIST ASD, from memory), within 10 %
        assert r["A_ki_per_s"] == pytest.approx(1.4e8, rel=0.1)


def test_hydrogen_like_set(optical):
    h = load_set("hydrogen_like").table
    assert set(h["element"].unique()) == {"H", "D", "He"}
    # H-alpha components lie within 0.03 nm of 656.28 nm air (NIST ASD, from memory)
    ha = _near(h, "H", 1, 656.28, tol=0.03)
    assert ha.height >= 3
    opt_h = _near(optical.table, "H", 1, 656.28, tol=0.03)
    assert opt_h.height == ha.height


# --------------------------------------------------------------------------- one row per transition


@pytest.fixture(scope="module")
def components():
    return load_components("optical")


def test_ba_ii_4934_is_one_row_with_its_gaia_eso_components(table, components):
    # Ba II 493.41 nm air (NIST ASD, from memory); the Gaia-ESO list splits it into
    # hyperfine and isotope components (134Ba-138Ba) within 0.008 nm
    rows = _near(table, "Ba", 2, 493.4077, tol=0.02)
    assert rows.height == 1
    r = rows.row(0, named=True)
    comps = components.filter(pl.col("blend_id") == r["line_id"])
    assert r["n_components"] == comps.height == 11
    assert set(comps["source_id"]) == {"ges2022"}
    assert set(comps["isotope"]) == {"134Ba", "135Ba", "136Ba", "137Ba", "138Ba"}
    # the Gaia-ESO list gives each isotope's components with the gf of the pure
    # isotope: per isotope they add up to log gf = -0.157 (the shipped components)
    for _iso, part in comps.group_by("isotope"):
        assert math.log10((10 ** part["log_gf"]).sum()) == pytest.approx(-0.157, abs=0.003)
    # natural abundance of 138Ba 71.70 % (IUPAC/CIAAW, from memory)
    x138 = comps.filter(pl.col("isotope") == "138Ba")["isotope_fraction"][0]
    assert x138 == pytest.approx(0.717, abs=0.001)
    # summed gf = Σ x·gf over the shipped components, every one of them summed
    assert comps["in_blend"].all()
    expect = (comps["isotope_fraction"] * 10 ** comps["log_gf"]).sum()
    assert comps["weight_gf"].sum() == pytest.approx(expect, rel=1e-12)
    # Morton (2000) gives the whole line log gf = -0.159 and is kept (higher
    # precedence); the Gaia-ESO blend agrees within 0.005 dex
    assert r["source_id"] == "morton00" and r["alt_sources"] == "ges2022"
    assert math.log10(expect) == pytest.approx(r["log_gf"], abs=0.005)
    # the blend's intensity-weighted position lies within the components' span
    w = comps["weight_gf"].to_numpy()
    lam = float((w * comps["wavelength_vac_nm"].to_numpy()).sum() / w.sum())
    assert abs(lam - r["wavelength_vac_nm"]) <= r["wavelength_spread_nm"] + 1e-12


def test_mg_i_2852_is_one_row_with_the_alternative_recorded(table, components):
    # Mg I 285.2127 nm air (NIST ASD, from memory): Morton 2003 gives it for the
    # natural mixture (285.2125) and for 24Mg (285.21255), 25Mg and 26Mg
    rows = _near(table, "Mg", 1, 285.2127, tol=0.005)
    assert rows.height == 1
    r = rows.row(0, named=True)
    assert r["source_id"] == "morton03"
    assert r["n_sources"] == 2 and r["alt_sources"] == "verner96"
    assert r["wavelength_spread_nm"] is not None and r["log_A_spread_dex"] is not None
    comps = components.filter(pl.col("blend_id") == r["line_id"]).sort("kind")
    assert comps["kind"].to_list() == ["isotope", "isotope", "isotope", "natural"]
    assert set(comps["isotope"].drop_nulls()) == {"24Mg", "25Mg", "26Mg"}
    # the natural-mixture row is the line; the isotope rows are kept, not summed
    assert comps.filter(pl.col("kind") == "isotope")["in_blend"].not_().all()
    assert r["log_gf"] == pytest.approx(0.263, abs=1e-9)  # Morton 2003 Table 2


def test_nist_shared_intensity_lines_are_one_row(table, components):
    """Rows of the rascal NIST extract that share one observed intensity are one line.

    He I 587.56 nm (air; NIST ASD, from memory) is a 2p 3P - 3d 3D multiplet
    that the rascal extract lists as four rows at one wavelength, each with
    intensity 500 and NIST's flag '*' (intensity shared). One row remains,
    with that intensity once and the transitions as components.
    """
    rows = _near(table, "He", 1, 587.5621, tol=0.005)
    assert rows.height == 1
    r = rows.row(0, named=True)
    assert r["source_id"] == "nist_rascal" and r["rel_intensity"] == 500.0
    comps = components.filter(pl.col("blend_id") == r["line_id"])
    assert comps.height == r["n_components"] == 4
    assert set(comps["kind"]) == {"multiply classified"}
    # A of the line = Σ g_k A over its transitions / g_k of the strongest
    ga = (comps["g_upper"] * comps["A_ki_per_s"]).sum()
    assert r["A_ki_per_s"] * r["g_upper"] == pytest.approx(ga, rel=1e-12)
    # and nowhere does the set keep two rascal rows of one species at one place
    nist = table.filter(pl.col("source_id") == "nist_rascal")
    dup = nist.group_by("element", "ion", "wavelength_vac_nm").len().filter(pl.col("len") > 1)
    assert dup.height == 0, dup.head()


@pytest.mark.parametrize(("element", "ion"), [("Mg", 2), ("Cu", 1), ("Li", 1), ("Nd", 2)])
def test_no_isotope_component_left_as_a_line(table, element, ion):
    rows = table.filter((pl.col("element") == element) & (pl.col("ion") == ion))
    assert not rows["notes"].fill_null("").str.contains("not merged").any()


def test_blended_rows_equal_the_sum_of_their_components(table, components):
    # for every line kept from the source that blended it, log gf and wavelength
    # are the x·gf sum and x·gf-weighted mean of its summed components
    summed = components.filter(pl.col("in_blend") & pl.col("weight_gf").is_not_null())
    agg = summed.group_by("blend_id", "source_id").agg(
        pl.col("weight_gf").sum().alias("w"),
        (
            (pl.col("weight_gf") * pl.col("wavelength_vac_nm")).sum() / pl.col("weight_gf").sum()
        ).alias("lam"),
        (pl.col("kind") == "natural").any().alias("has_natural"),
    )
    joined = table.join(agg, left_on=["line_id", "source_id"], right_on=["blend_id", "source_id"])
    joined = joined.filter(~pl.col("has_natural") & pl.col("log_gf").is_not_null())
    assert joined.height > 1500
    assert np.allclose(joined["log_gf"], np.log10(joined["w"].to_numpy()), atol=1e-9, rtol=0)
    assert np.allclose(joined["wavelength_vac_nm"], joined["lam"], atol=1e-9, rtol=0)


def test_components_table_is_keyed_by_the_blended_lines(table, components):
    assert list(components.columns) == list(COMPONENT_SCHEMA)
    ids = set(table["line_id"])
    assert set(components["blend_id"]) <= ids
    counts = components.group_by("blend_id").len()
    joined = table.join(counts, left_on="line_id", right_on="blend_id", how="left")
    # n_components = rows in the components table; a row its sources list once has
    # none there (a lone isotope row, e.g. 139La, is a one-component blend)
    assert (joined["n_components"] == joined["len"].fill_null(1)).all()
    assert (joined.filter(pl.col("n_components") > 1)["len"] > 1).all()
    assert components["wavelength_vac_nm"].is_not_null().all()


def test_no_two_rows_describe_the_same_transition(table):
    """No two rows of one element+ion within the merge tolerance are one transition.

    Rows are taken as the same transition when they lie within 0.005 nm (the
    cross-source tolerance), their g_k agree (or one is unknown) and their
    lower-level energies agree within 0.01 eV (both known).
    """
    t = table.sort("element", "ion", "wavelength_vac_nm")
    lam = t["wavelength_vac_nm"].to_numpy()
    key = (t["element"] + ":" + t["ion"].cast(pl.String)).to_numpy()
    gu = t["g_upper"].to_numpy(allow_copy=True)
    el = t["E_lower_eV"].to_numpy(allow_copy=True)
    src = t["source_id"].to_list()
    alt = t["alt_sources"].fill_null("").to_list()
    label = t["transition"].to_list()
    cross, same_source = [], []
    for i in range(len(lam)):
        j = i + 1
        while j < len(lam) and key[j] == key[i] and lam[j] - lam[i] <= 0.005:
            g_ok = np.isnan(gu[i]) or np.isnan(gu[j]) or gu[i] == gu[j]
            e_ok = not np.isnan(el[i]) and not np.isnan(el[j]) and abs(el[i] - el[j]) <= 0.01
            if g_ok and e_ok:
                if src[i] != src[j]:
                    cross.append((i, j))
                elif label[i] is not None and label[i] == label[j]:
                    same_source.append((key[i], round(float(el[i]), 3)))
            j += 1
    # across sources: only where that source's row for this place was already merged
    # into the other (the source lists two transitions there)
    for i, j in cross:
        assert src[j] in alt[i] or src[i] in alt[j], (t["line_id"][i], t["line_id"][j])
    # within one source, identical labels remain only where the Gaia-ESO list leaves
    # the lower level's J out of the label and the two J levels agree to 0.001 eV:
    # Sc I 3d4s(1D)4p 2P* (3.057 eV; the pairs keep a constant 1.6-1.9 cm⁻¹
    # offset from 470 to 549 nm, i.e. two lower levels), Li I 3d 2D (3.879 eV)
    # and Ca I 3d4p 3F* (4.441 eV), each with its own damping data in the list
    assert set(same_source) <= {("Sc:1", 3.057), ("Li:1", 3.879), ("Ca:1", 4.441)}


# Rows per element in data version 2026.12.1 (the optical set before blending,
# git 598942b): the blend removes component and duplicate rows, never adds any.
ROWS_2026_12_1 = {"Ba": 146, "Mg": 361, "Fe": 30191, "Ti": 8209, "Cu": 1207, "Mn": 5323, "Co": 5152}


def test_row_counts_per_element_before_and_after(table, capsys):
    after = dict(table.group_by("element").len().iter_rows())
    with capsys.disabled():
        print("\nelement  2026.12.1  now")
        for el, before in ROWS_2026_12_1.items():
            print(f"{el:<7} {before:>9} {after[el]:>5}")
    for el, before in ROWS_2026_12_1.items():
        assert after[el] < before, el
