"""Absorption: blends' forward-modelled dips, usable chance density, closeness in crowded windows.

Tests :mod:`workbench.matching.absorption` and the absorption parts of
:mod:`workbench.matching.scoring` (``closeness_probability`` with blend
terms, the data test of a prior-named absorber in ``decide_verdict``, the
features a species' lines make at the instrument's resolution).
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching.absorption import (
    blend_closeness_terms,
    feature_test,
    instrument_fwhm,
    predicted_features,
    species_features,
    usable_density,
)
from workbench.matching.evidence import ObservedLines
from workbench.matching.scoring import SpeciesEvidence, closeness_probability, decide_verdict

# Na I D2 / D1 in air, nm (NIST ASD, from memory); invented relative strengths.
D2_NM, D1_NM = 588.995, 589.592


def test_usable_density_counts_usable_dips_over_the_free_axis():
    excl = np.zeros(10, dtype=bool)
    excl[[0, 3]] = True
    hw = np.full(10, 2.0)
    # 8 usable dips over 200 − 2 × (2 × 2.0) = 192 nm (arithmetic); the
    # density passed in is 10 / 200.
    assert usable_density(10 / 200.0, excl, hw, 200.0) == pytest.approx(8 / 192.0)
    assert usable_density(0.05, None, hw, 200.0) == 0.05
    # Excluded widths never take more than half the span.
    assert usable_density(10 / 200.0, excl, np.full(10, 80.0), 200.0) == pytest.approx(8 / 100.0)


def test_blend_terms_measure_from_the_strength_weighted_dip():
    w2, w1 = 1.0, 0.9
    dip = (D2_NM * w2 + D1_NM * w1) / (w2 + w1)
    span = D1_NM - D2_NM
    tol, peak = 0.78, 589.21
    t = blend_closeness_terms(
        np.array([dip]),
        np.array([D2_NM]),
        np.array([span]),
        np.array([tol]),
        np.array([2.0]),  # resolution element wider than the doublet: one dip
        np.array([peak]),
        np.array([True]),
        0.05,
    )
    half = tol + span / 2.0
    mid = (D2_NM + D1_NM) / 2.0
    assert t["blend_u"][0] == pytest.approx((peak - mid) / half)
    assert t["blend_ref_u"][0] == pytest.approx((dip - mid) / half)
    assert t["blend_unit"][0] == pytest.approx(tol / half)
    assert t["blend_rho_tol"][0] == pytest.approx(0.05 * tol)
    # Closeness from the dip, without crowding (density 0): the part of the
    # window within |peak − dip| of the dip (arithmetic on the values above).
    c = closeness_probability(
        np.array([peak - D2_NM]) / tol,
        np.array([2.0 + span / tol]),
        np.array([2]),
        blend=(t["blend_u"], t["blend_ref_u"], t["blend_unit"], np.zeros(1)),
    )
    assert c == pytest.approx(2.0 * abs(peak - dip) / (2.0 * half))
    # Measured from the nearest line (D2), the same peak looked much farther.
    c_old = closeness_probability(
        np.array([peak - D2_NM]) / tol, np.array([2.0 + span / tol]), np.array([2])
    )
    assert c < 0.3 * c_old


def test_a_group_wider_than_the_resolution_has_no_blend_dip():
    t = blend_closeness_terms(
        np.array([500.5]),
        np.array([500.0]),
        np.array([1.0]),
        np.array([0.2]),
        np.array([0.5]),  # two lines 1 nm apart at 0.5 nm resolution: resolved
        np.array([500.1]),
        np.array([True]),
        0.05,
    )
    assert np.isnan(t["blend_u"][0]) and np.isnan(t["blend_ref_u"][0])
    assert t["blend_rho_tol"][0] == pytest.approx(0.01)


def test_single_line_blend_terms_give_the_one_line_closeness():
    tol, off = 0.5, 0.12
    t = blend_closeness_terms(
        np.array([600.0]),
        np.array([600.0]),
        np.zeros(1),
        np.array([tol]),
        np.array([1.0]),
        np.array([600.0 + off]),
        np.array([True]),
        0.0,
    )
    blend = (t["blend_u"], t["blend_ref_u"], t["blend_unit"], t["blend_rho_tol"])
    args = (np.array([off / tol]), np.array([2.0]), np.array([1]))
    assert closeness_probability(*args, blend=blend) == pytest.approx(closeness_probability(*args))


@pytest.mark.parametrize("expected_dips", [0.3, 3.0])
def test_closeness_is_uniform_under_chance_in_crowded_windows(expected_dips):
    # Monte Carlo of the null (invented, seeded): a Poisson number of chance
    # dips in a window [−1, 1] around a line; the found peak is the nearest
    # one. Under chance P(c ≤ q) must be q (uniform p-value; definition).
    rng = np.random.default_rng(20261203)
    tol = 1.0
    rho = expected_dips / (2.0 * tol)
    cs = []
    while len(cs) < 4000:
        n = rng.poisson(expected_dips)
        if n == 0:
            continue
        x = rng.uniform(-1.0, 1.0, n)
        u = x[np.argmin(np.abs(x))]
        t = blend_closeness_terms(
            np.array([0.0]),
            np.array([0.0]),
            np.zeros(1),
            np.array([tol]),
            np.array([1.0]),
            np.array([u]),
            np.array([True]),
            rho,
        )
        blend = (t["blend_u"], t["blend_ref_u"], t["blend_unit"], t["blend_rho_tol"])
        cs.append(closeness_probability(np.array([u]), np.array([2.0]), np.array([1]), blend=blend))
    cs = np.array(cs)
    for q in (0.05, 0.2, 0.5):
        # 4000 draws: binomial standard error ≤ 0.008; 0.03 is about 4σ.
        assert abs(np.mean(cs <= q) - q) < 0.03, (q, np.mean(cs <= q))


def _one_feature_species(*, crowded: bool, prior: float, p_data: float) -> SpeciesEvidence:
    ev = SpeciesEvidence(code=0, label="Na I", element="Na", ion=1, family=None)
    ev.groups = {
        "known": np.array([True, True]),
        "predicted": np.array([0.3, 0.05]),
        "found": np.array([True, False]),
        "unique": np.array([True, False]),
        "visible": np.array([True, False]),
        "masked": np.array([False, False]),
        "crowded": np.array([crowded, False]),
        "explained": np.array([False, False]),
        "peak": np.array([3, -1]),
        "absorption": True,
        "prior_test_p": p_data,
    }
    ev.n_groups_matched = ev.n_groups_found = ev.n_groups_counted = 1
    ev.n_unique_peaks = 1
    ev.missing_evidence = True
    ev.prior_dex = prior
    ev.chance_probability = 0.13
    ev.net_evidence_dex = 2.0
    return ev


def test_a_named_absorber_may_rest_probable_on_its_strongest_feature():
    # Named by a prior, its data test passed: "probable" on one feature.
    assert decide_verdict(_one_feature_species(crowded=False, prior=2.0, p_data=0.03)) == 2
    # The data test failed: the prior cannot make the call.
    assert decide_verdict(_one_feature_species(crowded=False, prior=2.0, p_data=0.2)) == 1
    # The feature sits beside a stronger dip (left out of the chance test).
    assert decide_verdict(_one_feature_species(crowded=True, prior=2.0, p_data=0.03)) == 1
    # Without a prior nothing changes: two counted groups are needed.
    assert decide_verdict(_one_feature_species(crowded=False, prior=0.0, p_data=1e-6)) == 1


def _sum_of_gaussians(x, lines, strengths, fwhm):
    # Direct evaluation (no grid, no convolution): the reference the
    # forward model's features are checked against.
    sigma = fwhm / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    return np.sum(
        strengths[None, :] * np.exp(-0.5 * ((x[:, None] - lines[None, :]) / sigma) ** 2), 1
    )


def test_an_unresolved_triplet_is_one_feature_at_its_convolved_minimum():
    # Mg I b3, b2, b1 in air, nm (NIST ASD, from memory); invented strengths.
    lines = np.array([516.732, 517.268, 518.360])
    w = np.array([0.75, 0.94, 1.0])
    pos, depth, prom = predicted_features(lines, w, 2.0)
    assert pos.size == 1
    x = np.linspace(510.0, 525.0, 150001)
    a = _sum_of_gaussians(x, lines, w, 2.0)
    # Same minimum as the direct sum to 1 % of the FWHM (the grid's claim).
    assert pos[0] == pytest.approx(x[np.argmax(a)], abs=0.02)
    assert depth[0] == pytest.approx(a.max(), rel=1e-3)
    assert prom[0] == pytest.approx(depth[0])  # alone: its whole depth stands out


def test_resolved_lines_are_separate_features_and_a_shoulder_is_none():
    # Invented: two lines 4 FWHM apart, each its own feature with its own
    # strength; a weak line 0.3 FWHM beside a strong one adds no dip.
    pos, _, prom = predicted_features(np.array([500.0, 508.0]), np.array([1.0, 0.5]), 2.0)
    assert pos == pytest.approx([500.0, 508.0], abs=0.02)
    assert prom == pytest.approx([1.0, 0.5], rel=1e-3)
    pos, _, _ = predicted_features(np.array([500.0, 500.6]), np.array([1.0, 0.1]), 2.0)
    assert pos.size == 1


def test_a_line_forest_makes_resolvable_features_not_one_chain():
    # Invented forest: lines every 0.8 nm (closer than the 2 nm resolution
    # element, so resolvable_groups chains them all), with strengths that
    # peak every 6 nm: the instrument sees a dip every 6 nm.
    lines = np.arange(400.0, 460.0, 0.8)
    w = 0.2 + np.cos(np.pi * (lines - 400.0) / 6.0) ** 8
    pos, _, prom = predicted_features(lines, w, 2.0)
    # Inside the forest (its ends are edges of their own): 406 … 454 nm.
    strong = pos[(prom > 0.1) & (pos > 403.0) & (pos < 457.0)]
    assert strong.size == 9
    assert np.diff(strong) == pytest.approx(np.full(8, 6.0), abs=0.5)


def test_instrument_fwhm_is_the_median_of_usable_dips():
    res = np.array([2.0, 2.0, 9.7, 2.2, 12.0])
    # Median of the usable widths 2.0, 2.0, 2.2 (arithmetic).
    assert instrument_fwhm(res, np.array([True, True, False, True, False])) == 2.0


def _obs(x, intensity, excluded=None):
    x = np.asarray(x, dtype=float)
    return ObservedLines(
        position=x,
        intensity=np.asarray(intensity, dtype=float),
        half_window=np.full(x.size, 1.0),
        saturated=np.zeros(x.size, dtype=bool),
        detection_limit=0.05,
        excluded=excluded,
        resolution=np.full(x.size, 2.0),
    )


def test_features_find_their_dips_and_count_each_dip_once():
    # Invented: two features at 500 and 520 nm, inside one chain window; a
    # dip at 500.3 and one at 560.
    obs = _obs([500.3, 560.0], [0.3, 0.3])
    f = species_features(
        obs,
        np.array([500.0, 520.0]),
        np.array([1.0, 0.8]),
        fwhm=2.0,
        scale=0.3,
        response=(np.zeros(0), np.zeros(0)),
        strong_fraction=0.1,
        density=0.02,
        chains=(np.array([499.0]), np.array([521.0])),
    )
    assert f["in_chain"].all()
    assert f["found"].tolist() == [True, False]
    assert f["dip"][0] == 0
    assert f["offset_u"][0] == pytest.approx(0.3, abs=0.02)
    assert f["visible"].all() and f["counted"].all()
    # The scale measured on the found feature: 0.3 / 1.0 (arithmetic).
    assert f["scale"] == pytest.approx(0.3, rel=1e-3)
    t = feature_test(f, unique_dips=np.array([0]))
    assert (t["k"], t["n"], t["unique"]) == (1, 2, 1)
    # Outside chains the groups' own closeness applies: no feature is tested.
    f["in_chain"][:] = False
    assert feature_test(f)["k"] == 0
    # An excluded dip (a band) is never a feature's dip.
    obs = _obs([500.3, 560.0], [0.3, 0.3], excluded=np.array([True, False]))
    f = species_features(
        obs,
        np.array([500.0]),
        np.array([1.0]),
        fwhm=2.0,
        scale=0.3,
        response=(np.zeros(0), np.zeros(0)),
        strong_fraction=0.1,
        density=0.02,
    )
    assert not f["found"][0]
    # Two features within one window of a single dip: the dip counts once.
    obs = _obs([500.0], [0.3])
    f = species_features(
        obs,
        np.array([499.2, 500.7]),
        np.array([1.0, 1.0]),
        fwhm=1.0,
        scale=0.3,
        response=(np.zeros(0), np.zeros(0)),
        strong_fraction=0.1,
        density=0.02,
    )
    assert f["found"].tolist() == [True, True]
    assert int(np.count_nonzero(f["counted"] & f["found"])) == 1


@pytest.mark.parametrize("expected_dips", [0.1, 1.0])
def test_feature_test_is_not_anti_conservative_under_chance(expected_dips):
    # Monte Carlo of the null (invented, seeded): 6 features of one species,
    # chance dips uniform (Poisson) along the axis; P(p ≤ q) must not
    # exceed q (a valid test; definition).
    rng = np.random.default_rng(20261203)
    feat = np.arange(6) * 20.0 + 410.0
    span = (400.0, 530.0)
    rho = expected_dips / 2.0  # dips per nm; half-window 1 nm
    ps = []
    for _ in range(3000):
        x = np.sort(rng.uniform(*span, rng.poisson(rho * (span[1] - span[0]))))
        if x.size == 0:
            ps.append((1.0, 1.0))
            continue
        f = species_features(
            _obs(x, np.full(x.size, 0.3)),
            feat,
            np.ones(6),
            fwhm=2.0,
            scale=None,
            response=(np.zeros(0), np.zeros(0)),
            strong_fraction=0.1,
            density=rho,
            chains=(np.array([span[0]]), np.array([span[1]])),
        )
        t = feature_test(f)
        ps.append((t["binomial"], t["closeness"]))
    ps = np.array(ps)
    for q in (0.01, 0.05, 0.2):
        # 3000 draws: binomial standard error ≤ 0.0073; 0.02 is under 3σ.
        for j in range(2):
            assert np.mean(ps[:, j] <= q) <= q + 0.02, (j, q, np.mean(ps[:, j] <= q))


def test_feature_prominences_are_the_usual_ones():
    # Reference: workbench.peaks.extrema.peak_prominences with an unlimited
    # window, on seeded invented smooth signals that are 0 at both ends.
    from workbench.matching.absorption import _prominences
    from workbench.peaks.extrema import local_maxima, peak_prominences

    rng = np.random.default_rng(20261203)
    kernel = np.exp(-0.5 * (np.arange(-20, 21) / 5.0) ** 2)
    for _ in range(50):
        spikes = rng.exponential(1.0, 400) * (rng.random(400) < 0.2)
        x = np.concatenate(([0.0], np.convolve(spikes, kernel), [0.0]))
        peaks = local_maxima(x)
        expected = peak_prominences(x, peaks, 2 * x.size + 1)[0]
        assert _prominences(x, peaks) == pytest.approx(expected)
