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


def test_boltzmann_line_has_slope_minus_one_over_kT():
    # 1 eV / k_B = 11604.518 K (CODATA 2018 via scipy.constants), so the slope is −1 per eV.
    xs, ys = sv.boltzmann_fit_line(_report())
    assert xs == [1.0, 3.0]
    assert (ys[1] - ys[0]) / (xs[1] - xs[0]) == pytest.approx(-1.0, rel=1e-6)
    assert (ys[0] + ys[1]) / 2 == pytest.approx(4.0)  # passes through the centroid (2, 4)


def test_observed_sticks_are_scaled_to_the_strongest():
    sticks = sv.observed_sticks(_report())
    assert sticks[0]["height"] == 1.0


def test_markdown_escape_neutralises_markup():
    assert sv.md_escape("**bold** <b>x</b>") == r"\*\*bold\*\* \<b\>x\</b\>"
