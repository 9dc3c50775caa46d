"""Real files given to the product as they come, not through the test loader.

The loader (tests/realdata/loader.py) picks a column and a range; an analyst
gives the whole file. pvlib 0.16.1's copy of ASTM G173-03
(tests/data/realspectra/pvlib, hashes in the manifest) opens with a title
line above its column names and steps 0.5, 1 and 5 nm: read whole, it must be
a spectrum (read as 2,002 "peaks" at every sample, it gave Xe II "probable"),
and matched in absorption it must call nothing the Sun's Fraunhofer spectrum
does not show (H, Na, Mg, Ca, Fe: the issue's list for this spectrum).
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.realdata.loader import DATA
from workbench.datamodel import Spectrum
from workbench.errors import UnitError
from workbench.io import read_any
from workbench.matching import MatchParameters
from workbench.matching.analyse import analyse_spectrum

G173 = DATA / "pvlib" / "ASTMG173.csv"


def test_g173_as_given_is_a_spectrum_with_its_title_kept():
    spec = read_any(G173, unit="nm")
    assert isinstance(spec, Spectrum) and spec.x.size == 2002  # rows of the file, counted
    assert spec.x[0] == 280.0 and spec.x[-1] == 4000.0
    assert any("title line" in n and "line 1" in n for n in spec.source.notes)
    assert any("'extraterrestrial'" in n for n in spec.source.notes)  # the first y column


def test_g173_without_a_unit_asks_for_one():
    with pytest.raises(UnitError, match="--unit"):
        read_any(G173)


@pytest.mark.parametrize("prior", ["none", "solar"])
def test_g173_as_given_calls_nothing_the_sun_does_not_show(prior):
    spec = read_any(G173, unit="nm")
    out = analyse_spectrum(spec, None, MatchParameters(mode="absorption", abundance_prior=prior))
    high = {e["element"] for e in out.report["elements"] if e["verdict_level"] >= 2}
    assert high <= {"H", "Na", "Mg", "Ca", "Fe"}, high


def test_a_pipe_table_line_list_as_given():
    # pypeit 2.0.1's OH line list: a '|'-bounded table with text columns
    # (ion, source) beside the numbers; wavelengths in vacuum Å (its docs).
    from tests.realdata.test_sky_lines import _oh_lines
    from workbench.io import read_peak_list

    w_nm, amp = _oh_lines("OH_MODS_lines.dat")
    peaks = read_peak_list(DATA / "pypeit" / "OH_MODS_lines.dat", unit="angstrom", medium="vacuum")
    order = np.argsort(w_nm)
    np.testing.assert_allclose(peaks.positions, w_nm[order], rtol=1e-12)
    np.testing.assert_allclose(peaks.intensities, amp[order], rtol=1e-12)
    assert "delimiter: pipe" in peaks.source.notes


def test_a_line_list_of_positions_and_labels_as_given():
    # pyreduce-astro 0.10's thar_list.txt: "3006.9314 ThII" rows (air Å and
    # species) under '#' reference lines, no header.
    from workbench.io import read_peak_list

    path = DATA / "pyreduce" / "thar_list.txt"
    rows = [r.split() for r in path.read_text().splitlines() if r.strip() and r[0] != "#"]
    peaks = read_peak_list(path, unit="angstrom")
    np.testing.assert_allclose(peaks.positions, np.sort([float(r[0]) / 10.0 for r in rows]))
    assert "no header row: column 1 read as position; column 2 holds text, not read" in (
        peaks.source.notes
    )
    assert np.all(np.isnan(peaks.intensities))


@pytest.mark.parametrize(
    "name", ["kastr_600_7500_PYPIT", "lrisr_400_8500_PYPIT", "deimos_830G_r_PYPIT"]
)
def test_pypeit_arc_solutions_as_given(name):
    # pypeit 2.0.1's archived arcs: counts per pixel with a Legendre solution
    # (vacuum Å). Read as given, they are the spectra the verified loader
    # builds, and get the same calls.
    from tests.realdata.loader import load
    from tests.realdata.run import element_classes, run_real

    rs = load(name)
    spec = read_any(DATA / "pypeit" / f"{name}.json")
    assert isinstance(spec, Spectrum) and spec.medium == "vacuum"
    np.testing.assert_allclose(spec.x, rs.spectrum.x, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(spec.y, rs.spectrum.y)
    out = analyse_spectrum(spec, None, MatchParameters(mode="emission"))
    assert element_classes(out.report) == element_classes(run_real(rs).report)
