"""Tests of workbench/matching/xrf_view.py: XRF artefacts and overlaps as every face shows them.

The records are invented fragments in the layout of docs/result-schema.md
(``xray.artefact_peaks``, ``xray.artefacts_without_peak``); the energies
are plausible but invented, except where a source is named.
"""

from __future__ import annotations

import pytest

from workbench.matching import presentation as pr
from workbench.matching import xrf_view as xv


def _xray() -> dict:
    # Invented: a Rh tube's Rayleigh line, an argon peak, one sum peak stronger than its
    # prediction, and two predicted artefacts the peak finder did not separate.
    return {
        "instrument": {"anode": "Rh", "tube_kV": 40, "detector": "Si", "fwhm_MnKa_eV": 140,
                       "atmosphere": "air"},
        "artefact_peaks": [
            {"peak": 4, "observed_eV": 20180.4, "intensity": 900.0, "kinds": "rayleigh",
             "origin": "Rh Kα1/Kα2 from the tube, scattered by the sample (Rayleigh)",
             "predicted_intensity": None, "explained": True, "residual_intensity": 0.0},
            {"peak": 1, "observed_eV": 2953.2, "intensity": 400.0, "kinds": "air",
             "origin": "Ar Kα from argon in the air path", "predicted_intensity": None,
             "explained": True, "residual_intensity": 0.0},
            {"peak": 3, "observed_eV": 17100.7, "intensity": 650.0, "kinds": "compton,sum",
             "origin": "Rh Kα Compton; pile-up sum", "predicted_intensity": 120.0,
             "explained": False, "residual_intensity": 530.0},
        ],
        "artefacts_without_peak": [
            {"energy_eV": 8805.4, "kinds": "escape", "origin": "Si Kα escape of the 10545 eV peak",
             "expected_counts": 329.4},
            {"energy_eV": 3191.0, "kinds": "air", "origin": "Ar Kβ from argon in the air path",
             "expected_counts": None},
        ],
    }  # fmt: skip


def test_rows_list_every_artefact_by_energy_with_kind_and_use():
    rows = xv.artefact_rows(_xray())
    assert [round(r["energy_eV"], 1) for r in rows] == [2953.2, 3191.0, 8805.4, 17100.7, 20180.4]
    by_e = {round(r["energy_eV"]): r for r in rows}
    assert by_e[2953]["kind"] == "argon in air (Ar K)" and by_e[2953]["separated"]
    assert by_e[3191]["kind"] == "argon in air (Ar K)" and not by_e[3191]["separated"]
    assert by_e[8805]["kind"] == "escape peak" and by_e[8805]["expected_counts"] == 329.4
    assert by_e[17101]["kind"] == "tube scatter (Compton) + sum (pile-up) peak"
    assert by_e[17101]["evidence"] == "excess only"  # explained false: the excess stays
    assert by_e[20180]["kind"] == "tube scatter (Rayleigh)" and by_e[20180]["evidence"] == "none"
    assert xv.artefact_rows(None) == [] and xv.artefact_rows({}) == []


def test_table_shows_energies_to_one_ev_and_observed_against_predicted():
    table = xv.artefact_table(_xray())
    assert [t["Energy (eV)"] for t in table] == ["2953", "3191", "8805", "17101", "20180"]
    sum_row = table[3]
    assert sum_row["Observed peak height"] == "650" and sum_row["Predicted"] == "height 120"
    assert sum_row["Used as evidence"] == "only the excess over the prediction"
    escape = table[2]
    assert escape["Observed peak height"] == "no separate peak"
    assert escape["Predicted"] == "about 329 counts"
    assert table[0]["Predicted"] == "not predicted"  # argon: depends on the path


def test_half_up_rounding_to_one_ev():
    # 4466.5 eV prints as 4467 (half up, as tables print), never as 4466.5 or 4466.
    x = {"artefact_peaks": [{"observed_eV": 4466.5, "kinds": "escape", "origin": "o",
                             "intensity": 1.0, "explained": True}]}  # fmt: skip
    assert xv.artefact_table(x)[0]["Energy (eV)"] == "4467"


def test_text_lines_split_labelled_peaks_from_predicted_ones():
    text = xv.artefact_text_lines(_xray())
    head = text.index("artefact peaks (instrument, not sample; not evidence for any element):")
    tail = text.index(
        "predicted artefacts with no separate peak (merged with a neighbour or weak):"
    )
    assert head == 0 and tail == 4
    assert text[1].split() == ["2953", "eV", "argon", "in", "air", "(Ar", "K):", "Ar", "Kα",
                               "from", "argon", "in", "the", "air", "path"]  # fmt: skip
    assert "the excess is kept as evidence" in text[2]
    assert text[5].endswith("air path") and text[6].endswith("(about 329 counts expected)")
    assert xv.artefact_text_lines(None) == []


def test_marks_share_the_observed_sticks_scale():
    report = {
        "input": {"unit": "eV", "axis": "energy"},
        "lines": [{"observed_eV": 10545.0, "intensity": 450.0, "status": "assigned"}],
        "xray": _xray(),
    }
    marks = {round(m["position"]): m for m in xv.artefact_marks(report)}
    # The tallest of lines and artefact peaks is the Rayleigh peak (900): the scale's top.
    assert marks[20180]["height"] == pytest.approx(1.0)
    assert marks[2953]["height"] == pytest.approx(400.0 / 900.0)
    assert marks[8805]["height"] is None and not marks[8805]["separated"]
    (stick,) = pr.observed_sticks(report)
    assert stick["height"] == pytest.approx(450.0 / 900.0)
    assert "escape" in marks[8805]["text"] and "no separate peak" in marks[8805]["text"]


def test_overlap_in_ev_against_the_detector_fwhm():
    # At Mn Kα (5898.75 eV, the instrument's reference energy) the FWHM model returns the
    # stated 140 eV by construction (workbench.xray.detector).
    w = {"kind": "unresolved_overlap", "elements": ["Ba L", "Ti K"],
         "positions": [5873.75, 5923.75], "separation": 50.0}  # fmt: skip
    text = pr.overlap_text(w, "eV", _xray())
    assert "50 eV apart; unresolved at this detector, whose FWHM is 140 eV here" in text
    assert "R ≥" not in text
    w["separation"], w["positions"] = 200.0, [5798.75, 5998.75]
    assert "200 eV apart; resolved at this detector" in pr.overlap_text(w, "eV", _xray())
    # Without the xray record (a wavelength result) nothing X-ray is said.
    assert "detector" not in pr.overlap_text(w, "eV")


def test_decision_names_needed_families_first_with_their_settling_lines():
    # Ti Kα1 4510.84, Ti Kβ1 4931.81 eV (Elam via xraydb, the shipped xray set, rounded).
    d = {"Ba L": {"needed": False, "amplitude": 0.0, "uncertainty": 20.0,
                  "settling_lines_eV": [4828.3]},
         "Ti K": {"needed": True, "amplitude": 2912.0, "uncertainty": 409.0,
                  "settling_lines_eV": [4504.86, 4510.84, 4931.81]}}  # fmt: skip
    assert xv.decision_text(d) == (
        "settled on the spectrum: Ti K needed (on 4,505, 4,511, 4,932 eV); Ba L not needed"
    )
    assert xv.decision_text(None) == ""


def test_ruled_out_notes_read_as_one_list():
    warnings = [
        {"kind": "overlap_ruled_out", "ruled_out": "La L", "elements": ["La L", "Ti K"],
         "observed": 4508.2, "settle": {"La L": {"found": [], "missing": [5038.0]}}},
        {"kind": "overlap_ruled_out", "ruled_out": "Ba L", "elements": ["Ba L", "Ti K"],
         "observed": 4508.2,
         "settle": {"Ba L": {"found": [4466.3], "missing": [5154.4, 5531.1]}}},
        {"kind": "unresolved_overlap", "elements": ["Pb L", "As K"], "observed": 10545.0},
    ]  # fmt: skip
    assert xv.ruled_out_lines(warnings) == [
        "Ba L: a line under the Ti K peak at 4508 eV; its strong lines at 5154, 5531 eV are "
        "missing",
        "La L: a line under the Ti K peak at 4508 eV; its strong line at 5038 eV is missing",
    ]
    assert xv.ruled_out_summary(warnings).startswith("Ruled out on their own lines")
    assert xv.ruled_out_summary(warnings[2:]) == ""
    # Not repeated among the other warnings of the app.
    report = {"input": {"axis": "energy"}, "warnings": warnings}
    assert pr.other_warnings(report) == []


def test_interferences_grouped_by_peak_with_the_fit_decision():
    # Invented report: two overlap warnings on one peak (Pb M with S K and with Mo L),
    # one decided by the spectrum fit, the other not fitted.
    report = {
        "input": {"unit": "eV", "axis": "energy"},
        "xray": _xray(),
        "elements": [
            {"species": "Pb M", "verdict_level": 3},
            {"species": "S K", "verdict_level": 0},
            {"species": "Mo L", "verdict_level": 1},
        ],
        "warnings": [
            {"kind": "unresolved_overlap", "elements": ["Pb M", "S K"], "observed": 2356.2,
             "separation": 32.6, "positions": [2342.0, 2309.4],
             "decision": {"Pb M": {"needed": True}, "S K": {"needed": False}}},
            {"kind": "unresolved_overlap", "elements": ["Mo L", "Pb M"], "observed": 2356.2,
             "separation": 51.9, "positions": [2342.0, 2393.9],
             "settle": {"Mo L": {"found": [2394.0], "missing": [2014.0, 2119.0]}}},
            {"kind": "reference_overlap", "elements": ["Ca K", "Cd L"], "observed": None},
        ],
    }  # fmt: skip
    (line,) = xv.interference_lines(report)
    assert line.split()[:4] == ["2356", "eV", "Pb", "M,"]  # best verdict first
    assert "Mo L (52 eV apart)" in line and "S K (33 eV apart)" in line
    assert "the spectrum fit needs Pb M, not S K" in line
    assert "Mo L not fitted: settle on its other lines (clean lines at 2394 eV; " in line
    assert "strong lines missing at 2014, 2119 eV" in line
    # The FWHM at 2356 eV from the 140 eV-at-Mn-Kα model is below 140 eV (FWHM grows as
    # √E; workbench.xray.detector): stated, so the reader sees why the lines are one peak.
    fwhm = int(line.split("(FWHM ")[1].split()[0])
    assert 80 < fwhm < 140
    assert xv.interference_lines({"input": {"axis": "wavelength"}, "warnings": []}) == []
