import math

import numpy as np
import polars as pl
import pytest
from scipy import constants as sc

from workbench.physics.airvac import vacuum_to_air_nm
from workbench.physics.units import HC_EV_NM
from workbench.refdata import CANONICAL_SCHEMA, load_set

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
    assert vac.min() >= 185.0 and vac.max() <= 1000.0
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
