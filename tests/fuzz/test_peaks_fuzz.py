"""Peak finding on any spectrum the readers accept: a result or one clear error.

The readers accept finite values within ±1e150 (``workbench.io.MAX_ABS_VALUE``);
every such spectrum must give a peak list or an ``InputError``, never another
exception and never a numpy warning (warnings are errors in this suite).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from workbench.datamodel import Spectrum
from workbench.errors import InputError
from workbench.io import MAX_ABS_VALUE
from workbench.peaks import find_peaks

_X = np.linspace(400.0, 500.0, 64)


@settings(
    derandomize=True,
    database=None,
    deadline=None,
    max_examples=400,
    suppress_health_check=[HealthCheck.too_slow],
)
@given(
    arrays(np.float64, 64, elements=st.floats(-MAX_ABS_VALUE, MAX_ABS_VALUE)),
    st.sampled_from(["emission", "absorption"]),
    st.sampled_from(["snip", "als", None]),
)
def test_any_accepted_spectrum(y, mode, baseline):
    try:
        peaks = find_peaks(Spectrum(_X, y, "wavelength", "air"), mode=mode, baseline=baseline)
    except InputError:
        return
    pos = peaks.positions
    assert np.all(np.isfinite(pos)) and np.all((pos >= _X[0]) & (pos <= _X[-1]))


@pytest.mark.parametrize("mode", ["emission", "absorption"])
@pytest.mark.parametrize(
    "make",
    [
        lambda rng: rng.normal(0, 1, 300) * 10.0 ** rng.integers(-300, 150),
        lambda rng: np.where(rng.random(300) < 0.1, MAX_ABS_VALUE, 0.0),
        lambda rng: np.full(300, rng.choice([0.0, MAX_ABS_VALUE, -MAX_ABS_VALUE, 5e-324])),
        lambda rng: np.tile([MAX_ABS_VALUE, -MAX_ABS_VALUE], 150),
        lambda rng: rng.integers(0, 3, 300).astype(float),
    ],
)
def test_seeded_extreme_spectra(make, mode):
    rng = np.random.default_rng(20261202)
    x = np.linspace(400.0, 500.0, 300)
    for _ in range(10):
        for baseline in ("snip", "als", None):
            spectrum = Spectrum(x, make(rng), "wavelength", "air")
            try:
                find_peaks(spectrum, mode=mode, baseline=baseline)
            except InputError:
                pass


def test_subnormal_noise_gives_finite_snr():
    # Found by the hypothesis test above: one subnormal sample makes σ subnormal,
    # and height/σ overflowed (RuntimeWarning). 2.2250738585072014e-308 is the
    # smallest normal double (IEEE 754 binary64); 2.2e-309 is below it.
    y = np.zeros(64)
    y[1:32:2] = 1.0
    y[25] = 2.22507386e-309
    peaks = find_peaks(Spectrum(_X, y, "wavelength", "air"), baseline=None)
    assert np.all(np.isfinite(peaks.table["snr"].to_numpy()))
