"""Tests of workbench/app/inputs.py: the edit record and the one reader call."""

from __future__ import annotations

import polars as pl
import pytest

from workbench.app import inputs as sv
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


def test_columns_by_header_reach_the_reader_and_the_recorded_options():
    # pvlib 0.16.1's ASTM G173-03 (tests/data/realspectra/pvlib): the app's
    # column choice is the CLI's --columns text, parsed by the same function.
    from tests.realdata.loader import DATA

    data = (DATA / "pvlib" / "ASTMG173.csv").read_bytes()
    got = sv.load_input(
        data, "ASTMG173.csv", unit="nm", mode="absorption", columns="intensity=global"
    )
    assert "x from 'wavelength' (unit nm), y from 'global'" in got.notes
    assert got.options["columns"] == "intensity=global"
    plain = sv.load_input(data, "ASTMG173.csv", unit="nm", mode="absorption")
    assert "columns" not in plain.options


@pytest.mark.parametrize(("text", "why"), [("global", "not ROLE=HEADER"), ("colour=x", "role")])
def test_a_malformed_column_choice_is_one_clear_error(text, why):
    from workbench.errors import ColumnMappingError

    with pytest.raises(ColumnMappingError, match=why):
        sv.load_input(b"wavelength (nm),counts\n400,1\n401,2\n", "t.csv", columns=text)


@pytest.mark.parametrize(("text", "recorded"), [("Sample B", "Sample B"), (" 2 ", 2), ("", None)])
def test_the_block_or_sheet_reaches_the_reader_and_the_recorded_options(text, recorded):
    # The CLI's --block words (workbench.io.parse_block_choice): a workbook's sheet.
    from tests.io.xlsx_fixture import xlsx_bytes

    rows = [["wavelength (nm)", "intensity"], [393.366, 1.0], [396.847, 2.0], [422.673, 3.0]]
    doubled = [rows[0], *[[w, 2.0 * h] for w, h in rows[1:]]]
    book = xlsx_bytes({"Info": [["Operator", "demo"]], "Sample A": rows, "Sample B": doubled})
    got = sv.load_input(book, "two.xlsx", block=text)
    assert got.options.get("block") == recorded
    expect = [2.0, 4.0, 6.0] if recorded is not None else [1.0, 2.0, 3.0]
    assert got.peaks.intensities.tolist() == expect
