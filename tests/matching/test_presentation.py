"""Tests of workbench/matching/presentation.py: display shaping of a match result."""

from __future__ import annotations

import polars as pl
import pytest

from workbench.datamodel import PeakList
from workbench.matching import presentation as pr


def _report() -> dict:
    # Invented report fragment in the schema-1 layout (workbench.matching.report).
    return {
        "input": {"unit": "nm"},
        "elements": [
            {"species": "Qa I", "matched_lines": [
                {"observed_nm": 300.01, "reference_nm": 300.0, "expected_rel": 1.0}],
             "missing_lines": [{"reference_nm": 320.0, "expected_rel": 0.5}]},
        ],
        "warnings": [
            {"kind": "reference_overlap", "message": "m", "positions": [410.0, 410.02]},
            {"kind": "unassigned_lines", "message": "n"},
        ],
        "lines": [{"observed_nm": 300.01, "tolerance_nm": 0.06, "intensity": 2.0}],
        "temperature": {"estimate": {"temperature_K": 11604.518, "plot": {
            "E_upper_eV": [1.0, 2.0, 3.0], "ln_I_lambda_over_gA": [5.0, 4.0, 3.0]}}},
    }  # fmt: skip


def test_zoom_to_an_element_spans_its_matched_and_missing_lines():
    lo, hi = pr.zoom_range(_report(), species="Qa I")
    assert lo < 300.0 and hi > 320.0 and hi - lo < 25.0  # 20 nm span plus 5 % margins


def test_zoom_to_a_warning_spans_its_positions():
    lo, hi = pr.zoom_range(_report(), warning_index=0)
    assert lo < 410.0 < 410.02 < hi and hi - lo < 3.0
    assert pr.zoom_range(_report(), warning_index=1) is None  # no positions to show


def test_interference_spans_only_for_overlap_warnings():
    spans = pr.interference_spans(_report())
    assert len(spans) == 1
    lo, hi, _ = spans[0]
    assert lo == pytest.approx(410.0 - 0.06) and hi == pytest.approx(410.02 + 0.06)


def test_boltzmann_line_is_the_engines_fit():
    # Invented fit y = 7.5 − 1.25·E over points at E = 1..3 eV: the end points follow from
    # the slope and intercept alone (arithmetic), not from the points' centroid (2, 4).
    report = _report()
    report["temperature"]["estimate"]["plot"].update(slope_per_eV=-1.25, intercept=7.5)
    xs, ys = pr.boltzmann_fit_line(report)
    assert xs == [1.0, 3.0]
    assert ys == [pytest.approx(6.25), pytest.approx(3.75)]


def test_boltzmann_line_needs_the_fit():
    assert pr.boltzmann_fit_line(_report()) is None  # no slope/intercept in the report
    report = _report()
    report["temperature"]["estimate"]["plot"].update(slope_per_eV=float("nan"), intercept=1.0)
    assert pr.boltzmann_fit_line(report) is None


def test_boltzmann_line_of_a_real_engine_run_lies_on_its_points():
    # Invented Fe I peak list (air wavelengths of strong Fe I lines, NIST ASD, from memory;
    # equal invented intensities). The engine's fit is unweighted least squares
    # (workbench/physics/boltzmann.py), so residuals about the drawn line average to zero,
    # and its slope is −1/(k_B T) (Boltzmann plot definition; CODATA via scipy.constants).
    import numpy as np
    from scipy.constants import e, k

    from workbench.matching import MatchParameters, ToleranceSpec
    from workbench.matching.analyse import analyse_peaks

    wl = [
        344.0608,
        358.1193,
        371.9935,
        373.4864,
        374.5561,
        381.5840,
        382.0425,
        385.9911,
        404.5813,
        406.3594,
        426.0474,
        430.7902,
        438.3545,
        440.4750,
        495.7596,
        527.0357,
    ]
    table = pl.DataFrame({"wavelength_nm": wl, "intensity": [1000.0] * len(wl)})
    peaks = PeakList(table, "wavelength", "air")
    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", 5000.0))
    report = analyse_peaks(peaks, ["optical"], params).report
    est = (report.get("temperature") or {}).get("estimate") or {}
    if not est.get("temperature_K"):
        pytest.skip("the engine gave no temperature estimate for this list")
    plot = est["plot"]
    xs, ys = pr.boltzmann_fit_line(report)
    x, y = np.array(plot["E_upper_eV"]), np.array(plot["ln_I_lambda_over_gA"])
    slope = (ys[1] - ys[0]) / (xs[1] - xs[0])
    resid = y - (ys[0] + slope * (x - xs[0]))
    assert abs(float(np.mean(resid))) < 1e-6 * max(1.0, float(np.ptp(y)))  # LS: mean residual 0
    assert xs == [float(x.min()), float(x.max())]
    assert slope == pytest.approx(-e / (k * est["temperature_K"]), rel=1e-6)


def test_observed_sticks_are_scaled_to_the_strongest():
    sticks = pr.observed_sticks(_report())
    assert sticks[0]["height"] == 1.0


def test_reference_lines_from_a_saved_report_are_rescaled_per_species():
    # Invented report fragment (schema-1 layout): one matched and one missing line.
    refs = pr.report_reference_lines(_report(), ["Qa I", "Zz I"])
    assert [(r["position"], r["expected_rel"]) for r in refs] == [(300.0, 1.0), (320.0, 0.5)]
    assert {r["species"] for r in refs} == {"Qa I"} and refs[0]["ion_stage"] == "I"


def _groups_report() -> dict:
    # Invented report fragment (schema-1 layout): two warnings on one observed line,
    # one on another, one reference-only pair; Qa I probable, the rest weaker.
    return {
        "input": {"unit": "nm", "axis": "wavelength"},
        "elements": [
            {"species": "Qa I", "verdict_level": 2},
            {"species": "Qb I", "verdict_level": 1},
            {"species": "Qc I", "verdict_level": 0},
        ],
        "warnings": [
            {"kind": "unresolved_overlap", "message": "m0", "observed": 400.0,
             "elements": ["Qb I", "Qc I"], "positions": [399.99, 400.01]},
            {"kind": "unresolved_overlap", "message": "m1", "observed": 500.0,
             "elements": ["Qa I", "Qb I"], "positions": [499.99, 500.01]},
            {"kind": "unresolved_overlap", "message": "m2", "observed": 500.0,
             "elements": ["Qa I", "Qc I"], "positions": [499.99, 500.02]},
            {"kind": "lte", "message": "n"},
            {"kind": "reference_overlap", "message": "m3", "observed": None,
             "elements": ["Qb I", "Qc I"], "positions": [600.0, 600.05]},
        ],
    }  # fmt: skip


def test_interferences_are_grouped_by_observed_line_probable_first():
    groups = pr.interference_groups(_groups_report())
    assert [g.position for g in groups] == [500.0, 400.0, None]
    first = groups[0]
    assert first.touches_probable and first.warning_indices == (1, 2)
    assert first.species == ("Qa I", "Qb I", "Qc I")
    assert not any(g.touches_probable for g in groups[1:])


def test_a_warning_names_the_species_its_show_draws():
    assert pr.warning_species(_groups_report(), 2) == ["Qa I", "Qc I"]
    assert pr.warning_species(_groups_report(), 99) == []


@pytest.mark.parametrize(
    "value, unit, shown",
    [(4512.2, "eV", "4,512"), (250.689695, "nm", "250.6897"), (None, "nm", "–")],
)
def test_positions_are_shown_to_1_eV_or_0_0001_nm(value, unit, shown):
    # Display rule of issue 10/13: energies to 1 eV, wavelengths to 0.0001 nm.
    assert pr.format_position(value, unit) == shown


def test_axis_titles_state_quantity_medium_and_unit():
    assert pr.axis_title("wavelength", "nm", "air") == "wavelength in air (nm)"
    assert pr.axis_title("wavelength", "nm", "vacuum") == "wavelength in vacuum (nm)"
    assert pr.axis_title("energy", "eV", None) == "photon energy (eV)"


@pytest.mark.slow
def test_an_xrf_result_is_shown_in_eV_with_families_and_no_temperature():
    # The invented XRF demo (workbench/demo.py: Pb L, Zn K, Ti K, ... on an energy axis).
    from workbench.demo import demo_file
    from workbench.matching import analyse_input

    report = analyse_input(demo_file("white_pigment"), name="white.csv").report
    summary = pr.result_summary(report)
    assert summary.working_temperature_K is None and not summary.temperature_estimated
    assert "no excitation temperature" in summary.temperature_text
    assert all(kind not in ("temperature", "lte") for _, kind, _ in pr.other_warnings(report))
    rows = pr.element_rows(report, include_unsupported=False)
    assert rows[0]["Species"] == "Pb L"  # a family label
    shown = rows[0]["Strongest matched (eV)"].split(", ")
    assert shown and all("." not in v for v in shown)  # whole electronvolts
    overlap = [w for w in report["warnings"] if w["kind"] in pr.INTERFERENCE_KINDS]
    assert overlap
    text = pr.overlap_text(overlap[0], "eV")
    assert "eV apart" in text and "R ≥" not in text
