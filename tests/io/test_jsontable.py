"""JSON tables: objects of arrays, records, rows; and what is not a table.

Invented data (test inputs). The real pypeit arc solutions are read in
tests/realdata/test_files_as_given.py.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from workbench.datamodel import PeakList, Spectrum
from workbench.errors import FileFormatError
from workbench.io import read_any, read_peak_list, read_spectrum


def _spectrum_arrays(n=120):
    x = np.linspace(400.0, 460.0, n)
    return x, 10.0 + 100.0 * np.exp(-0.5 * ((x - 430.0) / 0.3) ** 2)


def test_object_of_arrays_is_a_spectrum():
    x, y = _spectrum_arrays()
    doc = {"instrument": "demo", "wavelength (nm)": x.tolist(), "counts": y.tolist()}
    spec = read_any(json.dumps(doc).encode())
    assert isinstance(spec, Spectrum) and spec.source.format == "json"
    np.testing.assert_allclose(spec.x, x)
    assert any("members not read: instrument" in n for n in spec.source.notes)


def test_one_nested_object_is_opened():
    x, y = _spectrum_arrays()
    doc = {"spectrum": {"wavelength_nm": x.tolist(), "intensity": y.tolist()}}
    spec = read_spectrum(json.dumps(doc).encode())
    assert spec.x.size == 120 and any("member 'spectrum'" in n for n in spec.source.notes)


def test_null_intensities_are_missing_samples():
    x, y = _spectrum_arrays()
    ys = y.tolist()
    ys[10] = None
    spec = read_spectrum(json.dumps({"wavelength (nm)": x.tolist(), "counts": ys}).encode())
    assert spec.x.size == 119 and any("value 11" in n for n in spec.source.notes)


def test_records_are_a_peak_list():
    doc = [
        {"wavelength_nm": 393.366, "intensity": 100, "note": "Ca II K"},
        {"wavelength_nm": 396.847, "intensity": 90, "note": "Ca II H"},
        {"wavelength_nm": 422.673, "intensity": 40, "note": "Ca I"},
    ]
    peaks = read_any(json.dumps(doc).encode())
    assert isinstance(peaks, PeakList)
    np.testing.assert_allclose(peaks.positions, [393.366, 396.847, 422.673])


def test_rows_without_a_header():
    doc = [[393.366, 100.0], [396.847, 90.0], [422.673, 40.0]]
    peaks = read_peak_list(json.dumps(doc).encode(), unit="nm")
    np.testing.assert_allclose(peaks.intensities, [100.0, 90.0, 40.0])


@pytest.mark.parametrize(
    ("doc", "why"),
    [
        ({"name": "x", "settings": {"gain": 2}}, "no member is an array"),
        ({"a": [1.0, 2.0, 3.0], "b": [1.0, 2.0]}, "no two number arrays"),
        ([{"a": 1.0, "b": "x"}, {"a": 2.0, "b": "y"}], "fewer than two number fields"),
        ([[1.0, 2.0], [3.0]], "different lengths"),
        ([[1.0, "a"], [3.0, "b"]], "other than numbers"),
    ],
)
def test_json_without_a_table_is_one_clear_error(doc, why):
    with pytest.raises(FileFormatError, match=why):
        read_any(json.dumps(doc).encode())


@pytest.mark.parametrize(
    ("change", "why"),
    [
        ({"function": "spline"}, "a function among"),
        ({"xnorm": 1.0}, "degenerate"),
        ({"fmin": "a"}, "not a number"),
    ],
)
def test_a_broken_arc_solution_is_one_clear_error(change, why):
    # An invented arc solution in the layout pypeit archives (see jsontable).
    doc = {
        "spec": [1.0] * 50,
        "fitc": [5000.0, 100.0],
        "function": "legendre",
        "xnorm": 50.0,
        "fmin": 0.0,
        "fmax": 1.0,
    } | change
    with pytest.raises(FileFormatError, match=why):
        read_any(json.dumps(doc).encode())


def test_text_starting_with_a_bracket_that_is_not_json_is_a_table():
    text = "[nm],counts\n" + "\n".join(f"{400 + i},{i % 7}" for i in range(60))
    spec = read_spectrum(text.encode(), unit="nm")
    assert spec.source.format == "delimited" and spec.x.size == 60


def test_the_workbench_result_record_is_named_and_points_to_its_input():
    # A user drops the JSON that `workbench match --json` wrote: say what it is
    # and which file it came from, rather than "holds no table".
    from workbench.demo import demo_file
    from workbench.matching import analyse_input
    from workbench.matching.report import result_json

    rep = analyse_input(demo_file("paint_chip"), name="paint_chip.csv").report
    with pytest.raises(FileFormatError, match="is a workbench match result") as err:
        read_any(result_json(rep), name="result.json")
    assert "paint_chip.csv" in str(err.value) and rep["input"]["sha256"][:16] in str(err.value)
