"""The vectorised extrema routines agree with scipy.signal on the same arrays.

scipy.signal (find_peaks, peak_prominences, peak_widths; SciPy 1.x) is the
oracle: the routines implement its documented definitions without importing it.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal

from workbench.peaks.extrema import (
    half_height_crossings,
    local_maxima,
    peak_prominences,
    select_peaks,
)


def _signals() -> list[np.ndarray]:
    rng = np.random.default_rng(20261202)
    noise = rng.normal(0.0, 1.0, 5000)
    # Quantised values make flat tops (plateaus) and equal minima.
    quantised = np.round(rng.normal(0.0, 1.5, 3000))
    x = np.linspace(0.0, 60.0, 4000)
    lines = sum(a * np.exp(-0.5 * ((x - c) / 0.2) ** 2) for a, c in [(50, 10), (8, 30), (90, 45)])
    return [noise, quantised, lines + rng.normal(0.0, 0.5, x.size), np.zeros(10), np.ones(2)]


def _quiet(fn, *args, **kwargs):
    # scipy warns (PeakPropertyWarning) about zero prominences or widths; the
    # values it returns are still the reference.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*args, **kwargs)


def _scipy_widths(s, peaks, level, lb, rb):
    prom = 2.0 * (s[peaks] - level)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _, _, left, right = signal.peak_widths(
            s, peaks, rel_height=0.5, prominence_data=(prom, lb, rb)
        )
    return left, right


@pytest.mark.parametrize("i", range(5))
@pytest.mark.parametrize("wlen", [3, 11, 201])
def test_agrees_with_scipy(i: int, wlen: int) -> None:
    s = _signals()[i]
    expected, _ = signal.find_peaks(s)
    got = local_maxima(s)
    np.testing.assert_array_equal(got, expected)
    if got.size == 0:
        return
    prom, lb, rb = peak_prominences(s, got, wlen)
    e_prom, e_lb, e_rb = _quiet(signal.peak_prominences, s, got, wlen=wlen)
    np.testing.assert_allclose(prom, e_prom, rtol=0, atol=1e-12)
    np.testing.assert_array_equal(lb, e_lb)
    np.testing.assert_array_equal(rb, e_rb)
    level = s[got] - 0.25 * prom
    left, right = half_height_crossings(s, got, level, lb, rb)
    e_left, e_right = _scipy_widths(s, got, level, lb, rb)
    np.testing.assert_allclose(left, e_left, rtol=0, atol=1e-9)
    np.testing.assert_allclose(right, e_right, rtol=0, atol=1e-9)
    sel = select_peaks(s, 0.5, 1.0, wlen)
    e_idx, e_props = _quiet(signal.find_peaks, s, height=0.5, prominence=1.0, wlen=wlen)
    np.testing.assert_array_equal(sel["peaks"], e_idx)
    np.testing.assert_array_equal(sel["left_bases"], e_props["left_bases"])


@settings(derandomize=True, max_examples=300, deadline=None)
@given(
    st.lists(st.integers(-4, 4), min_size=0, max_size=60),
    st.sampled_from([3, 5, 9, 61]),
)
def test_small_quantised_signals_agree(values: list[int], wlen: int) -> None:
    s = np.asarray(values, dtype=np.float64)
    if s.size == 0:
        assert local_maxima(s).size == 0
        return
    expected, _ = signal.find_peaks(s)
    got = local_maxima(s)
    np.testing.assert_array_equal(got, expected)
    if got.size:
        prom, lb, rb = peak_prominences(s, got, wlen)
        e_prom, e_lb, e_rb = _quiet(signal.peak_prominences, s, got, wlen=wlen)
        np.testing.assert_array_equal(prom, e_prom)
        np.testing.assert_array_equal(lb, e_lb)
        np.testing.assert_array_equal(rb, e_rb)
        level = s[got] - 0.5 * np.maximum(prom, 1e-300)
        left, right = half_height_crossings(s, got, level, lb, rb)
        e_left, e_right = _scipy_widths(s, got, level, lb, rb)
        np.testing.assert_allclose(left, e_left, atol=1e-12)
        np.testing.assert_allclose(right, e_right, atol=1e-12)


def test_peak_finding_imports_neither_scipy_signal_nor_stats():
    # Issue 14: importing scipy.signal (and with it scipy.stats) cost more than
    # the whole search on a million points. A fresh process shows what is loaded.
    import subprocess
    import sys

    code = (
        "import sys, numpy as np\n"
        "from workbench.datamodel import Spectrum\n"
        "from workbench.peaks import find_peaks\n"
        "x = np.linspace(400.0, 500.0, 2000)\n"
        "y = 10 + 100 * np.exp(-0.5 * ((x - 450.0) / 0.2) ** 2)\n"
        "y += np.random.default_rng(20261202).normal(0, 1, x.size)\n"
        "p = find_peaks(Spectrum(x, y, 'wavelength', 'air'))\n"
        "print(p.table.height, [m for m in ('scipy.signal', 'scipy.stats', 'scipy.ndimage')"
        " if m in sys.modules])\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split(maxsplit=1)[1].strip() == "[]"
    assert int(out.stdout.split()[0]) >= 1  # the 100-count line at 450 nm is found
