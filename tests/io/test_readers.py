"""Delimited, pasted and Parquet peak lists and spectra; detection; every bad input."""

from __future__ import annotations

import hashlib
import io

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import PeakList, Spectrum
from workbench.errors import (
    ColumnMappingError,
    FileFormatError,
    UnitError,
    ValueRangeError,
)
from workbench.io import read_any, read_peak_list, read_spectrum, sniff
from workbench.physics.units import wavenumber_per_cm_to_wavelength_vac_nm

# Invented demo lines (values are test inputs, not reference data).
CSV = "Wavelength (nm),Intensity,FWHM (nm),S/N\n656.28,1200,0.05,80\n486.13,300,0.04,20\n"


def test_csv_peak_list_mapping_and_provenance():
    data = CSV.encode()
    pl_ = read_peak_list(data, name="lines.csv")
    assert pl_.axis == "wavelength" and pl_.medium == "air"
    np.testing.assert_allclose(pl_.positions, [486.13, 656.28])  # sorted input values
    np.testing.assert_allclose(pl_.table["fwhm_nm"].to_numpy(), [0.04, 0.05])
    assert pl_.source.sha256 == hashlib.sha256(data).hexdigest()  # hashlib as oracle
    assert pl_.source.size_bytes == len(data)
    assert "medium not stated; assumed air" in pl_.source.notes
    assert pl_.extra["mapping"]["S/N"]["role"] == "snr"
    assert pl_.extra["mapping"]["Wavelength (nm)"] == {
        "role": "position",
        "score": 100.0,
        "unit": "nm",
    }


def test_semicolon_decimal_comma_and_medium_comment():
    text = "# spectrometer in vacuum\nλ/Å;Höhe;Intensität\n6562,8;1;1200,5\n4861,3;2;300\n"
    pl_ = read_peak_list(text, columns={"intensity": "Intensität"})
    np.testing.assert_allclose(pl_.positions, [486.13, 656.28])  # Å × 0.1
    np.testing.assert_allclose(pl_.intensities, [300.0, 1200.5])
    assert pl_.medium == "vacuum"
    assert any("decimal comma" in n for n in pl_.source.notes)


def test_tab_pasted_from_spreadsheet_energy_kev():
    text = "Energy (keV)\tCounts\n6.404\t5000\n7.058\t700\n"
    pl_ = read_peak_list(text)
    assert pl_.axis == "energy" and pl_.medium is None
    np.testing.assert_allclose(pl_.positions, [6404.0, 7058.0])  # keV × 1000


def test_whitespace_header_with_units_in_brackets():
    text = "Wavelength (nm)   Intensity\n  393.37   1000\n 396.85   700\n"
    pl_ = read_peak_list(text)
    np.testing.assert_allclose(pl_.positions, [393.37, 396.85])


def test_wavenumber_header_converts_to_vacuum_nm():
    pl_ = read_peak_list("wavenumber cm-1,intensity\n20000,1\n25000,2\n")
    expected = np.sort(wavenumber_per_cm_to_wavelength_vac_nm(np.array([20000.0, 25000.0])))
    np.testing.assert_allclose(pl_.positions, expected)
    assert pl_.medium == "vacuum"


def test_explicit_unit_overrides_header_and_is_noted():
    pl_ = read_peak_list("wavelength (nm),intensity\n3933.7,1\n3968.5,2\n", unit="angstrom")
    np.testing.assert_allclose(pl_.positions, [393.37, 396.85])
    assert any("overrides" in n for n in pl_.source.notes)


def test_explicit_medium_overrides_header():
    pl_ = read_peak_list("wavelength air (nm),intensity\n393.37,1\n", medium="vacuum")
    assert pl_.medium == "vacuum"


def test_units_in_cells():
    pl_ = read_peak_list("line,intensity\n393.37 nm,1\n396.85 nm,2\n")
    np.testing.assert_allclose(pl_.positions, [393.37, 396.85])


def test_empty_intensity_is_null():
    pl_ = read_peak_list("wavelength (nm),intensity\n393.37,\n396.85,2\n")
    assert np.isnan(pl_.intensities[0]) and pl_.intensities[1] == 2.0


def test_parquet_peak_list():
    buf = io.BytesIO()
    pl.DataFrame({"lambda [nm]": [500.0, 400.0], "counts": [1.0, 2.0]}).write_parquet(buf)
    out = read_any(buf.getvalue(), kind="peak_list")
    assert out.source.format == "parquet"
    np.testing.assert_allclose(out.positions, [400.0, 500.0])


def test_parquet_nan_names_data_row():
    buf = io.BytesIO()
    pl.DataFrame({"wavelength (nm)": [500.0, float("nan")], "counts": [1.0, 2.0]}).write_parquet(
        buf
    )
    with pytest.raises(ValueRangeError, match="data row 2, column 'wavelength \\(nm\\)'"):
        read_peak_list(buf.getvalue())


def _spectrum_text(n=200, header="Wavelength (nm),Counts", descending=False):
    x = np.linspace(400.0, 500.0, n)
    y = 10.0 + np.exp(-0.5 * ((x - 450.0) / 0.5) ** 2)
    if descending:
        x, y = x[::-1], y[::-1]
    body = "\n".join(f"{a:.6f},{b:.6f}" for a, b in zip(x, y, strict=True))
    return (header + "\n" if header else "") + body + "\n"


def test_read_any_detects_spectrum_and_peak_list():
    assert isinstance(read_any(_spectrum_text()), Spectrum)
    assert isinstance(read_any(CSV), PeakList)
    assert sniff(_spectrum_text())["kind"] == "spectrum"
    assert sniff(CSV)["kind"] == "peak_list"


def test_descending_spectrum_reversed_with_note():
    spec = read_spectrum(_spectrum_text(descending=True))
    assert np.all(np.diff(spec.x) > 0)
    assert "axis was in descending order; reversed" in spec.source.notes


def test_headerless_spectrum_with_comment_unit_and_semicolon_comments():
    text = "; exported by invented ScanMate\n% medium: air\n# x units: nm\n" + _spectrum_text(
        header=""
    )
    spec = read_spectrum(text)
    assert spec.medium == "air" and spec.x[0] == 400.0  # linspace start above


def test_force_kind_spectrum_on_short_table():
    spec = read_any(_spectrum_text(n=20), kind="spectrum")
    assert isinstance(spec, Spectrum) and spec.x.size == 20


def test_encodings_utf16_bom_and_latin1():
    text = "Wavelength (Å),Intensität\n6562.8,1\n4861.3,2\n"
    for data in (text.encode("utf-16"), text.encode("latin-1"), b"\xef\xbb\xbf" + text.encode()):
        pl_ = read_peak_list(data)
        np.testing.assert_allclose(pl_.positions, [486.13, 656.28])  # Å × 0.1


def test_max_bytes_refused_before_reading(tmp_path):
    path = tmp_path / "big.csv"
    path.write_text(CSV)
    with pytest.raises(FileFormatError, match=r"over the limit of 10 bytes.*decimate"):
        read_peak_list(path, max_bytes=10)


# Each bad input gives one clear error naming the row or column (brief's list).
BAD_PEAK_LISTS = [
    ("", FileFormatError, "is empty"),
    ("wavelength (nm),intensity\n", FileFormatError, "header \\(line 1\\) but no data rows"),
    (
        "wavelength (nm),intensity\n393.3,1\nnan,2\n",
        ValueRangeError,
        "row 3, column 'wavelength \\(nm\\)' is 'nan'",
    ),
    (
        "wavelength (nm),intensity\n393.3,inf\n",
        ValueRangeError,
        "row 2, column 'intensity' is 'inf'",
    ),
    (
        "wavelength (nm),intensity\n393.3,1\n-1,2\n",
        ValueRangeError,
        "row 3, column 'wavelength \\(nm\\)' is -1",
    ),
    ("wavelength (nm),intensity\n0,1\n", ValueRangeError, "row 2.*must be positive"),
    (
        "wavelength (nm),intensity\n393.3,1\n396.8,2,7\n",
        FileFormatError,
        "row 3 has 3 cells but the header has 2",
    ),
    ("wavelength (nm),intensity\n393.3,1\n396.8 Å,2\n", UnitError, "mixes units"),
    (
        "wavelength (nm),intensity\n393.3 nm,1\n3968 Å,2\n",
        UnitError,
        "'nm' \\(row 2\\) and 'Å' \\(row 3\\)",
    ),
    ("wavelength (nm),intensity\n3933,1\n5000,2\n", UnitError, "--unit angstrom"),
    ("energy (eV),counts\n6400,1\n17400,2\n", None, None),  # plausible eV: accepted
    ("energy (eV),counts\n6.4,1\n17.4,2\n", UnitError, "--unit keV"),
    ("Channel,Counts\n1,2\n", ColumnMappingError, "channel or index numbers"),
    ("wavelength,intensity\n393.3,1\n", UnitError, "unit of the positions is not stated"),
    (
        "wavelength (nm),intensity\n393.3,abc\n",
        FileFormatError,
        "row 2, column 'intensity' holds 'abc'",
    ),
    (
        "wavelength (nm),fwhm (nm)\n393.3,-0.1\n",
        ValueRangeError,
        "row 2, column 'fwhm \\(nm\\)'.*positive",
    ),
    ("wavelength air vacuum (nm),i\n393.3,1\n", UnitError, "both air and vacuum"),
    ("393.3,1\n396.8,2\n", ColumnMappingError, "no header row"),
]


@pytest.mark.parametrize("kind", ["peak_list", "spectrum"])
def test_near_infrared_in_nm_is_read_when_the_unit_is_stated(kind):
    # 2000–2062 nm (K band) under a 'nm' header looks like Å and is refused;
    # the analyst's --unit nm (unit=) reads it as nm, with a note.
    text = "wavelength (nm),counts\n" + "".join(
        f"{2000 + 2 * i},{1 + (i == 15) * 90}\n" for i in range(32)
    )
    read = read_peak_list if kind == "peak_list" else read_spectrum
    with pytest.raises(UnitError, match="--unit nm on the command line"):
        read(text.encode(), name="k.csv")
    got = read(text.encode(), name="k.csv", unit="nm")
    x = got.table["wavelength_nm"].to_numpy() if kind == "peak_list" else got.x
    assert x.min() == 2000.0 and x.max() == 2062.0  # nm, not converted from Å
    assert any("would look like Å; read in nm as stated" in n for n in got.source.notes)


@pytest.mark.parametrize(("text", "exc", "pattern"), BAD_PEAK_LISTS)
def test_bad_peak_lists(text, exc, pattern):
    if exc is None:
        assert read_peak_list(text.encode()).table.height == 2
        return
    with pytest.raises(exc, match=pattern) as info:
        read_peak_list(text.encode(), name="bad.csv")
    assert info.value.remedy  # every error carries a remedy


def _xy(xs):
    return "wavelength (nm),counts\n" + "".join(f"{x},{i}\n" for i, x in enumerate(xs))


BAD_SPECTRA = [
    (_xy([400, 401, 401, 402, 403, 404]), "row 4 repeats the wavelength \\(nm\\) of row 3"),
    (_xy([400, 401, 403, 402, 404, 405]), "row 5 \\(402\\) breaks the order of row 4"),
    (_xy([400, 401, 402, float("nan"), 404]), "row 5, column 'wavelength \\(nm\\)' is 'nan'"),
    (_xy([400, 401, 402]), "only 3 points"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD_SPECTRA)
def test_bad_spectra(text, pattern):
    with pytest.raises((ValueRangeError, FileFormatError), match=pattern):
        read_spectrum(text.encode(), name="bad.csv")


def test_binary_garbage_refused():
    rng = np.random.default_rng(20261202)
    with pytest.raises(FileFormatError, match=r"not a text file|NUL"):
        read_any(rng.integers(0, 256, 4096, dtype=np.uint8).tobytes())


def test_missing_file_named(tmp_path):
    with pytest.raises(FileFormatError, match="not found"):
        read_any(tmp_path / "nope.csv")


def test_negative_intensities_allowed():
    spec = read_spectrum(_xy([400, 401, 402, 403, 404]).replace(",0\n", ",-5\n"))
    assert spec.y[0] == -5.0


def test_spectrum_with_one_duplicated_row_is_not_silently_a_peak_list():
    xs = [400.0 + i for i in range(80)]
    xs[40] = xs[39]
    text = "wavelength (nm),counts\n" + "".join(f"{v},1\n" for v in xs)
    assert sniff(text)["kind"] == "spectrum"
    with pytest.raises(ValueRangeError, match="row 42 repeats"):  # index 40 + header + 1-based
        read_any(text)


# ------------------------------------------------ missing intensities in a spectrum
# Invented spectra (test inputs). A missing intensity is a sample not measured
# (workbench.io.spectra docstring): the row is left out with a note.


def _rows(n=60, lo=400.0, hi=459.0):
    x = np.linspace(lo, hi, n)
    return x, 10.0 + np.exp(-0.5 * ((x - 430.0) / 0.8) ** 2)


@pytest.mark.parametrize("cell", ["", "nan", "NaN"])
def test_missing_intensity_rows_are_left_out_with_a_note(cell):
    x, y = _rows()
    body = [f"{a:.3f},{b:.6f}" for a, b in zip(x, y, strict=True)]
    body[7] = f"{x[7]:.3f},{cell}"  # data row 8, file line 9
    spec = read_spectrum(("wavelength (nm),counts\n" + "\n".join(body) + "\n").encode())
    assert spec.x.size == 59 and round(x[7], 3) not in spec.x
    assert np.all(np.isfinite(spec.y))
    (note,) = [n for n in spec.source.notes if "no measured" in n]
    assert note.startswith("1 of 60 rows") and "row 9" in note


def test_missing_rows_left_out_of_a_descending_axis():
    x, y = _rows()
    y = y.copy()
    y[[3, 4]] = np.nan
    body = [f"{a:.3f},{b:.6f}" for a, b in zip(x[::-1], y[::-1], strict=True)]
    spec = read_spectrum(("wavelength (nm),counts\n" + "\n".join(body) + "\n").encode())
    np.testing.assert_allclose(spec.x, np.delete(x, [3, 4]), atol=1e-3)
    np.testing.assert_allclose(spec.y, np.delete(y, [3, 4]), atol=1e-6)


def test_parquet_null_and_nan_intensities_are_missing():
    x, y = _rows()
    ys = [float(v) for v in y]
    ys[5] = float("nan")
    ys[9] = None
    buf = io.BytesIO()
    pl.DataFrame({"wavelength (nm)": x, "counts": ys}).write_parquet(buf)
    spec = read_spectrum(buf.getvalue())
    assert spec.x.size == 58
    (note,) = [n for n in spec.source.notes if "no measured" in n]
    assert "data row 6, data row 10" in note


def test_jcamp_question_mark_is_a_missing_point():
    # JCAMP-DX 4.24 writes "?" for a point with no value.
    text = (
        "##TITLE=t\n##JCAMP-DX=4.24\n##XUNITS=NANOMETERS\n##YUNITS=COUNTS\n"
        "##FIRSTX=400\n##LASTX=407\n##NPOINTS=8\n##XFACTOR=1\n##YFACTOR=1\n"
        "##XYDATA=(X++(Y..Y))\n400 1 2 3 ? 5 6 7 8\n##END=\n"
    )
    spec = read_spectrum(text.encode())
    np.testing.assert_allclose(spec.x, [400, 401, 402, 404, 405, 406, 407])
    assert any("1 of 8 rows" in n for n in spec.source.notes)


def test_too_few_measured_points_is_one_clear_error():
    x, y = _rows(8)
    body = [
        f"{a:.3f},{'nan' if i > 2 else f'{b:.3f}'}"
        for i, (a, b) in enumerate(zip(x, y, strict=True))
    ]
    with pytest.raises(FileFormatError, match="only 3 points with a measured"):
        read_spectrum(("wavelength (nm),counts\n" + "\n".join(body) + "\n").encode(), unit="nm")


def test_infinite_intensity_is_still_refused():
    x, y = _rows()
    body = [f"{a:.3f},{b:.6f}" for a, b in zip(x, y, strict=True)]
    body[4] = f"{x[4]:.3f},inf"
    with pytest.raises(ValueRangeError, match="row 6"):
        read_spectrum(("wavelength (nm),counts\n" + "\n".join(body) + "\n").encode())


def test_nan_intensity_in_a_peak_list_is_null_like_an_empty_cell():
    pl_ = read_peak_list("wavelength (nm),intensity\n393.37,nan\n396.85,2\n")
    assert np.isnan(pl_.intensities[0]) and pl_.intensities[1] == 2.0


# ------------------------------------------------ title lines; steps in stretches
# Invented files (test inputs).


@pytest.mark.parametrize("titles", [["Lab 7 spark stand, run 12"], ["Export v2", "Sample: demo"]])
def test_title_lines_above_the_header_are_kept_as_comments(titles):
    x, y = _rows()
    body = "\n".join(f"{a:.3f},{b:.6f}" for a, b in zip(x, y, strict=True))
    text = "\n".join(titles) + "\nwavelength (nm),counts\n" + body + "\n"
    spec = read_spectrum(text.encode())
    assert spec.x.size == 60
    lines = ", ".join(str(i + 1) for i in range(len(titles)))
    assert f"title line(s) above the header kept as comments (line {lines})" in spec.source.notes


def test_a_text_cell_in_the_first_data_row_is_not_taken_for_a_header():
    with pytest.raises(FileFormatError, match="row 2"):
        read_peak_list("wavelength (nm),intensity\n400,abc\n401,2\n402,3\n")


def test_steps_in_a_few_stretches_are_a_spectrum_and_irregular_ones_a_peak_list():
    # 0.5 nm, then 1 nm, then 5 nm steps (as ASTM G173-03 is sampled).
    x = np.r_[np.arange(300.0, 400.0, 0.5), np.arange(400.0, 700.0, 1.0), np.arange(700, 900, 5.0)]
    body = "\n".join(f"{a:.2f},1.0" for a in x)
    assert isinstance(read_any(("wavelength (nm),counts\n" + body).encode()), Spectrum)
    rng = np.random.default_rng(20261204)
    peaks = np.sort(rng.uniform(300.0, 900.0, 120))
    body = "\n".join(f"{a:.3f},1.0" for a in peaks)
    assert isinstance(read_any(("wavelength (nm),counts\n" + body).encode()), PeakList)


def test_a_header_of_names_over_numbered_columns_is_still_a_header():
    text = "wavelength (nm),1,2\n" + "\n".join(f"{400 + i},{i},{2 * i}" for i in range(5))
    peaks = read_peak_list(text)
    np.testing.assert_allclose(peaks.positions, [400, 401, 402, 403, 404])


def test_rows_of_position_and_label_have_no_header():
    peaks = read_peak_list("393.366 CaII\n396.847 CaII\n422.673 CaI\n", unit="nm")
    np.testing.assert_allclose(peaks.positions, [393.366, 396.847, 422.673])


def test_a_row_of_units_under_the_names_joins_the_header():
    # Invented export: a title, names, then units, then data.
    x = np.linspace(400.0, 460.0, 80)
    body = "\n".join(f"{a:.3f},{1 + np.sin(a):.4f}" for a in x)
    text = "Instrument export\nWavelength,Intensity\nnm,counts\n" + body + "\n"
    spec = read_spectrum(text.encode())
    np.testing.assert_allclose(spec.x[0], 400.0)
    assert "units on line 3 joined to the column names above them" in spec.source.notes
    assert "x from 'Wavelength (nm)' (unit nm), y from 'Intensity (counts)'" in spec.source.notes
    peaks = read_peak_list("Energy;Counts\nkeV;\n6.40;100\n8.05;40\n")
    np.testing.assert_allclose(peaks.positions, [6400.0, 8050.0])  # eV


def test_a_title_line_above_a_whitespace_header_with_spaced_names():
    # The header "wavelength (nm)   intensity" splits into three words; it is
    # fitted to the two data columns from its own line, not the title's.
    x = np.linspace(400.0, 460.0, 80)
    body = "\n".join(f"{a:.3f}   {1 + np.sin(a):.4f}" for a in x)
    text = "Run 4 of the invented spark stand\nwavelength (nm)   intensity\n" + body + "\n"
    spec = read_spectrum(text.encode())
    assert spec.x.size == 80 and "x from 'wavelength (nm)' (unit nm), y from 'intensity'" in (
        spec.source.notes
    )


# ------------------------------------------ a spectrometer's export without a header
# Invented export (test input): settings lines, a begin marker, tab-separated
# numbers, an end marker, as small fibre spectrometers' text exports are laid out.
_PREAMBLE = (
    "Data from invented_run.txt Node\n\n"
    "Date: Mon Jan 05 10:00:00 CET 2026\n"
    "Integration Time (sec): 1.000000E-1\n"
    "Scans to average: 3\n"
    "Number of Pixels in Spectrum: 60\n"
    ">>>>>Begin Spectral Data<<<<<\n"
)


@pytest.mark.parametrize("delim", ["\t", ";", ","])
@pytest.mark.parametrize("end_marker", [True, False])
def test_a_settings_preamble_and_end_marker_around_headerless_numbers(delim, end_marker):
    x, y = _rows()
    body = "".join(f"{a:.3f}{delim}{b:.6f}\n" for a, b in zip(x, y, strict=True))
    text = _PREAMBLE + body + (">>>>>End Spectral Data<<<<<\n" if end_marker else "")
    spec = read_spectrum(text.encode(), unit="nm")
    np.testing.assert_allclose(spec.x, np.round(x, 3))
    np.testing.assert_allclose(spec.y, np.round(y, 6))
    notes = spec.source.notes
    assert "title line(s) above the data (no header) kept as comments (line 1, 3, 4, 5, 6, 7)" in (
        notes
    )
    assert ("text line(s) below the data kept as comments (line 68)" in notes) is end_marker


def test_a_one_cell_text_row_among_the_numbers_is_still_refused():
    # Only text rows *below the last numbers* close the table; one inside is an error.
    x, y = _rows()
    rows = [f"{a:.3f}\t{b:.6f}" for a, b in zip(x, y, strict=True)]
    rows.insert(30, "pause")
    with pytest.raises(FileFormatError, match="row 38"):
        read_spectrum((_PREAMBLE + "\n".join(rows) + "\n").encode(), unit="nm")


def test_a_lone_number_below_the_data_is_not_swallowed_as_a_footer():
    x, y = _rows()
    rows = "".join(f"{a:.3f},{b:.6f}\n" for a, b in zip(x, y, strict=True))
    with pytest.raises(FileFormatError, match="row 62 has 1 cells"):
        read_spectrum(("wavelength (nm),counts\n" + rows + "12\n").encode())


# ------------------------------------- the one column beside the positions (stop 32)
@pytest.mark.parametrize(
    ("header", "delim"),
    [("Longitud de onda (nm);Intensidad", ";"), ("Energie (keV);Impulse", ";")],
)
def test_the_only_column_beside_the_positions_is_the_intensity(header, delim):
    # Invented peak lists in Spanish and German: a peak table's other column is its
    # heights, whatever it is called (they were left empty: "no intensity column").
    body = "\n".join(f"{a}{delim}{b}" for a, b in (("6,40", "100"), ("7,06", "20"), ("8,05", "60")))
    peaks = read_peak_list((header + "\n" + body + "\n").encode())
    np.testing.assert_allclose(peaks.intensities, [100.0, 20.0, 60.0])
    name = header.split(delim)[1]
    assert any(
        n.startswith(f"column {name!r} → intensity (the only column") for n in peaks.source.notes
    )


@pytest.mark.parametrize(
    "text",
    [
        "wavelength (nm),channel\n393.37,1\n396.85,2\n422.67,3\n",  # a counter is no height
        "wavelength (nm),uncertainty (nm)\n393.37,0.01\n396.85,0.02\n422.67,0.01\n",  # nor an error
        "wavelength (nm),Intensidad,Otra\n393.37,1,5\n396.85,2,6\n422.67,3,7\n",  # which one?
    ],
)
def test_no_intensity_is_guessed_from_a_counter_or_among_several(text):
    peaks = read_peak_list(text.encode())
    assert peaks.table["intensity"].null_count() == peaks.table.height
