import polars as pl
import pytest

from workbench.refdata import CANONICAL_SCHEMA, load_set

xraylib = pytest.importorskip("xraylib")


@pytest.fixture(scope="module")
def xray():
    return load_set("xray").table


def _energy(t, element, siegbahn):
    row = t.filter((pl.col("element") == element) & (pl.col("siegbahn") == siegbahn))
    assert row.height == 1
    return row["energy_eV"][0]


@pytest.mark.parametrize(
    ("element", "Z", "siegbahn", "line"),
    [
        ("Cu", 29, "Kα1", "KL3_LINE"),
        ("Fe", 26, "Kα1", "KL3_LINE"),
        ("Pb", 82, "Lα1", "L3M5_LINE"),
        ("As", 33, "Kα1", "KL3_LINE"),
    ],
)
def test_energies_agree_with_xraylib(xray, element, Z, siegbahn, line):
    # xraylib (registry package, test dependency) LineEnergy in keV
    expect_eV = xraylib.LineEnergy(Z, getattr(xraylib, line)) * 1000
    assert _energy(xray, element, siegbahn) == pytest.approx(expect_eV, abs=3.0)


def test_pb_la1_and_as_ka1_overlap(xray):
    # the classic XRF interference: within ~10 eV (common practice, no source)
    assert abs(_energy(xray, "Pb", "Lα1") - _energy(xray, "As", "Kα1")) < 10.0


def test_siegbahn_map_matches_xraydb_ascii_names(xray):
    # xraydb's own ASCII Siegbahn symbol is kept in notes; transliterate and compare
    greek = {"α": "a", "β": "b", "γ": "g", "η": "n", "ζ": "z"}
    for sieg, notes in xray.select("siegbahn", "notes").iter_rows():
        ascii_name = "".join(greek.get(ch, ch) for ch in sieg)
        assert notes.endswith(f"xraydb symbol {ascii_name}")


def test_table_shape(xray):
    assert dict(zip(xray.columns, xray.dtypes, strict=True)) == CANONICAL_SCHEMA
    assert xray["energy_eV"].is_sorted()
    assert xray["element"].n_unique() >= 90
    assert xray["energy_eV"].min() < 1000 and xray["energy_eV"].max() > 100_000
    assert xray["ion"].null_count() == xray.height
    assert xray["wavelength_air_nm"].null_count() == xray.height
    # relative intensities sum to ~1 within each element and initial level (xraydb convention)
    sums = (
        xray.filter(pl.col("initial_level").is_in(["K", "L1", "L2", "L3"]))
        .group_by("element", "initial_level")
        .agg(pl.col("rel_intensity").sum())
    )
    assert sums["rel_intensity"].is_between(0.9, 1.1).all()
    # Cu Kα1 is K-L3 (IUPAC 1991 notation, common practice)
    cu = xray.filter((pl.col("element") == "Cu") & (pl.col("transition") == "K-L3"))
    assert cu["siegbahn"][0] == "Kα1"
