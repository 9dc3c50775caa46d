"""Hostile inputs from issue 11 (items 9-11) and the bulk reader's equivalence (issue 14).

Every hostile file is built here, small; each test failed on commit 598942b
(a traceback, a hang, gigabytes of memory, or a silent acceptance). The hang
guards (``_within``) give tens of seconds to what now takes milliseconds:
they catch a hang, they do not measure speed (that is benchmarks/bench_io.py).
"""

from __future__ import annotations

import io
import signal
import subprocess
import sys
import textwrap
from collections.abc import Callable
from datetime import date

import numpy as np
import polars as pl
import pytest

import workbench.io.tabular as tabular
from workbench.datamodel import PeakList, Spectrum
from workbench.errors import FileFormatError, InputError, ValueRangeError
from workbench.io import read_any, read_peak_list, read_spectrum


def _within(seconds: int, fn: Callable[[], object]) -> object:
    def _alarm(signum, frame):
        raise TimeoutError(f"still running after {seconds} s (a hang)")

    old = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(seconds)
    try:
        return fn()
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


def _spectrum_csv(n: int = 200, sep: str = ",") -> str:
    x = np.linspace(400.0, 500.0, n)
    y = 10.0 + np.sin(x)
    rows = "".join(f"{a:.4f}{sep}{b:.4f}\n" for a, b in zip(x, y, strict=True))
    return f"wavelength (nm){sep}intensity\n{rows}"


# --------------------------------------------------------------------------- item 9


def test_cell_longer_than_csv_field_limit_is_one_clear_error():
    # csv's default field limit is 131,072 characters (Python docs, csv.field_size_limit).
    text = 'wavelength (nm),intensity\n656.3,"' + "7" * 140_000 + '"\n486.1,3\n'
    with pytest.raises(InputError):
        read_peak_list(text)
    quoted = '"wavelength (nm)' + "x" * 140_000 + '",intensity\n656.3,1\n486.1,3\n'
    with pytest.raises(FileFormatError, match="longer than"):
        read_peak_list(quoted)


@pytest.mark.parametrize("value", ["nan", "1e400", "-5", "12.5", "abc"])
def test_jcamp_bad_npoints_is_one_clear_error(value):
    text = (
        "##TITLE=t\n##JCAMP-DX=4.24\n##XUNITS=NANOMETERS\n##YUNITS=COUNTS\n"
        f"##FIRSTX=400\n##LASTX=404\n##NPOINTS={value}\n##XYDATA=(X++(Y..Y))\n"
        "400 1 2 3 4 5\n##END=\n"
    )
    with pytest.raises(FileFormatError, match="NPOINTS"):
        read_spectrum(text.encode())


def _parquet(df: pl.DataFrame) -> bytes:
    buf = io.BytesIO()
    df.write_parquet(buf)
    return buf.getvalue()


_POS = [400.0, 410.0, 420.0]


@pytest.mark.parametrize(
    "column",
    [
        pl.Series("intensity", [{"a": 1.0}, {"a": 2.0}, {"a": 3.0}]),  # struct
        pl.Series("intensity", [[1.0], [2.0], [3.0]]),  # list
        pl.Series("intensity", [True, False, True]),  # item 11: Boolean
        pl.Series("intensity", [date(2026, 1, 1), date(2026, 1, 2), date(2026, 1, 3)]),
        pl.Series("intensity", ["1", "2", "3"]),
    ],
)
def test_parquet_non_numeric_intensity_refused(column):
    data = _parquet(pl.DataFrame([pl.Series("wavelength (nm)", _POS), column]))
    with pytest.raises(FileFormatError, match="not numbers"):
        read_peak_list(data)


def test_parquet_bit_flips_never_escape_as_panics():
    df = pl.DataFrame({"wavelength (nm)": _POS * 20, "intensity": list(range(60))})
    data = bytearray(_parquet(df))
    # Every byte position, one bit each (the bit rotates): damaged files must be
    # refused cleanly or read; a Rust panic or any other exception fails here.
    outcomes = {"read": 0, "refused": 0}
    for pos in range(len(data)):
        flipped = bytearray(data)
        flipped[pos] ^= 1 << (pos % 8)
        try:
            read_any(bytes(flipped), kind="peak_list")
            outcomes["read"] += 1
        except InputError:
            outcomes["refused"] += 1
    assert outcomes["refused"] > 0 and sum(outcomes.values()) == len(data)


def test_largest_double_intensity_refused_with_reason():
    text = "wavelength (nm),intensity\n656.3,1.7976931348623157e308\n486.1,3\n"
    with pytest.raises(ValueRangeError, match="beyond"):
        read_peak_list(text)


# --------------------------------------------------------------------------- item 10


def test_jcamp_dup_bomb_refused_before_expanding():
    text = (
        "##TITLE=t\n##XUNITS=NANOMETERS\n##FIRSTX=400\n##LASTX=401\n##NPOINTS=2\n"
        "##XYDATA=(X++(Y..Y))\n400 1Z99999999\n##END=\n"
    )
    assert len(text) < 200
    with pytest.raises(FileFormatError, match="DUP"):
        _within(20, lambda: read_spectrum(text.encode()))


def test_jcamp_declared_points_bounded_by_file_size():
    text = (
        "##TITLE=t\n##XUNITS=NANOMETERS\n##FIRSTX=400\n##LASTX=401\n##NPOINTS=999999999\n"
        "##XYDATA=(X++(Y..Y))\n400 1Z99999999\n##END=\n"
    )
    with pytest.raises(FileFormatError, match="more than a file of this size"):
        _within(20, lambda: read_spectrum(text.encode()))


@pytest.mark.parametrize(
    "text",
    [
        # a cell of 100,000 spaces between two digits (was 126 s of regex backtracking)
        "wavelength (nm),intensity\n656.3,1" + " " * 100_000 + "1\n486.1,2\n",
        "wavelength (nm),intensity\n656.3,1" + " " * 100_000 + "nm1\n486.1,2\n",
        # a header of 100,000 "(" (was 241 s)
        "(" * 100_000 + ",intensity\n656.3,1\n486.1,2\n",
        "wavelength" + " in" * 30_000 + ",intensity\n656.3,1\n486.1,2\n",
    ],
)
def test_no_regex_backtracking_hang(text):
    with pytest.raises(InputError):
        _within(30, lambda: read_peak_list(text))


def test_memory_of_a_large_csv_is_a_small_multiple_of_its_size(tmp_path):
    # A fresh process: its peak RSS after reading, minus before, over the file size.
    # Commit 598942b needed about 33x the file (issue 11, item 10).
    n = 1_000_000
    f = tmp_path / "big.csv"
    x = np.linspace(200.0, 900.0, n)
    y = 100.0 + np.arange(n) % 7
    body = np.char.add(np.char.add(np.char.mod("%.6f", x), ","), np.char.mod("%.1f", y))
    f.write_text("wavelength (nm),intensity\n" + "\n".join(body) + "\n")
    size = f.stat().st_size
    code = textwrap.dedent(
        f"""
        import resource
        from workbench.io import read_spectrum
        import polars, numpy, rapidfuzz  # imports are not the file's cost
        before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        s = read_spectrum({str(f)!r})
        after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        print((after - before) * 1024, s.x.size)
        """
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout.split()
    grown, points = int(out[0]), int(out[1])
    assert points == n
    # Bound documented in tests/fuzz/README.md: at most 4x the input + 64 MiB.
    assert grown <= 4 * size + 64 * 2**20, (grown, size)


# --------------------------------------------------------------------------- item 11


@pytest.mark.parametrize("error", ["#VALUE!", "#N/A", "#DIV/0!", "#REF!", "#NAME?", "#NUM!"])
def test_spreadsheet_error_row_is_refused_not_a_comment(error):
    text = f"wavelength (nm),intensity\n656.3,10\n{error},4\n486.1,3\n"
    with pytest.raises(FileFormatError, match="spreadsheet error"):
        read_peak_list(text)


@pytest.mark.parametrize("marker", ["%", "#"])
def test_comment_line_among_data_rows_is_noted(marker):
    text = f"wavelength (nm),intensity\n656.3,10\n{marker} 589.0,4\n486.1,3\n"
    peaks = read_peak_list(text)
    assert peaks.table.height == 2
    assert any(
        "comment line(s) among the data rows skipped (line 3)" in n for n in peaks.source.notes
    )


@pytest.mark.parametrize("width", ["1E400", "-1E400", "-0.1", "0"])
def test_jcamp_peak_table_width_must_be_finite_positive(width):
    text = (
        "##TITLE=t\n##XUNITS=NANOMETERS\n##PEAK TABLE=(XYW..XYW)\n"
        f"656.3 10 0.1\n486.1 3 {width}\n##END=\n"
    )
    with pytest.raises(ValueRangeError, match="width"):
        read_peak_list(text.encode())


# --------------------------------------------------------------------------- bulk = careful


def _careful(monkeypatch, fn, data, **kw):
    from workbench.io.fastcsv import NeedCarefulParser

    def refuse(data, name):
        raise NeedCarefulParser("forced")

    monkeypatch.setattr(tabular, "read_fast", refuse)
    try:
        return fn(data, **kw)
    finally:
        monkeypatch.undo()


def _layouts() -> list[tuple[str, bytes]]:
    base = _spectrum_csv(300)
    big = _spectrum_csv(6000)  # > 64 KiB: the head is cut at a line end
    out = [
        ("comma", base.encode()),
        ("big", big.encode()),
        ("crlf", base.replace("\n", "\r\n").encode()),
        ("bom", b"\xef\xbb\xbf" + base.encode()),
        ("tab", _spectrum_csv(300, "\t").encode()),
        ("semicolon-decimal-comma", _spectrum_csv(300, ";").replace(".", ",").encode()),
        ("tab-decimal-comma", _spectrum_csv(300, "\t").replace(".", ",").encode()),
        ("padded", base.replace(",", " , ").encode()),
        ("trailing-delimiter", base.replace("\n", ",\n").encode()),
        (
            "whitespace",
            base.replace(",", "   ").replace("wavelength (nm)   ", "wavelength_nm   ").encode(),
        ),
        ("comments-and-blank", ("# medium: vacuum\n\n" + base + "\n\n").encode()),
        ("blank-inside", base.replace("\n4", "\n\n4", 3).encode()),
        ("latin1-header", base.replace("intensity", "Intensität").encode("latin-1")),
        ("quoted-header", base.replace("wavelength (nm)", '"wavelength, air (nm)"').encode()),
        ("headerless", "# unit: nm\n" + base.split("\n", 1)[1]),
        ("peaks", b"Wavelength (nm),Intensity,FWHM (nm)\n656.28,1200,0.05\n486.13,300,\n"),
    ]
    return [(k, v if isinstance(v, bytes) else v.encode()) for k, v in out]


@pytest.mark.parametrize(("label", "data"), _layouts(), ids=[k for k, _ in _layouts()])
def test_bulk_reader_equals_careful_reader(monkeypatch, label, data):
    fast = read_any(data, name="f.csv")
    slow = _careful(monkeypatch, read_any, data, name="f.csv")
    assert type(fast) is type(slow)
    assert fast.source == slow.source  # same hash, notes, format
    if isinstance(fast, Spectrum):
        np.testing.assert_array_equal(fast.x, slow.x)
        np.testing.assert_array_equal(fast.y, slow.y)
        assert (fast.axis, fast.medium, fast.y_label) == (slow.axis, slow.medium, slow.y_label)
    else:
        assert isinstance(fast, PeakList)
        assert fast.table.equals(slow.table)


@pytest.mark.parametrize(
    ("text", "where"),
    [
        ("wavelength (nm),intensity\n" + "400,1\n" * 3 + "401,x\n", "row 5"),
        ("wavelength (nm),intensity\n400,1\n401,2,3\n", "row 3"),
        ("wavelength (nm),intensity\n400,1\n401,inf\n", "row 3"),
        ("wavelength (nm),intensity\n400,1\nnan,2\n", "row 3"),
    ],
)
def test_bulk_refusal_names_the_row(text, where):
    with pytest.raises(InputError, match=where):
        read_any(text, kind="peak_list")


def test_progress_is_reported_up_to_one():
    seen: list[float] = []
    read_spectrum(_spectrum_csv(300).encode(), progress=lambda f, _m: seen.append(f))
    assert seen == sorted(seen) and seen[-1] == 1.0 and len(seen) >= 3


def _with_blank_lines_and_nan(sep: str, nan_in: str = "y") -> bytes:
    x = np.linspace(400.0, 500.0, 100)
    rows = [f"{a:.3f}{sep}{2 + np.sin(a):.3f}" for a in x]
    rows.insert(10, "")
    rows.insert(20, "   ")
    # rows[50] holds x[48] after the two insertions.
    rows[50] = f"{x[48]:.3f}{sep}nan" if nan_in == "y" else f"nan{sep}3.0"
    head = "wavelength_nm" if sep.isspace() else "wavelength (nm)"
    return (f"{head}{sep}intensity\n" + "\n".join(rows) + "\n\n").encode()


@pytest.mark.parametrize("sep", ["   ", ","])
def test_bulk_and_careful_leave_out_the_same_missing_row(monkeypatch, sep):
    # A NaN intensity is a missing sample: both parsers leave the row out
    # and name it in the same note (workbench.io.spectra docstring).
    data = _with_blank_lines_and_nan(sep)
    fast = read_spectrum(data)
    slow = _careful(monkeypatch, read_spectrum, data)
    assert fast.x.size == slow.x.size == 99
    np.testing.assert_array_equal(fast.x, slow.x)
    np.testing.assert_array_equal(fast.y, slow.y)
    assert round(400.0 + 48 * 100.0 / 99, 3) not in fast.x
    note = [n for n in fast.source.notes if "no measured" in n]
    # Header on line 1, rows[i] on line i + 2: rows[50] is line 52 (counted by hand).
    assert len(note) == 1 and "1 of 100 rows" in note[0] and "row 52" in note[0]
    assert note == [n for n in slow.source.notes if "no measured" in n]


@pytest.mark.parametrize("sep", ["   ", ","])
def test_bulk_and_careful_name_the_same_row(monkeypatch, sep):
    data = _with_blank_lines_and_nan(sep, nan_in="x")
    with pytest.raises(ValueRangeError) as fast:
        read_spectrum(data)
    with pytest.raises(ValueRangeError) as slow:
        _careful(monkeypatch, read_spectrum, data)
    assert "row 52" in fast.value.problem
    assert fast.value.problem == slow.value.problem
    assert fast.value.problem == slow.value.problem
