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

    The floors are below the recall of the engine at c52e549 (these 12
    draws: every watched gas established; 36 draws per gas in the benchmark:
    Kr 92 %, Xe 94 %, Hg 97 %) so that a broken rule, not one unlucky draw,
    fails (common practice, no source). No element that was not put in may
    reach "established", and at most one draw may show one at "probable"
    (benchmark at c52e549: 1 of 144 spectra, V I on coincidences at R 2000).
    """
    mix = [(c, best) for c, best, _ in outcomes if c.lamp == "Ne+Ar+Hg+Kr+Xe"]
    assert len(mix) == 12
    for g in WATCHED:
        est = sum(best.get(g, 0) == 3 for _, best in mix)
        prob = sum(best.get(g, 0) >= 2 for _, best in mix)
        print(f"{g}: established {est}/12, probable or better {prob}/12")
        assert est >= 10, g
        assert prob >= 11, g
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
    """Every gas with at least six clearly present lines (``clear_lines``) is established.

    "Clearly present": ≥ 20 background σ and no comparable line of another gas
    within 1.5 FWHM (common practice, no source). Holds for all 48 draws here;
    at 6 draws per configuration (``benchmarks/lamp_gases.py``, c52e549) 303
    of 312 such gas-spectra are established and all but 4 at least probable.
    """
    short = [
        (c.lamp, c.lo_nm, c.resolving_power, c.seed, g, n, best.get(g, 0))
        for c, best, clear in outcomes
        for g, n in clear.items()
        if n >= 6 and best.get(g, 0) < 3
    ]
    assert short == []


@pytest.mark.xfail(
    strict=True,
    reason="known gap (docs/evidence-model.md section 7): Kr with 5 clear lines in a "
    "dense R 1000 five-gas lamp stays 'possible' (8 of 14 groups hit at a chance-hit "
    "rate of 0.1-0.6 per group, p 4.3e-3 over 106 species tried, net 0.2 dex; the "
    "absent Er I has p 4e-4 in the same spectrum)",
)
def test_krypton_with_five_clear_lines_at_r1000(optical):
    """Kr with 5 clear lines among Ne, Ar, Hg and Xe at R 1000 (invented, ``unequal`` draw).

    Draw: lamp_cases variant ``unequal``, 550–1000 nm air, R 1000, seed
    2060361968 (Kr's total 10^U(−1, 1) of the others'); its 5 clear Kr lines
    are at ≥ 20σ each. At c52e549 Kr is "possible".
    """
    case = LampCase(
        "Ne+Ar+Hg+Kr+Xe",
        LAMPS["Ne+Ar+Hg+Kr+Xe"],
        550.0,
        1000.0,
        "air",
        1000.0,
        2060361968,
        "unequal",
    )
    assert clear_lines(case, *draw_lamp(optical, case)[:3])["Kr"] == 5
    assert run_lamp(optical, case)["Kr"] == 3
