"""Header parsing, fuzzy column mapping and unit plausibility."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.errors import ColumnMappingError, UnitError
from workbench.io.columns import check_unit_plausibility, map_columns, parse_header

# Expected splits follow the header conventions listed in the task brief
# (common practice, no source).


@pytest.mark.parametrize(
    ("header", "name", "unit", "medium"),
    [
        ("Wavelength (nm)", "wavelength", "nm", None),
        ("lambda [A]", "lambda", "A", None),
        ("Energy/keV", "energy", "keV", None),
        ("wavenumber cm-1", "wavenumber", "cm-1", None),
        ("λ/Å", "λ", "Å", None),
        ("λ_vac/nm", "λ", "nm", "vacuum"),
        ("Wavelength (air, nm)", "wavelength", "nm", "air"),
        ("Air wavelength (Å)", "wavelength", "Å", "air"),
        ("wl_nm", "wl", "nm", None),
        ("S/N", "s/n", None, None),
        ("Intensity (a.u.)", "intensity", "a.u.", None),
    ],
)
def test_parse_header(header, name, unit, medium):
    h = parse_header(header)
    assert (h.name, h.unit, h.medium) == (name, unit, medium)


@pytest.mark.parametrize(
    ("headers", "expected"),
    [
        (["Wavelength (nm)", "Intensity"], {"position": 0, "intensity": 1}),
        (
            ["Channel", "E (keV)", "Net counts", "FWHM (eV)"],
            {"position": 1, "intensity": 2, "fwhm": 3},
        ),
        (
            ["centre", "height", "peak area", "signal-to-noise"],
            {"position": 0, "intensity": 1, "area": 2, "snr": 3},
        ),
        (["Wavelenght (nm)", "Intesity"], {"position": 0, "intensity": 1}),  # typos, fuzzy
        (["peak position", "amplitude", "width"], {"position": 0, "intensity": 1, "fwhm": 2}),
    ],
)
def test_map_columns(headers, expected):
    mapping = map_columns(headers, where="t.csv")
    assert {r: c.index for r, c in mapping.items()} == expected


def test_typo_has_score_below_100():
    mapping = map_columns(["Wavelenght (nm)", "Intensity"], where="t.csv")
    assert 80 <= mapping["position"].score < 100


def test_channel_is_not_a_position():
    with pytest.raises(ColumnMappingError, match="'Channel' holds channel or index numbers"):
        map_columns(["Channel", "Counts"], where="t.csv")


def test_two_position_columns_are_ambiguous():
    with pytest.raises(ColumnMappingError, match="both look like the position"):
        map_columns(["Wavelength (nm)", "lambda (nm)", "counts"], where="t.csv")


def test_explicit_choice_wins():
    mapping = map_columns(
        ["Wavelength (nm)", "lambda (nm)", "counts"],
        where="t.csv",
        columns={"position": "lambda (nm)"},
    )
    assert mapping["position"].index == 1


@pytest.mark.parametrize(
    ("values", "unit", "remedy"),
    [
        ([3000.0, 5000.0, 9000.0], "nm", "--unit angstrom"),  # Å under nm (brief's example)
        ([5.9, 6.4, 8.0, 17.4], "eV", "--unit keV"),  # XRF keV under eV (brief's example)
        ([0.4, 0.6, 0.8], "nm", "--unit um"),  # µm under nm
        ([400.0, 650.0], "um", "--unit nm"),  # nm under µm
        ([6400.0, 8040.0], "keV", "--unit eV"),  # eV under keV
        ([400.0, 650.0], "angstrom", "--unit nm"),  # nm under Å
    ],
)
def test_implausible_units_refused(values, unit, remedy):
    with pytest.raises(UnitError, match=remedy) as info:
        check_unit_plausibility(np.array(values), unit, "t.csv column 'x'")
    # ... and the remedy says how to keep the unit when the numbers are right.
    assert f"--unit {unit} on the command line" in info.value.remedy


def test_a_stated_unit_is_taken_as_stated_with_a_note():
    # K-band arc lines in nm (1950–2400 nm; near-infrared work, common
    # practice, no source) look like Å by their numbers alone: when the
    # analyst states nm, they are read as nm and the doubt is noted.
    notes: list[str] = []
    values = np.array([1950.1, 2000.3, 2300.2])
    check_unit_plausibility(values, "nm", "k.csv column 'x'", stated=True, notes=notes)
    assert notes == [
        "k.csv column 'x': values 1950.1–2300.2 would look like Å; read in nm as stated"
    ]
    with pytest.raises(UnitError):
        check_unit_plausibility(values, "nm", "k.csv column 'x'")


@pytest.mark.parametrize(
    ("values", "unit"),
    [
        ([250.0, 656.3, 1064.0], "nm"),
        ([2500.0, 6563.0], "angstrom"),
        ([1.5, 3.2], "eV"),
        ([5.9, 17.4], "keV"),
    ],
)
def test_plausible_units_pass(values, unit):
    check_unit_plausibility(np.array(values), unit, "t")


def test_the_ambiguity_message_names_the_cli_app_and_library_ways_to_choose():
    with pytest.raises(ColumnMappingError) as err:
        map_columns(["Wavelength (nm)", "lambda (nm)", "counts"], where="t.csv")
    hint = str(err.value)
    assert "--columns position=HEADER" in hint and "Columns by header" in hint


def test_a_text_column_headed_line_is_a_label_not_a_position():
    # Invented line table: "Line" holds names (Ca II K ...), the position is in nm.
    headers = ["Line", "Wavelength (nm)", "Rel. int. (%)"]
    with pytest.raises(ColumnMappingError, match="both look like the position"):
        map_columns(headers, where="t.csv")
    m = map_columns(headers, where="t.csv", label_columns=[0])
    assert (m["position"].index, m["intensity"].index) == (1, 2)
    # Either order; an explicit choice still wins; alone, a column of names keeps
    # its role (and reading its cells then fails, naming the row).
    m = map_columns(headers[::-1], where="t.csv", label_columns=[2])
    assert m["position"].index == 1
    explicit = map_columns(headers, where="t.csv", columns={"position": "Line"}, label_columns=[0])
    assert explicit["position"].index == 0
    assert map_columns(["Line", "counts"], where="t.csv", label_columns=[0])["position"].index == 0


@pytest.mark.parametrize(
    "header", ["Rel. int.", "rel int", "Relative Int.", "relative intensity", "Rel. int. (%)"]
)
def test_relative_intensity_headers_are_intensity(header):
    m = map_columns(["wavelength (nm)", header], where="t.csv")
    assert m["intensity"].index == 1


def test_a_line_table_with_names_and_percent_intensities_reads_as_a_peak_list():
    from workbench.io import read_peak_list

    text = "Line,Wavelength (nm),Rel. int. (%)\nCa II K,393.37,100%\nCa I,422.67,60%\n"
    peaks = read_peak_list(text)
    np.testing.assert_allclose(peaks.positions, [393.37, 422.67])
    np.testing.assert_allclose(peaks.intensities, [100.0, 60.0])
