"""The bulk delimited reader and its streaming diagnosis for large files."""

from __future__ import annotations

import numpy as np
import pytest

import workbench.io.tabular as tabular
from workbench.errors import FileFormatError
from workbench.io import read_peak_list
from workbench.io.fastcsv import NeedCarefulParser, read_fast

# Invented values (test inputs, not reference data).
GOOD = b"# medium: air\nwavelength (nm),intensity\n400.5,10\n401.5,20\n402.5,30\n"


def test_read_fast_columns_and_layout():
    ft = read_fast(GOOD, "g.csv")
    np.testing.assert_array_equal(ft.columns[0], [400.5, 401.5, 402.5])
    np.testing.assert_array_equal(ft.columns[1], [10.0, 20.0, 30.0])
    # Line 1 comment, line 2 header, data from line 3 (counted by hand).
    assert ft.first_data_line == 3 and ft.line_of(2) == 5
    assert GOOD[ft.offset :].startswith(b"400.5")
    assert ft.head.header == ["wavelength (nm)", "intensity"]


@pytest.mark.parametrize(
    "data",
    [
        GOOD + b"403.5,40 counts\n",  # a unit in a cell: only the careful parser reads it
        GOOD + b"403.5,\n",  # an empty cell
        GOOD + b"% 404.5,1\n",  # a comment line among the data
        GOOD.replace(b"\n", b"\r"),  # old Mac line ends
    ],
)
def test_read_fast_hands_unusual_files_to_the_careful_parser(data):
    with pytest.raises(NeedCarefulParser):
        read_fast(data, "u.csv")


# Past the 64 KiB head, so only the streaming pass sees the bad row: header on
# line 2, rows from line 3, so the appended row is line 3 + 8000 (by hand).
_ROWS = b"".join(b"%.1f,%d\n" % (500.0 + i / 10, i) for i in range(8000))
_BIG = GOOD[: GOOD.index(b"400.5")] + _ROWS


@pytest.mark.parametrize(
    ("tail", "message"),
    [
        (b"1403.5,40,7\n", "row 8003 has 3 cells but the header has 2"),
        (b"1403.5,forty\n", "row 8003, column 'intensity' holds 'forty'"),
        (b"#VALUE!,3\n", "row 8003 starts with the spreadsheet error '#VALUE!'"),
        (b"1403.5,40 counts\n", "units in cells, empty cells or comment lines"),
    ],
)
def test_large_files_are_diagnosed_by_streaming(monkeypatch, tail, message):
    assert len(_BIG) > 65_536
    # Pretend every file is "large" so the streaming pass runs instead of the
    # careful parser (which would hold ~30x the file).
    monkeypatch.setattr(tabular, "CAREFUL_MAX_BYTES", 0)
    with pytest.raises(FileFormatError, match=message.replace("(", r"\(").replace("?", r"\?")):
        read_peak_list(_BIG + tail)


def test_large_file_without_usable_head_is_refused(monkeypatch):
    monkeypatch.setattr(tabular, "CAREFUL_MAX_BYTES", 0)
    with pytest.raises(FileFormatError, match="line breaks other than LF/CRLF"):
        read_peak_list(GOOD.replace(b"\n", b"\r"))


def test_long_preamble_widens_the_head():
    # 100 kB of instrument metadata before the table (more than the first 64 KiB).
    preamble = b"".join(b"# setting %d = %d\n" % (i, i) for i in range(6000))
    assert len(preamble) > 65_536
    ft = read_fast(preamble + GOOD, "p.csv")
    np.testing.assert_array_equal(ft.columns[0], [400.5, 401.5, 402.5])
    # 6000 comment lines, then GOOD's comment and header: data on line 6003.
    assert ft.first_data_line == 6003
