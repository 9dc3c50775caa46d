"""Tests of workbench/app/_services.py: edit record, zoom, Boltzmann line, argv."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest

from workbench.app import _services as sv
from workbench.datamodel import PeakList
from workbench.errors import ValueRangeError


def _peaks() -> PeakList:
    table = pl.DataFrame(
        {"wavelength_nm": [300.0, 400.0, 500.0], "intensity": [10.0, 20.0, None]}
    )  # invented values
    return PeakList(table, "wavelength", "air")


def test_editor_state_becomes_an_explicit_edit_list_with_old_and_new_values():
    original = sv.table_rows(_peaks().table)
    state = {
        "edited_rows": {0: {"intensity": 11.0}, 2: {"intensity": 30.0}, 1: {"intensity": 20.0}},
        "added_rows": [{"wavelength_nm": 450.0, "intensity": 5.0}, {}],
        "deleted_rows": [2],
    }
    edits = sv.peak_edits(original, state)
    # Row 2's "change" to its own value is no edit; row 3 is deleted so its change is dropped;
    # the empty added row is ignored (bookkeeping rules of peak_edits; common practice).
    assert edits == [
        {"action": "changed", "row": 1, "column": "intensity", "old": 10.0, "new": 11.0},
        {"action": "deleted", "row": 3, "old": {"wavelength_nm": 500.0, "intensity": None}},
        {"action": "added", "new": {"wavelength_nm": 450.0, "intensity": 5.0}},
    ]


def test_applying_edits_gives_the_corrected_sorted_list():
    peaks = _peaks()
    edits = sv.peak_edits(
        sv.table_rows(peaks.table),
        {"edited_rows": {0: {"wavelength_nm": 310.0}}, "added_rows":
         [{"wavelength_nm": 350.0, "intensity": 1.0}], "deleted_rows": [1]},
    )  # fmt: skip
    out = sv.apply_peak_edits(peaks, edits)
    assert out.table["wavelength_nm"].to_list() == [310.0, 350.0, 500.0]  # sorted after edits
    assert out.medium == "air" and out.axis == "wavelength"
    assert out.extra["peak_edits"] == 3
    assert peaks.table["wavelength_nm"].to_list() == [300.0, 400.0, 500.0]  # original untouched


def test_no_edits_returns_the_same_list():
    peaks = _peaks()
    assert sv.apply_peak_edits(peaks, []) is peaks


@pytest.mark.parametrize("bad", [None, "abc", -5.0, 0.0])
def test_a_bad_position_is_refused_naming_the_row(bad):
    peaks = _peaks()
    edits = [{"action": "changed", "row": 2, "column": "wavelength_nm", "old": 400.0, "new": bad}]
    with pytest.raises(ValueRangeError, match="row 2"):
        sv.apply_peak_edits(peaks, edits)


def test_an_added_row_without_position_is_named():
    edits = [{"action": "added", "new": {"intensity": 3.0}}]
    with pytest.raises(ValueRangeError, match="added row 1"):
        sv.apply_peak_edits(_peaks(), edits)


def test_deleting_everything_is_refused():
    edits = [{"action": "deleted", "row": i, "old": {}} for i in (1, 2, 3)]
    with pytest.raises(ValueRangeError, match="every peak"):
        sv.apply_peak_edits(_peaks(), edits)


def test_store_argument_is_found_among_other_arguments():
    assert sv.store_root_from_argv(["-q", "--store", "/tmp/x", "tests"]) == Path("/tmp/x")
    assert sv.store_root_from_argv(["-q"]) is None


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
    lo, hi = sv.zoom_range(_report(), species="Qa I")
    assert lo < 300.0 and hi > 320.0 and hi - lo < 25.0  # 20 nm span plus 5 % margins


def test_zoom_to_a_warning_spans_its_positions():
    lo, hi = sv.zoom_range(_report(), warning_index=0)
    assert lo < 410.0 < 410.02 < hi and hi - lo < 3.0
    assert sv.zoom_range(_report(), warning_index=1) is None  # no positions to show


def test_interference_spans_only_for_overlap_warnings():
    spans = sv.interference_spans(_report())
    assert len(spans) == 1
    lo, hi, _ = spans[0]
    assert lo == pytest.approx(410.0 - 0.06) and hi == pytest.approx(410.02 + 0.06)


def test_boltzmann_line_is_the_engines_fit():
    # Invented fit y = 7.5 − 1.25·E over points at E = 1..3 eV: the end points follow from
    # the slope and intercept alone (arithmetic), not from the points' centroid (2, 4).
    report = _report()
    report["temperature"]["estimate"]["plot"].update(slope_per_eV=-1.25, intercept=7.5)
    xs, ys = sv.boltzmann_fit_line(report)
    assert xs == [1.0, 3.0]
    assert ys == [pytest.approx(6.25), pytest.approx(3.75)]


def test_boltzmann_line_needs_the_fit():
    assert sv.boltzmann_fit_line(_report()) is None  # no slope/intercept in the report
    report = _report()
    report["temperature"]["estimate"]["plot"].update(slope_per_eV=float("nan"), intercept=1.0)
    assert sv.boltzmann_fit_line(report) is None


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
    xs, ys = sv.boltzmann_fit_line(report)
    x, y = np.array(plot["E_upper_eV"]), np.array(plot["ln_I_lambda_over_gA"])
    slope = (ys[1] - ys[0]) / (xs[1] - xs[0])
    resid = y - (ys[0] + slope * (x - xs[0]))
    assert abs(float(np.mean(resid))) < 1e-6 * max(1.0, float(np.ptp(y)))  # LS: mean residual 0
    assert xs == [float(x.min()), float(x.max())]
    assert slope == pytest.approx(-e / (k * est["temperature_K"]), rel=1e-6)


def test_observed_sticks_are_scaled_to_the_strongest():
    sticks = sv.observed_sticks(_report())
    assert sticks[0]["height"] == 1.0


def test_markdown_escape_neutralises_markup():
    assert sv.md_escape("**bold** <b>x</b>") == r"\*\*bold\*\* \<b\>x\</b\>"


def test_analysis_parameters_keep_the_rows_only_with_edits():
    import hashlib
    import json

    from workbench.matching import MatchParameters, ToleranceSpec

    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", 5000.0))
    rows = sv.table_rows(_peaks().table)
    plain = sv.analysis_parameters(params, {"medium": "air"}, rows, [], ["optical"])
    # SHA-256 of the rows' compact sorted-key JSON (hashlib; the digest rule in _services).
    expected = hashlib.sha256(
        json.dumps(rows, sort_keys=True, separators=(",", ":")).encode()
    ).hexdigest()
    assert plain["peak_table"] == {
        "n_rows": 3, "rows_sha256": expected, "edits": [], "n_edits": 0
    }  # fmt: skip
    edits = [{"action": "deleted", "row": 1, "old": rows[0]}]
    edited = sv.analysis_parameters(params, {}, rows, edits, ["optical"])
    assert edited["peak_table"]["original_rows"] == rows
    assert edited["peak_table"]["rows_sha256"] == expected


def test_reference_lines_from_a_saved_report_are_rescaled_per_species():
    # Invented report fragment (schema-1 layout): one matched and one missing line.
    refs = sv.report_reference_lines(_report(), ["Qa I", "Zz I"])
    assert [(r["position"], r["expected_rel"]) for r in refs] == [(300.0, 1.0), (320.0, 0.5)]
    assert {r["species"] for r in refs} == {"Qa I"} and refs[0]["ion_stage"] == "I"
