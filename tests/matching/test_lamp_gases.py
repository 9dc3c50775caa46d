"""Rare-gas and mercury lamps (invented spectra): Kr, Xe and Hg reach the top class.

No spectrum of the real-data tune set holds Kr or Xe, so their behaviour is
checked here on invented lamp spectra (:mod:`tests.matching.invented_lamps`:
the shipped optical set's own Kr I, Xe I, Hg I, Ne I and Ar I lines at their
tabulated relative intensities, 0.8 dex log-normal scatter, an instrument
response falling 10× across the range, R 1000 / 2000 / 5000, 400–850 nm
vacuum and 550–1000 nm air, Poisson and read noise), run through the
product's own peak finding and matching as a user's spectrum is. Seeds are
fixed (``lamp_cases``: seed 20261203). ``benchmarks/lamp_gases.py`` prints
the full recall table (more draws, further variants).
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.matching.invented_lamps import (
    LAMPS,
    LampCase,
    clear_lines,
    draw_lamp,
    lamp_cases,
    lamp_lines,
    run_lamp,
)
from workbench.matching.engine import build_index
from workbench.matching.sourcemodels import model_strengths
from workbench.refdata import load_set

WATCHED = ("Kr", "Xe", "Hg")


@pytest.fixture(scope="module")
def optical():
    return load_set("optical")


@pytest.fixture(scope="module")
def outcomes(optical):
    """(case, best class per element, clear lines per gas): 2 draws per lamp, range, R (48)."""
    return [
        (c, run_lamp(optical, c), clear_lines(c, *draw_lamp(optical, c)[:3])) for c in lamp_cases(2)
    ]


@pytest.mark.parametrize(
    ("element", "lo_nm", "hi_nm", "strongest_air_nm"),
    [
        # Strongest tabulated neutral line in range of the shipped optical
        # set (source nist_rascal, read from the set): under discharge-lamp
        # it must carry strength 1 and the others their tabulated ratio.
        ("Kr", 550.0, 1000.0, 810.4366),
        ("Xe", 550.0, 1000.0, 823.1633),
        ("Hg", 400.0, 850.0, 404.6565),
    ],
)
def test_lamp_gas_strengths_are_the_tabulated_ones(
    optical, element, lo_nm, hi_nm, strongest_air_nm
):
    """Under ``discharge-lamp`` a gas's tabulated lines keep their tabulated ratios.

    If the set's relative intensities of these gases went missing or were put
    on another scale, the lamp verdicts below would fail for that reason.
    """
    index = build_index([optical], "wavelength", "air")
    in_range = (index.position >= lo_nm) & (index.position <= hi_nm)
    s = model_strengths(index, "discharge-lamp", 10_000.0, in_range)
    names = np.array(index.species_names, dtype=object)[index.species]
    m = in_range & (names == f"{element} I") & (index.rel_intensity > 0)
    assert m.sum() >= 20  # tens of tabulated lines in range (nist_rascal, read from the set)
    top = np.argmax(np.where(m, index.rel_intensity, -np.inf))
    assert index.position[top] == pytest.approx(strongest_air_nm, abs=1e-3)
    assert s[top] == pytest.approx(1.0)
    ratio = index.rel_intensity[m] / index.rel_intensity[top]
    np.testing.assert_allclose(s[m], ratio, rtol=1e-9)
    # The invented lamps draw from the same tabulation.
    _, tab, _ = lamp_lines(optical, (element,), lo_nm, hi_nm, "air")
    assert tab.max() == index.rel_intensity[top]


@pytest.mark.slow
def test_pure_lamps_reach_the_top_class(outcomes):
    """Pure Kr and Xe lamps and the Hg-Ar pen lamp: each gas established in every draw.

    24 draws (8 per lamp); at 6 draws per configuration (144 spectra,
    ``benchmarks/lamp_gases.py``) the engine at c52e549 gives Kr 36/36, Xe
    35/36 (one "probable" at R 1000), Hg 36/36, Ar 35/36 established.
    """
    missed = [
        (c.lamp, c.lo_nm, c.resolving_power, c.seed, g, best.get(g, 0))
        for c, best, _ in outcomes
        if c.lamp != "Ne+Ar+Hg+Kr+Xe"
        for g in c.gases
        if g in WATCHED and best.get(g, 0) < 3
    ]
    assert missed == []


@pytest.mark.slow
def test_five_gas_lamp_recall_and_no_false_top_class(outcomes):
    """Ne+Ar+Hg+Kr+Xe at comparable brightness: Kr, Xe, Hg mostly established, nothing absent.

    The floors are below the recall of the engine on these 12 draws (data
    version 2026.12.4, whose lamp lines draw the spectra: Kr 11, Xe 9, Hg 11
    established; Xe 10 probable or better; the Xe misses are the dense
    R 1000 gap, ``test_xenon_with_ten_clear_lines_at_r1000``) and far
    below the benchmark's (36 draws per gas, ``benchmarks/lamp_gases.py``:
    Kr 35, Xe 35, Hg 32 established since stop 25), so that a broken rule,
    not one unlucky draw, fails (common practice, no source); stop 25's
    chance of a hit left these 12 draws' figures unchanged. No element that
    was not put in may reach "established", and at most one draw may show
    one at "probable" (benchmark, 432 spectra of three variants: none
    established; "probable" 5 at stop 24 — Ce, Nd, Pr — and none since
    stop 25; ``test_dense_emission.py``).
    """
    mix = [(c, best) for c, best, _ in outcomes if c.lamp == "Ne+Ar+Hg+Kr+Xe"]
    assert len(mix) == 12
    for g in WATCHED:
        est = sum(best.get(g, 0) == 3 for _, best in mix)
        prob = sum(best.get(g, 0) >= 2 for _, best in mix)
        print(f"{g}: established {est}/12, probable or better {prob}/12")
        assert est >= 9, g
        assert prob >= 10, g
    false_top = [
        (c.seed, e)
        for c, best, _ in outcomes
        for e, lv in best.items()
        if lv == 3 and e not in c.gases
    ]
    false_prob = [
        (c.seed, e)
        for c, best, _ in outcomes
        for e, lv in best.items()
        if lv == 2 and e not in c.gases
    ]
    assert false_top == []
    assert len(false_prob) <= 1


@pytest.mark.slow
def test_gas_with_six_clear_lines_is_established(outcomes):
    """A gas with at least six clearly present lines (``clear_lines``) is established.

    "Clearly present": ≥ 20 background σ and no comparable line of another gas
    within 1.5 FWHM (common practice, no source). In the pure lamps and the
    Hg-Ar pen lamp every such gas is established. In the five-gas lamp at
    R ≤ 2000 (the known gap of docs/evidence-model.md section 7) some are
    not; there each must still be at least "possible" (but the one draw of
    :data:`KR_GAP_CASE` until stop 28), and at least 90 % of all such gas-spectra
    established. These 48 draws (data version 2026.12.4): 97 of 102; the
    five misses are Xe with 12 and 10 clear lines and Ne with 15, Hg with 6
    at R 1000, Kr with 7 at R 2000 (the same at stop 25). Data version
    2026.12.5 adds one Hg I line (999.90 nm air) to the 550–1000 nm air
    range, so the Hg lamps there are new draws: 96 of 102; the six misses
    are Xe with 12 and 10 clear lines, Ar with 9 and Kr with 8 (one draw),
    Hg with 6 at R 1000, Kr with 7 at R 2000; with equal species weights in
    the response fit (stop 27) 95, Ar with 7 at R 1000 (the Xe reproducer's
    draw) now "probable". Benchmark (432 spectra): 872 of 895 at stop 24,
    866 at stop 25, 869 at stop 26; on the 2026.12.5 draws 868 of 898, 871
    with equal species weights (docs/evidence-model.md section 2, step 2).
    """
    rows = [
        (c.lamp, c.lo_nm, c.resolving_power, c.seed, g, n, best.get(g, 0))
        for c, best, clear in outcomes
        for g, n in clear.items()
        if n >= 6
    ]
    short = [r for r in rows if r[-1] < 3]
    print(f"established {len(rows) - len(short)} of {len(rows)}; short: {short}")
    assert [r for r in short if r[0] != "Ne+Ar+Hg+Kr+Xe" or r[2] > 2000.0] == []
    known = (KR_GAP_CASE.lo_nm, KR_GAP_CASE.resolving_power, KR_GAP_CASE.seed, "Kr")
    assert all(r[-1] >= 1 for r in short if (r[1], r[2], r[3], r[4]) != known), short
    assert len(rows) - len(short) >= 0.9 * len(rows)


#: The reproducer of the dense R 1000 gap (docs/evidence-model.md section 7):
#: one of this module's own draws (variant ``comparable``, 400–850 nm vacuum,
#: R 1000, seed 184787894). Until data version 2026.12.3 it was Kr with 5
#: clear lines, seed 2060361968 of the ``unequal`` variant; with 2026.12.4's
#: lamp lines that draw gives Kr 40 clear lines.
XE_GAP_CASE = LampCase(
    "Ne+Ar+Hg+Kr+Xe",
    LAMPS["Ne+Ar+Hg+Kr+Xe"],
    400.0,
    850.0,
    "vacuum",
    1000.0,
    184787894,
    "comparable",
)


#: A second reproducer of the same gap, one of this module's own draws since
#: data version 2026.12.5 (variant ``comparable``, 550–1000 nm air, R 1000,
#: seed 1870925607): Kr with 8 clear lines among 28 Ne, 18 Xe, 17 Hg and 9
#: Ar lines was "not supported" until stop 28 (12 of 23 counted groups hit at
#: a chance-hit rate of 0.32 per group, closeness 2.5e-3, 0.093 after
#: correction, missing tail -0.73 dex: net 0.30 dex before the joint
#: explanation gave its shared peaks to Ne, Xe, Hg and Ar); "possible" since
#: stop 29 (positions in the joint explanation).
KR_GAP_CASE = LampCase(
    "Ne+Ar+Hg+Kr+Xe",
    LAMPS["Ne+Ar+Hg+Kr+Xe"],
    550.0,
    1000.0,
    "air",
    1000.0,
    1870925607,
    "comparable",
)


def test_krypton_with_eight_clear_lines_at_r1000(optical):
    """Kr with 8 clear lines among Ne, Ar, Hg and Xe at R 1000 (invented) is at least possible.

    A strict xfail until stop 28 ("not supported"); since the joint
    explanation weighs positions (stop 29) peaks at Kr's own lines that a
    farther gas line had taken are Kr's again, and it is "possible".
    """
    assert run_lamp(optical, KR_GAP_CASE)["Kr"] >= 1


@pytest.mark.parametrize(
    ("case", "gas", "n_clear"), [(XE_GAP_CASE, "Xe", 10), (KR_GAP_CASE, "Kr", 8)], ids=["Xe", "Kr"]
)
def test_the_gap_draws_have_their_clear_lines(optical, case, gas, n_clear):
    """The reproducers are what they say: their gas's lines at ≥ 20σ, each resolved."""
    assert clear_lines(case, *draw_lamp(optical, case)[:3])[gas] == n_clear


@pytest.mark.xfail(
    strict=True,
    raises=AssertionError,
    reason="known gap (docs/evidence-model.md section 7): Xe with 10 clear lines in a "
    "dense R 1000 five-gas lamp stays 'possible' (12 of 34 counted groups hit at a "
    "chance-hit rate of 0.19 per group, closeness 2.3e-3, p 5.5e-4, 0.055 after "
    "correction, missing tail -0.79 dex: net 0.47 dex)",
)
def test_xenon_with_ten_clear_lines_at_r1000(optical):
    """Xe with 10 clear lines among Ne, Ar, Hg and Kr at R 1000 (invented) reaches the top class."""
    assert run_lamp(optical, XE_GAP_CASE)["Xe"] == 3


#: Near-infrared arcs (data version 2026.12.5 carries the NIST lines of the
#: lamp gases to 1500 nm vacuum; before it, a spectrum beyond 1000 nm had no
#: reference line and no call). Every gas with six or more clear lines is
#: established and no other element reaches "probable". Beyond 1000 nm the
#: set holds few species (the rascal NIST extract's Ne, Ar, Kr, Xe, Hg, He,
#: Th, Cu, Cd; a few Ar II, Ce III, Tm I, Tb III, Th IV lines; hydrogen), so
#: the "no other" half is checked against those only.
NIR_LAMPS = (("Ar",), ("Ne",), ("Kr",), ("Xe",), ("Ar", "Ne", "Kr", "Xe"))


@pytest.mark.parametrize("resolving_power", [1000.0, 5000.0])
@pytest.mark.parametrize("gases", NIR_LAMPS, ids="+".join)
def test_near_infrared_lamp(optical, gases, resolving_power):
    case = LampCase("+".join(gases), gases, 1000.0, 1450.0, "vacuum", resolving_power, 20261204)
    pos, height, el, _ = draw_lamp(optical, case)
    clear = clear_lines(case, pos, height, el)
    best = run_lamp(optical, case)
    for g in gases:
        if clear[g] >= 6:
            assert best.get(g, 0) == 3, (g, clear[g], best.get(g, 0))
    assert {e: v for e, v in best.items() if e not in gases and v >= 2} == {}
    assert sum(clear[g] >= 6 for g in gases) >= 1  # the draw shows something to find
