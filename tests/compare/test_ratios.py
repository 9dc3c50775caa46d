import numpy as np
import pytest
from scipy import stats

from tests.compare.helpers import peak_csv
from workbench.compare._common import read_peaks
from workbench.compare.ratios import (
    evaluate_ratio,
    line_intensity,
    parse_ratio,
    ratio_interval,
)
from workbench.compare.similarity import Tolerance
from workbench.errors import ComparisonError, InputError


def test_parse_ratio_nm_and_kev():
    r = parse_ratio("Sr:407.771/Ca:393.366")
    assert r.numerator.element == "Sr" and r.numerator.position == 407.771
    assert r.numerator.medium == "air" and r.numerator.axis == "wavelength"
    e = parse_ratio("fe:6.404keV/Mn:5.899keV")
    assert e.numerator.element == "Fe" and e.numerator.position == pytest.approx(6404.0)
    assert e.denominator.axis == "energy" and e.denominator.medium is None


@pytest.mark.parametrize("bad", ["Sr407/Ca393", "Sr:407", "Xx:407/Ca:393", "Sr:400/Ca:5keV"])
def test_parse_ratio_rejects(bad):
    with pytest.raises(InputError):
        parse_ratio(bad)


def test_interval_is_mean_pm_4s():
    vals = np.array([1.0, 2.0, 3.0])  # mean 2, s = 1 (ddof=1), by hand
    iv = ratio_interval(vals)
    assert (iv.mean, iv.s, iv.low, iv.high) == pytest.approx((2.0, 1.0, -2.0, 6.0))


def test_floor_rule_raises_small_s():
    vals = np.array([1.000, 1.001, 0.999])  # s = 0.001, below 3 % of the mean (0.03)
    iv = ratio_interval(vals, rule="4s-floor", floor_rsd=0.03)
    assert iv.s_used == pytest.approx(0.03)  # max(s, 0.03 * 1.0)
    assert iv.high == pytest.approx(1.12)  # 1 + 4 * 0.03
    plain = ratio_interval(vals, rule="4s")
    assert plain.s_used == pytest.approx(0.001)


def test_too_few_replicates():
    with pytest.raises(ComparisonError, match="needs at least 3"):
        ratio_interval(np.array([1.0, 1.1]))  # fewer than 3 for ±4 s (from memory, practice)
    with pytest.raises(ComparisonError):
        ratio_interval(np.array([1.0, 1.1, 1.2]), rule="5s")


def test_same_distribution_rate_matches_student_t():
    # Known: n = 5 draws of N(mu, sigma); questioned: one more draw. Inside mean ± 4 s iff
    # |T| <= 4 / sqrt(1 + 1/n) with T ~ t(n - 1) (predictive interval; standard statistics,
    # derived analytically, no source needed beyond the t distribution).
    rng = np.random.default_rng(20261202)
    n, trials = 5, 4000
    known = rng.normal(0.08, 0.004, size=(trials, n))
    quest = rng.normal(0.08, 0.004, size=trials)
    inside = sum(
        evaluate_ratio(known[t], quest[t : t + 1])["outcome"] == "cannot be distinguished"
        for t in range(trials)
    )
    expected = 2 * stats.t.cdf(4 / np.sqrt(1 + 1 / n), df=n - 1) - 1  # ≈ 0.978
    sd = np.sqrt(expected * (1 - expected) / trials)
    assert abs(inside / trials - expected) < 4 * sd


def test_shift_of_ten_sigma_is_distinguishable():
    rng = np.random.default_rng(20261202)
    outcomes = []
    for _ in range(200):
        known = rng.normal(1.0, 0.01, size=5)
        quest = rng.normal(1.0 + 10 * 0.01, 0.01, size=3)
        outcomes.append(evaluate_ratio(known, quest)["outcome"])
    # P(4 s > 10 σ - noise) is tiny for n = 5 (chi-square tail, ~1e-4; derived, no source).
    assert outcomes.count("distinguishable") >= 198


def test_line_intensity_nearest_within_tolerance():
    peaks = read_peaks(
        peak_csv([393.36, 393.40, 407.78], [10.0, 3.0, 2.0]), name="t.csv", medium="air"
    )
    line = parse_ratio("Sr:407.771/Ca:393.366").denominator
    assert line_intensity(peaks, line, Tolerance(fixed=0.05)) == pytest.approx((393.36, 10.0))
    assert line_intensity(peaks, line, Tolerance(fixed=0.001)) is None


def test_line_in_other_medium_is_converted():
    # Ca II 393.366 nm air ≈ 393.477 nm vacuum (IAU formula via workbench.physics.airvac).
    from workbench.physics.airvac import air_to_vacuum_nm

    vac = float(air_to_vacuum_nm(393.366))
    peaks = read_peaks(peak_csv([vac], [5.0]), name="v.csv", medium="vacuum")
    line = parse_ratio("Sr:407.771/Ca:393.366").denominator
    assert line_intensity(peaks, line, Tolerance(fixed=0.005)) == pytest.approx((vac, 5.0))
