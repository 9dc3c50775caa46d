"""The energy-axis hook of the engine into workbench.xray (issue 10).

Peak energies from the shipped ``xray`` set (Elam et al. 2002 via xraydb) and
xraylib 4.3 (tube lines); intensities invented.
"""

from __future__ import annotations

import json
from dataclasses import replace

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import PeakList
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
from workbench.matching.report import result_json
from workbench.matching.textsummary import summary_text
from workbench.refdata import load_set
from workbench.xray import Instrument
from workbench.xray.detector import fwhm_eV


@pytest.fixture(scope="module")
def xray():
    return load_set("xray")


def _fe_with_rh_scatter() -> PeakList:
    # Fe Kα 6404, Fe Kβ 7058 (Elam); Rh Kα Rayleigh 20216 and its Compton
    # partner at 90° 19447 eV (xraylib LineEnergy and the Compton formula).
    e = [6403.8, 7058.0, 19447.0, 20216.1]
    i = [5000.0, 800.0, 1500.0, 900.0]
    return PeakList(pl.DataFrame({"energy_eV": e, "intensity": i}), "energy", None)


def test_rh_scatter_is_not_called_ru_or_rh(xray):
    rep = match_peaks(_fe_with_rh_scatter(), [xray], MatchParameters()).report()
    called = {el["species"] for el in rep["elements"] if el["verdict_level"] >= 1}
    assert not called & {"Rh K", "Ru K", "Rh L", "Pd L"}
    assert [a["kinds"] for a in rep["xray"]["artefact_peaks"]] == ["compton", "rayleigh"]
    assert [ln["observed_eV"] for ln in rep["lines"]] == pytest.approx([6403.8, 7058.0])
    assert rep["xray"]["instrument_assumed"] is True
    json.loads(result_json(rep))  # serialisable


def test_window_is_half_the_detector_fwhm(xray):
    inst = replace(Instrument(), fwhm_MnKa_eV=160.0)
    rep = match_peaks(_fe_with_rh_scatter(), [xray], MatchParameters(instrument=inst)).report()
    tol = [ln["tolerance_eV"] for ln in rep["lines"]]
    # Default window: half the FWHM at each energy (workbench.xray.prepare).
    assert tol == pytest.approx(0.5 * fwhm_eV(np.array([6403.8, 7058.0]), inst))
    assert rep["parameters"]["instrument"]["fwhm_MnKa_eV"] == 160.0


def test_explicit_tolerance_is_respected(xray):
    params = MatchParameters(tolerance=ToleranceSpec("fixed", 40.0))
    rep = match_peaks(_fe_with_rh_scatter(), [xray], params).report()
    assert {ln["tolerance_eV"] for ln in rep["lines"]} == {40.0}


def test_lines_above_tube_voltage_are_not_expected(xray):
    # Pb L lines only (Elam): with a 40 kV tube Pb K (edge 88 keV) is not
    # expected, so it is never "missing" or called.
    t = xray.table.filter(pl.col("element") == "Pb")
    lines = t.filter(pl.col("siegbahn").is_in(["Lα1", "Lβ1", "Lγ1", "Lβ2", "Lα2"]))
    order = np.argsort(lines["energy_eV"].to_numpy())
    peaks = PeakList(
        pl.DataFrame(
            {
                "energy_eV": lines["energy_eV"].to_numpy()[order],
                "intensity": 1000.0 * lines["rel_intensity"].to_numpy()[order],
            }
        ),
        "energy",
        None,
    )
    inst = replace(Instrument(), tube_kV=40.0)
    rep = match_peaks(peaks, [xray], MatchParameters(instrument=inst)).report()
    assert "Pb K" in rep["xray"]["not_excited"]
    assert "Pb K" not in {el["species"] for el in rep["elements"]}
    assert {el["species"]: el["verdict_level"] for el in rep["elements"]}["Pb L"] >= 2


def test_text_summary_speaks_xrf(xray):
    rep = match_peaks(_fe_with_rh_scatter(), [xray], MatchParameters()).report()
    text = summary_text(rep)
    assert "temperature" not in text and "instrument Rh tube 40 kV" in text
    assert "Rh Kα1/Kα2 from the tube, Compton-scattered at 90°" in text
    # Energies to 1 eV: Fe K is now assigned (probable on Kα + Kβ), so its
    # reference lines are listed: Fe Kα1 6405.2 eV (Elam, the shipped set).
    assert "6405" in text and "6405.2" not in text
