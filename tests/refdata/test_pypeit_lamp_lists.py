"""Fe I, Fe II and Zn I from PypeIt's per-lamp line lists (source ``nist_pypeit_lamps``).

The rows below are copied verbatim from ``pypeit/data/arc_lines/lists/`` in the
wheel pypeit-2.0.1-py3-none-any.whl (BSD-3-Clause), the archive pinned in
``reference_sets/build/build_all.py``: ``ZnI_lines.dat`` lines 1-3, 7-8 and 19,
``FeI_lines.dat`` lines 1-4 and 27, ``FeII_lines.dat`` lines 1-3.
"""

import polars as pl
import pytest

from reference_sets.build.build_all import PRIORITY, PYPEIT_LAMP_LISTS, parse_pypeit_lamp_list
from workbench.physics.airvac import vacuum_to_air_nm
from workbench.refdata import load_set
from workbench.refdata.manifest import read_manifest

ZN = """\
# Creation Date: 2016-Dec-21
| ion |     wave | NIST | Instr | amplitude |            Source |
| ZnI |  3019.24 |    1 |     2 |       125 | keck_lris_webpage |
| ZnI |  3283.28 |    1 |     2 |       528 | lrisb_600_4000_PYPIT.json |
| ZnI |  3303.53 |    1 |     2 |      1209 | lrisb_600_4000_PYPIT.json |
| ZnI |  4681.45 |    1 |     2 |     22288 | lrisb_600_4000_PYPIT.json |
"""

FE = """\
# Creation Date: 2020-Apr-26
# Manually cut down between 3500-5100 by RJC for KCWI, strongest lines only for redder lines
| ion |       wave | NIST | Instr | amplitude | Source |
| FeI |  3021.5186 |    1 |     0 |     10000 |   NIST |
| FeI |  3619.7996 |    1 |     0 |    830000 |   NIST |
"""

FE2 = """\
# Creation Date: 2020-Apr-26
|  ion |       wave | NIST | Instr | amplitude | Source |
| FeII |  3000.9369 |    1 |     0 |      1800 |   NIST |
"""


def test_zinc_rows_keep_wavelengths_not_instrument_heights():
    rows, skipped = parse_pypeit_lamp_list(ZN, "Zn", 1)
    assert skipped == 0
    assert [(r["element"], r["ion"], r["source_id"]) for r in rows] == [
        ("Zn", 1, "nist_pypeit_lamps")
    ] * 4
    # amplitudes measured on one spectrograph (its response in them): no intensity
    assert all(r["rel_intensity"] is None for r in rows)
    assert "lrisb_600_4000_PYPIT.json" in rows[1]["notes"]


@pytest.mark.parametrize(
    ("vac_nm", "air_nm", "tol_nm"),
    # Zn I 328.233, 330.258 nm (NIST ASD air, from memory) and 468.0134 nm (the
    # Gaia-ESO row of the shipped set); Fe I 302.064, 361.877 nm and Fe II
    # 300.006 nm (NIST ASD air, from memory). The files hold vacuum Å: the Zn I
    # list to 0.01 Å (hence 1e-3 nm), the Fe lists to 1e-4 Å.
    [
        (328.328, 328.2334, 1e-3),
        (330.353, 330.2579, 1e-3),
        (468.145, 468.0134, 1e-3),
        (302.15186, 302.0639, 2e-4),
        (361.97996, 361.8768, 2e-4),
        (300.09369, 300.0062, 2e-4),
    ],
)
def test_the_files_hold_vacuum_angstroms(vac_nm, air_nm, tol_nm):
    assert float(vacuum_to_air_nm(vac_nm)) == pytest.approx(air_nm, abs=tol_nm)


def test_iron_rows_keep_the_nist_intensity():
    rows, _ = parse_pypeit_lamp_list(FE, "Fe", 1)
    assert [round(r["wavelength_vac_nm"], 5) for r in rows] == [302.15186, 361.97996]
    assert [r["rel_intensity"] for r in rows] == [10000, 830000]
    (ion2,) = parse_pypeit_lamp_list(FE2, "Fe", 2)[0]
    assert ion2["rel_intensity"] == 1800


def test_rows_of_another_species_or_not_nist_are_skipped():
    text = ZN.replace("| ZnI |  3019.24 |    1 |", "| ZnI |  3019.24 |    0 |")
    rows, skipped = parse_pypeit_lamp_list(text, "Zn", 1)
    assert (len(rows), skipped) == (3, 1)
    rows, skipped = parse_pypeit_lamp_list(FE2, "Fe", 1)  # Fe II rows asked as Fe I
    assert (len(rows), skipped) == (0, 1)


@pytest.fixture(scope="module")
def table():
    return load_set("optical").table


@pytest.mark.parametrize("air_nm", [328.2334, 330.2579, 334.5018])
def test_shipped_set_has_the_zinc_lamp_lines(table, air_nm):
    # Zn I 328.23, 330.26, 334.50 nm: the 4s4p 3P - 4s4d 3D lines a zinc lamp
    # or a brass LIBS plasma shows; no other source lists them
    row = table.filter(
        (pl.col("element") == "Zn")
        & (pl.col("ion") == 1)
        & ((pl.col("wavelength_air_nm") - air_nm).abs() <= 0.001)
    )
    assert row.height == 1
    assert row["source_id"][0] == "nist_pypeit_lamps"
    assert row["rel_intensity"][0] is None


def test_shared_lines_keep_the_richer_source(table):
    # Zn I 481.05 nm is in Gaia-ESO too: that row (log gf) is kept, this source noted
    row = table.filter(
        (pl.col("element") == "Zn")
        & (pl.col("ion") == 1)
        & ((pl.col("wavelength_air_nm") - 481.0528).abs() <= 0.001)
    )
    assert row.height == 1
    assert row["source_id"][0] == "ges2022"
    assert row["alt_sources"][0] == "nist_pypeit_lamps"
    assert PRIORITY.index("nist_pypeit_lamps") > PRIORITY.index("ges2022")


def test_manifest_records_the_lamp_lists():
    opt = next(s for s in read_manifest()["sets"] if s["id"] == "optical")
    src = next(s for s in opt["sources"] if s["id"] == "nist_pypeit_lamps")
    assert src["package"] == "pypeit" and src["package_version"] == "2.0.1"
    assert src["licence"] == "BSD-3-Clause"
    assert src["file_in_package"] == "; ".join(f for f, _, _ in PYPEIT_LAMP_LISTS)
    assert src["rows_contributed"] > 0


@pytest.mark.parametrize(
    ("element", "ion", "air_nm"),
    # key analytical lines no pinned source carries, added to the supplement
    # (reference_sets/build/supplement_from_memory.csv, NIST ASD values from memory):
    # Sb I of gunshot residue, Sn/Ni/Co/W/V of alloys, Si I of glass, the Mg I triplet
    [
        ("Sb", 1, 252.852),
        ("Sb", 1, 287.792),
        ("Sn", 1, 326.234),
        ("Si", 1, 390.552),
        ("Mg", 1, 383.829),
        ("Ba", 2, 233.527),
    ],
)
def test_supplement_key_lines_are_marked_from_memory(table, element, ion, air_nm):
    row = table.filter(
        (pl.col("element") == element)
        & (pl.col("ion") == ion)
        & ((pl.col("wavelength_air_nm") - air_nm).abs() <= 0.001)
    )
    assert row.height == 1
    assert row["source_id"][0] == "supplement"
    assert row["accuracy"][0] == "handbook_from_memory"
