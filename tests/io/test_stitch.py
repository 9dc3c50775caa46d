"""Files holding several scans (spectrometer channels): split, joined, or refused.

Invented channel layouts (test inputs, not measurements); the join rule is
the module's own (middle of the overlap, each scan keeping its own samples).
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.datamodel import Spectrum
from workbench.errors import ValueRangeError
from workbench.io import read_any, read_spectrum
from workbench.io.stitch import MIN_SCAN_POINTS, join_scans, split_scans


def _csv(x: np.ndarray, y: np.ndarray) -> bytes:
    rows = "\n".join(f"{a:.6f},{b:.6f}" for a, b in zip(x, y, strict=True))
    return ("wavelength (nm),counts\n" + rows + "\n").encode()


def _two_channels():
    a = np.arange(200.0, 300.0, 0.05)  # channel 1: 200–299.95 nm, step 0.05
    b = np.arange(295.0, 400.0, 0.07)  # channel 2 overlaps 295–300 nm, step 0.07
    return a, b


def test_two_overlapping_channels_join_in_the_middle_of_the_overlap():
    a, b = _two_channels()
    x = np.concatenate([a, b])
    y = np.concatenate([np.full(a.size, 1.0), np.full(b.size, 2.0)])  # tag by channel
    scans = split_scans(x)
    assert scans is not None and scans.starts.tolist() == [0, a.size]
    xs, ys, note = join_scans(x, y, scans, "nm")
    join = 0.5 * (b[0] + a[-1])  # 297.475 nm
    assert np.all(np.diff(xs) > 0)
    assert np.all(ys[xs < join] == 1.0) and np.all(ys[xs >= join] == 2.0)
    assert xs.size == np.count_nonzero(a < join) + np.count_nonzero(b >= join)
    assert "2 scans" in note and "297.475 nm" in note


def test_channels_in_any_order_and_without_overlap():
    a = np.arange(200.0, 250.0, 0.1)
    b = np.arange(250.0, 300.0, 0.1)
    c = np.arange(300.0, 350.0, 0.1)
    x = np.concatenate([c, b, a])
    y = np.concatenate([np.full(c.size, 3.0), np.full(b.size, 2.0), np.full(a.size, 1.0)])
    spec = read_spectrum(_csv(x, y))
    np.testing.assert_allclose(spec.x, np.concatenate([a, b, c]), atol=1e-6)
    np.testing.assert_array_equal(spec.y, np.repeat([1.0, 2.0, 3.0], [a.size, b.size, c.size]))
    assert any("3 scans" in n for n in spec.source.notes)


def test_a_file_of_channels_is_detected_as_a_spectrum():
    a, b = _two_channels()
    x = np.concatenate([a, b])
    out = read_any(_csv(x, np.ones(x.size)))
    assert isinstance(out, Spectrum) and np.all(np.diff(out.x) > 0)


def test_descending_channels_are_turned_and_joined():
    a, b = _two_channels()
    x = np.concatenate([b[::-1], a[::-1]])  # each channel written from long to short λ
    y = np.concatenate([np.full(b.size, 2.0), np.full(a.size, 1.0)])
    spec = read_spectrum(_csv(x, y))
    assert np.all(np.diff(spec.x) > 0) and spec.x[0] == pytest.approx(200.0)


@pytest.mark.parametrize(
    ("x", "why"),
    [
        (np.r_[np.arange(0.0, 50.0), [49.5], np.arange(50.0, 100.0)], "a row out of place"),
        (np.r_[np.arange(0.0, 50.0), [51.0, 50.0], np.arange(52.0, 100.0)], "two rows swapped"),
        (np.r_[np.arange(0.0, 100.0), np.arange(20.0, 60.0)], "a scan inside another"),
        (np.r_[np.arange(0.0, 100.0), np.arange(90.0, 90.0 + MIN_SCAN_POINTS - 1)], "short scan"),
        (np.r_[np.arange(0.0, 50.0), np.arange(49.0, 100.0)], "a repeated position"),
    ],
)
def test_damaged_order_is_not_taken_for_scans(x, why):
    assert split_scans(x + 300.0) is None, why


def test_swapped_rows_are_refused_naming_the_row():
    x = np.arange(400.0, 460.0, 0.5)
    x[[30, 31]] = x[[31, 30]]
    with pytest.raises(ValueRangeError, match="row 33"):  # header line 1, x[31] on line 33
        read_spectrum(_csv(x, np.ones(x.size)))


def test_a_real_lamp_written_as_two_channels_reads_back_as_the_lamp():
    # Goodman 1200M4 GG455 Ne lamp (goodman-pipeline 3.1.0, tests/realdata/loader.py)
    # written as two overlapping channels, the red one first. Every sample of
    # the join's own side is kept, so the spectrum read back is the original.
    from tests.realdata.loader import load
    from tests.realdata.run import element_classes, run_real
    from workbench.matching import MatchParameters
    from workbench.matching.analyse import analyse_spectrum

    rs = load("goodman_comp_1200M4_GG455_Ne")
    x, y = np.asarray(rs.spectrum.x), np.asarray(rs.spectrum.y, dtype=float)
    blue, red = x < 625.0, x > 615.0
    text = "wavelength (nm),counts\n" + "\n".join(
        f"{a:.10f},{b:.10g}"
        for a, b in zip(np.r_[x[red], x[blue]], np.r_[y[red], y[blue]], strict=True)
    )
    spec = read_spectrum(text.encode(), medium=rs.spectrum.medium)
    np.testing.assert_allclose(spec.x, x, rtol=0, atol=1e-9)
    np.testing.assert_allclose(spec.y, y, rtol=1e-9)
    out = analyse_spectrum(spec, None, MatchParameters(mode=rs.mode))
    assert element_classes(out.report) == element_classes(run_real(rs).report)
    assert element_classes(out.report)["Ne"] == "established"
