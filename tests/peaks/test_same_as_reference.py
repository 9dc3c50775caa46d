"""The faster forms of the noise estimate and SNIP give exactly the straightforward results.

Issue 14 replaced ``np.median`` on copies by in-place selection, ran the SNIP
passes block by block, and transformed LLS in place. Each is checked here
bit for bit against the plain formula it replaced (the reference being the
textbook definition written out with numpy, common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.peaks import baseline as bl
from workbench.peaks import estimate_baseline, noise_sigma, snip_baseline
from workbench.peaks.noise import MAD_TO_SIGMA, median_overwrite

SEED = 20261202


def _plain_noise_sigma(y: np.ndarray) -> float:
    d = np.diff(y)
    sigma = MAD_TO_SIGMA * float(np.median(np.abs(d - np.median(d)))) / np.sqrt(2.0)
    return sigma if sigma != 0.0 else float(np.std(d)) / np.sqrt(2.0)


def _plain_snip(y: np.ndarray, m: int, lls: bool, decreasing: bool) -> np.ndarray:
    # Ryan et al. (1988), whole array per pass, temporaries everywhere.
    offset = min(0.0, float(y.min())) if lls else 0.0
    v = np.log(np.log(np.sqrt(y - offset + 1.0) + 1.0) + 1.0) if lls else y.copy()
    for p in range(m, 0, -1) if decreasing else range(1, m + 1):
        v[p:-p] = np.minimum(v[p:-p], (v[: -2 * p] + v[2 * p :]) / 2.0)
    return (np.exp(np.exp(v) - 1.0) - 1.0) ** 2 - 1.0 + offset if lls else v


def _signals():
    rng = np.random.default_rng(SEED)
    x = np.linspace(0.0, 1.0, 3001)
    lines = 800.0 * np.exp(-0.5 * ((x - 0.3) / 0.002) ** 2)
    yield "gaussian noise, odd count", rng.normal(0.0, 1.0, 3001)
    yield "gaussian noise, even count", rng.normal(0.0, 1.0, 3000)
    yield "lines on a slope", 50.0 + 20.0 * x + lines + rng.normal(0.0, 2.0, x.size)
    yield "negative values", -30.0 + lines + rng.normal(0.0, 2.0, x.size)
    yield "quantised counts (MAD zero)", np.round(rng.normal(100.0, 0.3, 4000))
    yield "many ties", rng.integers(0, 3, 2001).astype(np.float64)
    yield "constant", np.full(500, 7.0)


@pytest.mark.parametrize(("label", "y"), list(_signals()))
def test_median_overwrite_equals_numpy_median(label, y):
    expected = float(np.median(y))
    assert median_overwrite(y.copy()) == expected, label


@pytest.mark.parametrize(("label", "y"), list(_signals()))
def test_noise_sigma_equals_plain_formula(label, y):
    assert noise_sigma(y) == _plain_noise_sigma(y), label


def test_noise_sigma_of_nan_is_nan_as_before():
    # np.median of data holding NaN is NaN; the plain formula therefore gives NaN.
    y = np.array([1.0, 2.0, np.nan, 4.0, 5.0])
    assert np.isnan(noise_sigma(y)) and np.isnan(_plain_noise_sigma(y))


@pytest.mark.parametrize("block", [64, 257, 1 << 16])
@pytest.mark.parametrize("threads", [1, 4])
@pytest.mark.parametrize("lls", [True, False])
@pytest.mark.parametrize("decreasing", [False, True])
@pytest.mark.parametrize(("label", "y"), list(_signals())[2:4])
def test_blocked_snip_equals_whole_array_passes(
    monkeypatch, block, threads, lls, decreasing, label, y
):
    # Small blocks force many block edges and halos that reach the array's ends;
    # with threads the blocks are done in any order.
    monkeypatch.setattr(bl, "_SNIP_BLOCK", block)
    monkeypatch.setattr(bl, "_SNIP_THREADS", threads)
    got = snip_baseline(y, iterations=40, lls=lls, decreasing=decreasing)
    expected = _plain_snip(y, 40, lls, decreasing)
    assert np.array_equal(got, expected), label


def test_snip_leaves_its_input_alone():
    y = np.random.default_rng(SEED).normal(10.0, 1.0, 1000)
    before = y.copy()
    snip_baseline(y, iterations=20)
    assert np.array_equal(y, before)


@pytest.mark.parametrize(("label", "y"), list(_signals()))
def test_baseline_shift_equals_plain_loop(label, y):
    # The recentring of estimate_baseline, written with np.median on copies.
    base = snip_baseline(bl._boxcar5(y), iterations=40)
    s = _plain_noise_sigma(y)
    resid = y - base
    shift = 0.0
    for _ in range(5):
        quiet = np.abs(resid - shift) <= 3.0 * s if s > 0 else np.ones(y.size, dtype=bool)
        if np.count_nonzero(quiet) < 10:
            break
        new_shift = float(np.median(resid[quiet]))
        if new_shift == shift:
            break
        shift = new_shift
    assert np.array_equal(estimate_baseline(y, "snip"), base + shift), label


@pytest.mark.parametrize(
    ("shift", "t"),
    [(0.0, 3.0), (0.1, 0.3), (-2.5, 1e-9), (1e6, 1e-3), (1e20, 1e-3), (-7.3e-300, 4.2), (5.0, 5.0)],
)
def test_band_ends_are_exact(shift, t):
    # The band's ends pass the test |r − shift| <= t as numpy computes it, and
    # the next doubles outside do not (brute force on the neighbours).
    lo, hi = bl._band(shift, t)
    inside = lambda r: bool(np.abs(np.float64(r) - shift) <= t)  # noqa: E731
    assert inside(lo) and inside(hi)
    assert not inside(np.nextafter(lo, -np.inf)) and not inside(np.nextafter(hi, np.inf))


def test_baseline_shift_without_finite_band_falls_back_to_masking():
    # σ so large that shift ± 3σ overflows: the masked path gives the plain loop's answer.
    y = np.random.default_rng(SEED).normal(0.0, 1.0, 200)
    resid = y - 0.5
    assert bl._band(0.0, np.inf) is None
    assert bl._noise_centre(resid, 1e308) == float(np.median(resid))


def test_band_ends_exact_for_random_shifts_and_widths():
    rng = np.random.default_rng(SEED)
    shifts = rng.normal(0.0, 1.0, 300) * 10.0 ** rng.integers(-300, 300, 300)
    widths = np.abs(rng.normal(0.0, 1.0, 300)) * 10.0 ** rng.integers(-300, 300, 300)
    for shift, t in zip(shifts.tolist(), widths.tolist(), strict=True):
        band = bl._band(shift, t)
        if band is None:
            continue
        lo, hi = band
        assert abs(lo - shift) <= t and abs(hi - shift) <= t
        assert not abs(np.nextafter(lo, -np.inf) - shift) <= t
        assert not abs(np.nextafter(hi, np.inf) - shift) <= t


def _plain_saturated_mask(y, mode, level):
    if mode == "absorption":
        flat = y == y.min()
    elif level is not None:
        return y >= level
    else:
        flat = y == y.max()
    neighbour = np.zeros_like(flat)
    neighbour[1:] |= flat[:-1]
    neighbour[:-1] |= flat[1:]
    mask = flat & neighbour
    if mode == "absorption":
        return mask
    # The shared ceiling (detect.CEILING_TOL, CEILING_MIN_RUNS), written as a loop.
    top = y.max()
    med = np.sort(y)[y.size // 2]
    near = y >= top - 0.01 * (top - med)
    # Separate tops: a fall below half the range between them; a top counts
    # when one of its runs has two or more samples.
    tops, length, has_flat, fell = 0, 0, False, True
    for v, yv in zip([*near.tolist(), False], [*y.tolist(), -np.inf], strict=True):
        if v:
            if fell:
                tops += has_flat
                has_flat, fell = False, False
            length += 1
        else:
            has_flat |= length >= 2
            length = 0
            fell |= yv < top - 0.5 * (top - med)
    tops += has_flat
    return mask | near if tops >= 3 and top > med else mask


@pytest.mark.parametrize("mode", ["emission", "absorption"])
@pytest.mark.parametrize("level", [None, 3.0])
def test_saturated_indices_equal_plain_mask(mode, level):
    from workbench.peaks.detect import PeakFindingParameters, _saturated_indices

    rng = np.random.default_rng(SEED)
    prm = PeakFindingParameters(mode=mode, saturation_level=level)
    for _ in range(300):
        y = rng.integers(0, 5, int(rng.integers(5, 40))).astype(np.float64)
        expected = np.flatnonzero(_plain_saturated_mask(y, mode, level))
        assert np.array_equal(_saturated_indices(y, prm), expected)


def test_local_maxima_at_least_equals_filtered_local_maxima():
    from workbench.peaks.extrema import local_maxima, local_maxima_at_least

    rng = np.random.default_rng(SEED)
    for _ in range(1000):
        # Small integer values: many plateaus, plateaus at the ends, ties with neighbours.
        x = rng.integers(0, 4, int(rng.integers(0, 50))).astype(np.float64)
        p = local_maxima(x)
        for h in (-1.0, 0.0, 1.0, 2.5, 3.0, 4.0):
            assert np.array_equal(local_maxima_at_least(x, h), p[x[p] >= h])


def test_snip_threads_see_the_callers_errstate(monkeypatch):
    # NaN with values below −1 makes LLS take the root of a negative number (an
    # "invalid" floating-point event); the caller's np.errstate must reach the
    # worker threads as it reached the single loop before (warnings are errors here).
    monkeypatch.setattr(bl, "_SNIP_BLOCK", 64)
    y = np.random.default_rng(SEED).normal(0.0, 1.0, 1000) - 5.0
    y[500] = np.nan
    with np.errstate(invalid="ignore"):
        snip_baseline(y, iterations=10)
    with np.errstate(invalid="raise"), pytest.raises(FloatingPointError):
        snip_baseline(y, iterations=10)
