"""Ar II and Th II from the NIST rows of PypeIt's Th-Ar list (source ``nist_pypeit``).

The rows below are copied verbatim from ``pypeit/data/arc_lines/lists/ThAr_lines.dat``
in the wheel pypeit-2.0.1-py3-none-any.whl (BSD-3-Clause; file lines 1-2, 7, 15,
579, 3653, 13409, 13470 and 13869), the archive pinned in
``reference_sets/build/build_all.py``.
"""

import polars as pl
import pytest

from reference_sets.build.build_all import PRIORITY, parse_pypeit_thar
from workbench.physics.airvac import vacuum_to_air_nm
from workbench.refdata import load_set
from workbench.refdata.manifest import read_manifest

EXCERPT = """\
# Creation Date: 2018-Jan-09
|    ion |       wave | NIST | Instr | amplitude |      Source |
|   Th I |  3001.2278 |    1 |     0 |       170 |        NIST |
|  Th II |  3002.1396 |    1 |     0 |      1200 | NIST+MURPHY |
|  Ar II |  3138.5417 |    0 |     0 |         1 |      MURPHY |
|   XX 1 |  3816.9228 |    0 |     0 |         1 |      MURPHY |
|  Ar II |  6610.0900 |    1 |     0 |         0 |        NIST |
|  Ar II |  6645.5319 |    1 |     0 |       269 |        NIST |
|  Ar II |  6863.1621 |    1 |     0 |       112 | NIST+MURPHY |
"""


def test_parser_keeps_the_nist_rows_of_ar_ii_only():
    rows, skipped = parse_pypeit_thar(EXCERPT, species=(("Ar", 2),))
    # Th I (rascal has it), Th II (not chosen), XX and the header are not Ar II;
    # the MURPHY-only Ar II row (NIST flag 0) is skipped and counted
    assert skipped == 1
    assert [(r["element"], r["ion"]) for r in rows] == [("Ar", 2)] * 3
    assert {r["source_id"] for r in rows} == {"nist_pypeit"}
    by_lam = {round(r["wavelength_vac_nm"], 5): r for r in rows}
    # wave is vacuum Å: 6645.5319 Å -> 664.55319 nm vacuum
    assert sorted(by_lam) == [661.009, 664.55319, 686.31621]
    # amplitude = NIST relative intensity (269, 112 in the file); 0 = unknown, stored null
    assert by_lam[664.55319]["rel_intensity"] == 269
    assert by_lam[686.31621]["rel_intensity"] == 112
    assert by_lam[661.009]["rel_intensity"] is None
    assert "amplitude 0" in by_lam[661.009]["notes"]


def test_parser_takes_th_ii_when_asked():
    rows, _ = parse_pypeit_thar(EXCERPT, species=(("Th", 2),))
    assert len(rows) == 1
    assert rows[0]["wavelength_vac_nm"] == pytest.approx(300.21396, abs=1e-9)
    assert rows[0]["rel_intensity"] == 1200


@pytest.mark.parametrize(
    ("vac_nm", "air_nm"),
    # Ar II 664.37 and 686.13 nm air: the two lines of the NOAO Fe-Ar atlas list
    # that the Goodman 1200M4 FeHeAr lamp shows (tests/realdata); NIST ASD air
    # wavelengths 664.3698 and 686.1269 nm (from memory)
    [(664.55319, 664.3698), (686.31621, 686.1269)],
)
def test_the_file_wavelengths_are_vacuum(vac_nm, air_nm):
    # by the IAU air/vacuum formula the file's values land on the air lines
    assert float(vacuum_to_air_nm(vac_nm)) == pytest.approx(air_nm, abs=2e-4)


@pytest.fixture(scope="module")
def table():
    return load_set("optical").table


def test_shipped_set_has_ar_ii_from_nist_pypeit(table):
    ar2 = table.filter((pl.col("element") == "Ar") & (pl.col("ion") == 2))
    # no other source lists Ar II, so every Ar II row is this source's, alone
    assert ar2.height > 1000
    assert set(ar2["source_id"]) == {"nist_pypeit"}
    assert (ar2["n_sources"] == 1).all()
    for air_nm, rel in ((664.3698, 269.0), (686.1269, 112.0)):
        row = ar2.filter((pl.col("wavelength_air_nm") - air_nm).abs() <= 0.001)
        assert row.height == 1
        assert row["rel_intensity"][0] == rel


def test_nist_pypeit_adds_no_other_species(table):
    # Ar I and Th I come from the rascal NIST extract; PypeIt's copies are not read
    got = table.filter(pl.col("source_id") == "nist_pypeit")
    assert set(zip(got["element"], got["ion"], strict=True)) == {("Ar", 2), ("Th", 2)}
    # where it merged into another source's row, that row is a Th II line
    # (Gaia-ESO's, with log gf)
    alt = table.filter(
        table["alt_sources"].fill_null("").str.split(";").list.contains("nist_pypeit")
    )
    assert alt.height > 0
    assert set(zip(alt["element"], alt["ion"], strict=True)) == {("Th", 2)}


def test_shipped_set_has_th_ii_beside_the_atomic_data(table):
    th2 = table.filter((pl.col("element") == "Th") & (pl.col("ion") == 2))
    # the 418 Gaia-ESO / Morton lines with log gf stay; PypeIt's NIST rows add the rest
    assert th2.height > 5000
    assert {"ges2022", "nist_pypeit"} <= set(th2["source_id"])
    # Th II 300.2139 nm vacuum, NIST intensity 1200 (EXCERPT above)
    row = th2.filter((pl.col("wavelength_vac_nm") - 300.21396).abs() <= 1e-5)
    assert row.height == 1 and row["rel_intensity"][0] == 1200


def test_manifest_records_the_pypeit_archive():
    opt = next(s for s in read_manifest()["sets"] if s["id"] == "optical")
    src = next(s for s in opt["sources"] if s["id"] == "nist_pypeit")
    assert src["package"] == "pypeit" and src["package_version"] == "2.0.1"
    assert src["licence"] == "BSD-3-Clause"  # pypeit-2.0.1.dist-info/licenses/LICENSE.rst
    assert src["file_in_package"] == "pypeit/data/arc_lines/lists/ThAr_lines.dat"
    assert len(src["archive_sha256"]) == 64
    # below the sources with atomic data for the same kind of line (see build_all.py)
    assert PRIORITY.index("nist_pypeit") > PRIORITY.index("ges2022")
