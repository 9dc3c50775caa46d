"""Spreadsheet workbooks (workbench.io.spreadsheet): invented workbooks (test inputs).

The workbooks are written by tests/io/xlsx_fixture.py (the smallest
SpreadsheetML parts, ECMA-376; structure from memory of the standard) and
read back through the product's readers, as a user's file would be.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.io.xlsx_fixture import xlsx_bytes
from workbench.datamodel import PeakList, Spectrum
from workbench.errors import FileFormatError
from workbench.io import read_any, read_spectrum
from workbench.io.spreadsheet import looks_like_spreadsheet

# Ca II K, Ca II H, Ca I (air nm; NIST ASD, from memory) and invented heights.
LINES = [[393.366, 100.5], [396.847, 80.25], [422.673, 60.125]]


def test_a_line_table_after_a_settings_sheet():
    book = xlsx_bytes(
        {
            "Info": [["Instrument", "invented spark stand"], ["Operator", "demo"]],
            "Lines": [["Lab 7 export"], ["Wavelength", "Intensity"], ["nm", "counts"], *LINES],
        }
    )
    assert looks_like_spreadsheet(book)
    peaks = read_any(book, name="lines.xlsx")
    assert isinstance(peaks, PeakList)
    np.testing.assert_allclose(peaks.positions, [r[0] for r in LINES])
    np.testing.assert_allclose(peaks.intensities, [r[1] for r in LINES])
    notes = peaks.source.notes
    assert "sheet 'Lines' (other sheets, not read: 'Info')" in notes
    assert "units on line 3 joined to the column names above them" in notes


def test_every_stored_digit_is_kept():
    # Floats are read as floats and written with repr: no rounding to 9 digits
    # (the reader's text view gives 0.333333333 and 0 for 1e-30).
    x = np.linspace(400.0, 401.0, 40) + 1.0 / 3.0
    y = 1e-30 * (1.0 + np.arange(40.0))
    book = xlsx_bytes(
        {"S": [["wavelength (nm)", "flux"], *zip(x.tolist(), y.tolist(), strict=True)]}
    )
    spec = read_spectrum(book, name="s.xlsx")
    assert np.array_equal(spec.x, x) and np.array_equal(spec.y, y)


def test_a_headerless_block_and_a_text_cell_among_the_numbers():
    book = xlsx_bytes({"S": [*LINES, [430.0, "saturated?"], [431.0, 5.0]]})
    with pytest.raises(FileFormatError, match="row 4, column"):
        read_any(book, name="s.xlsx", unit="nm")


def test_a_workbook_without_a_table_names_its_sheets():
    book = xlsx_bytes({"Notes": [["see the CSV"], ["1", 2.0]], "Empty": [[None]]})
    with pytest.raises(FileFormatError, match="no sheet holding a table of numbers") as err:
        read_any(book, name="notes.xlsx")
    assert "'Notes', 'Empty'" in str(err.value)


@pytest.mark.parametrize(
    "data",
    [
        b"PK\x03\x04" + b"\x00" * 60,  # a broken zip
        b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 600,  # an OLE2 header and nothing else
    ],
)
def test_a_damaged_workbook_is_one_clear_error(data):
    if not looks_like_spreadsheet(data):
        # Not recognised as a workbook at all: the text reader's error instead.
        with pytest.raises(FileFormatError):
            read_any(data, name="x.xlsx")
        return
    with pytest.raises(FileFormatError, match="cannot be read"):
        read_any(data, name="x.xls")


def test_a_spectrum_in_a_workbook_is_matched_like_its_csv():
    # The same invented spectrum as a workbook and as CSV: the same result record
    # apart from the input's name, bytes and format notes.
    from workbench.matching import analyse_input

    rng = np.random.default_rng(11)
    x = np.linspace(380.0, 440.0, 2000)
    y = rng.normal(100.0, 5.0, x.size)
    for c, h in ((393.366, 5000.0), (396.847, 4000.0), (422.673, 3000.0)):
        y += h * np.exp(-0.5 * ((x - c) / 0.05) ** 2)
    rows = [["wavelength (nm)", "intensity"], *zip(x.tolist(), y.tolist(), strict=True)]
    book = analyse_input(xlsx_bytes({"S": rows}), name="s.xlsx", medium="air").report
    text = "".join(f"{a!r},{b!r}\n" for a, b in rows[1:])
    csv = analyse_input(
        ("wavelength (nm),intensity\n" + text).encode(), name="s.csv", medium="air"
    ).report
    calls = lambda r: [(e["species"], e["verdict"]) for e in r["elements"]]  # noqa: E731
    assert calls(book) == calls(csv) and calls(book)[0][1] == "established"
    assert isinstance(read_any(xlsx_bytes({"S": rows}), name="s.xlsx"), Spectrum)


def _two_samples() -> bytes:
    second = [[w, 2.0 * h] for w, h in LINES]
    return xlsx_bytes(
        {
            "Info": [["Operator", "demo"]],
            "2024": [["wavelength (nm)", "intensity"], *LINES],
            "Sample B": [["wavelength (nm)", "intensity"], *second],
        }
    )


@pytest.mark.parametrize(
    ("block", "factor"), [(None, 1.0), ("Sample B", 2.0), (2, 2.0), ("2024", 1.0), (1, 1.0)]
)
def test_the_sheet_asked_for_is_read(block, factor):
    peaks = read_any(_two_samples(), name="two.xlsx", block=block)
    np.testing.assert_allclose(peaks.intensities, [factor * r[1] for r in LINES])


def test_a_sheet_that_is_not_there_names_the_sheets():
    with pytest.raises(FileFormatError, match="has no sheet 'Sample C'") as err:
        read_any(_two_samples(), name="two.xlsx", block="Sample C")
    assert "'Info', '2024', 'Sample B'" in str(err.value)
    with pytest.raises(FileFormatError, match="has no sheet 7"):
        read_any(_two_samples(), name="two.xlsx", block=7)


def test_the_peaks_command_takes_a_sheet(tmp_path, capsys):
    from workbench.cli import main

    f = tmp_path / "two.xlsx"
    f.write_bytes(_two_samples())
    assert main(["peaks", str(f), "--block", "Sample B"]) == 0
    out = capsys.readouterr().out
    assert "sheet 'Sample B' (other sheets, not read: 'Info', '2024')" in out
