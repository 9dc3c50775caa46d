"""The evidence pass's layout cache: reused for equal inputs only, never changes a result.

Invented reference set and peaks (tests/matching/invented.py); the expectations
are mechanical (same object, same values), no physical constants involved.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.matching.invented import FakeSet, invented_table
from workbench.matching import layout, species_scale
from workbench.matching.evidence import ObservedLines, gather_evidence
from workbench.matching.expected import expected_strengths
from workbench.matching.reference import ReferenceIndex

# MatchParameters defaults (workbench.matching.params), written out so the
# test does not depend on them changing.
KW = dict(strong_fraction=0.1, min_rel_intensity=1e-3, competitor_min_rel=0.05, sigma_dex=0.3)


@pytest.fixture
def setup():
    idx = ReferenceIndex.from_sets([FakeSet("invented", invented_table())], "wavelength", "vacuum")
    e = expected_strengths(idx, 10_000.0)
    # Peaks on every Qa line and on Qb 450 (invented), 0.001 nm off.
    qa = idx.species == idx.species_names.index("Qa I")
    pos = np.sort(np.append(idx.position[qa], 450.0) + 0.001)
    inten = np.linspace(100.0, 500.0, pos.size)
    obs = ObservedLines(
        position=pos,
        intensity=inten,
        half_window=np.full(pos.size, 0.02),
        saturated=np.zeros(pos.size, dtype=bool),
        detection_limit=50.0,
    )
    in_range = (idx.position >= 250.0) & (idx.position <= 650.0)
    layout._LAYOUTS = ()
    return obs, idx, e, in_range


def _nan_safe(values):
    # NaN marks "no found peak" (e.g. offset_u); NaN != NaN, so compare it as a tag.
    return ["nan" if isinstance(x, float) and x != x else x for x in np.asarray(values).tolist()]


def _summary(ev_pass):
    return {
        code: (
            ev.level,
            ev.net_evidence_dex,
            ev.scale,
            ev.found_lines,
            ev.found_peaks,
            ev.unique_lines,
            ev.missing_lines,
            {k: None if v is None else _nan_safe(v) for k, v in ev.groups.items()},
        )
        for code, ev in ev_pass.evidence.items()
    }


def test_layout_reused_for_equal_inputs(setup):
    obs, idx, e, in_range = setup
    first = layout.pass_layout(obs, idx, e, in_range, 1e-3)
    # Equal values in new arrays: the same layout.
    assert layout.pass_layout(obs, idx, e.copy(), in_range.copy(), 1e-3) is first
    # A different threshold or index: a new one.
    assert layout.pass_layout(obs, idx, e, in_range, 1e-2) is not first
    idx2 = ReferenceIndex.from_sets([FakeSet("invented", invented_table())], "wavelength", "vacuum")
    assert layout.pass_layout(obs, idx2, e, in_range, 1e-3) is not first


def test_layout_not_reused_after_an_in_place_change(setup):
    obs, idx, e, in_range = setup
    e = e.copy()
    first = layout.pass_layout(obs, idx, e, in_range, 1e-3)
    line = int(np.flatnonzero(in_range & np.isfinite(e))[0])
    e[line] *= 2.0
    second = layout.pass_layout(obs, idx, e, in_range, 1e-3)
    assert second is not first
    assert second.g_strength[second.line_group[line]] != first.g_strength[first.line_group[line]]


def test_cached_pass_equals_fresh_pass(setup):
    obs, idx, e, in_range = setup
    a = gather_evidence(obs, idx, e, in_range, **KW)
    b = gather_evidence(obs, idx, e, in_range, **KW, plausible=set(a.evidence))  # cached
    layout._LAYOUTS = ()
    c = gather_evidence(obs, idx, e, in_range, **KW, plausible=set(a.evidence))  # fresh
    assert _summary(b) == _summary(c)
    assert np.array_equal(b.pairs.obs, c.pairs.obs) and np.array_equal(b.pairs.ref, c.pairs.ref)
    assert any(ev.found_lines for ev in a.evidence.values())


def test_layout_arrays_are_read_only(setup):
    obs, idx, e, in_range = setup
    ev_pass = gather_evidence(obs, idx, e, in_range, **KW)
    ev = next(iter(ev_pass.evidence.values()))
    # The evidence holds views of the shared layout: writing to them must fail
    # rather than change another pass.
    with pytest.raises(ValueError):
        ev.groups["found"][0] = True
    with pytest.raises(ValueError):
        ev_pass.pairs.obs[0] = 0


def _scales_one_by_one(g_start, g_end, I_all, pred, good_all, gu_all, unseen_all, dl_all, xray):
    """The per-species rule as the engine had it before it was vectorised (c8d81cb)."""
    out = []
    for ga, gb in zip(g_start, g_end, strict=True):
        sl = slice(ga, gb)
        good, gu, p = good_all[sl], gu_all[sl], pred[sl]
        use = gu if np.any(gu) else good
        scale = None
        if np.any(use):
            ratios = I_all[sl][use] / p[use]
            scale = float(ratios[int(np.argmax(p[use]))]) if xray else species_scale._median(ratios)
            if dl_all is not None:
                unseen, dl = unseen_all[sl], dl_all[sl]
                for _ in range(4):
                    cens = unseen & (scale * p >= dl * species_scale.TIE_MARGIN)
                    new = species_scale._median(np.concatenate([ratios, dl[cens] / p[cens]]))
                    if new == scale:
                        break
                    scale = new
        out.append(scale)
    return out


@pytest.mark.parametrize("xray", [False, True])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_species_scales_equal_the_per_species_rule(seed, xray):
    # Random (invented) groups of 40 species, some with no usable group, some
    # with ties; the vectorised scales must equal the per-species ones exactly.
    rng = np.random.default_rng(seed)
    counts = rng.integers(0, 30, 40)
    g_end = np.cumsum(counts) + 5  # a gap of 5 groups of an absent species first
    g_start = g_end - counts
    n = int(g_end[-1]) + 3
    I_all = np.round(rng.lognormal(2.0, 1.0, n), 1)
    pred = np.round(rng.uniform(0.01, 1.0, n), 2)
    good = rng.random(n) < 0.4
    gu = good & (rng.random(n) < 0.5)
    unseen = ~good & (rng.random(n) < 0.6)
    dl = None if xray else np.full(n, 2.0)
    got = species_scale.species_scales(g_start, g_end, I_all, pred, good, gu, unseen, dl, xray)
    want = _scales_one_by_one(g_start, g_end, I_all, pred, good, gu, unseen, dl, xray)
    assert got == want
    assert any(v is None for v in want) and any(v is not None for v in want)


def test_a_species_seen_only_on_bounded_peaks_takes_its_least_scale():
    # Invented: species 0 has one group found only on a clipped or split top
    # (height 1000, a lower bound; predicted 1 per unit) and one missed group
    # (predicted 0.5 per unit, detection limit 10); species 1 a measured
    # group (300 / 1). Species 0's scale is at least 1000, so its missed group
    # is predicted at 500 or more; without the bound it had no scale at all.
    g_start, g_end = np.array([0, 2]), np.array([2, 3])
    I_all = np.array([1000.0, np.nan, 300.0])
    pred = np.array([1.0, 0.5, 1.0])
    good = np.array([False, False, True])
    unseen = np.array([False, True, False])
    lower = np.array([True, False, False])
    dl = np.full(3, 10.0)
    args = (g_start, g_end, I_all, pred, good, good, unseen, dl, False)
    assert species_scale.species_scales(*args) == [None, 300.0]
    assert species_scale.species_scales(*args, lower_all=lower) == [1000.0, 300.0]
    # A measured scale is never replaced by a bound.
    both = np.array([True, False, True])
    assert species_scale.species_scales(*args, lower_all=both) == [1000.0, 300.0]
