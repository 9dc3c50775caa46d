"""Dense emission spectra: an absent line-rich species does not reach "probable".

The truth is the construction of the invented lamp spectra
(:mod:`tests.matching.invented_lamps`: only the named gases' own tabulated
lines of the shipped optical set are put in; invented data): any other
element at "probable" or above is a false call. The draws below
are the fixed-seed cases in which engine 4123f2f (stop 21) called an absent
line-rich element "probable" (``benchmarks/lamp_gases.py --seeds 6``, per
variant): V I, Gd I, Ce I+II, Nd II. Their hits were lamp-gas lines drawn
above their tabulated strength (the lamps' 0.8 dex scatter, the
``discharge-lamp`` model's own σ), found by an established gas that
predicts them at 6–20 % of their height: below the 30 % at which the joint
step (:mod:`workbench.matching.joint`) counted a peak as explained, so they
stayed the absent species' hits, counted and unique. The joint step now
lets the better species explain a peak its prediction accounts for within
2σ of its own model when it is the closer account, and (stop 23) judges
the lower species' own account at the scale of its lines no better species
claims. The gases must stay
"established" where they have ≥ 6 clearly present lines (engine 4123f2f:
all of them are, in these six draws; from stop 25 to stop 28 one was
"probable", :data:`RECALL_COST`).
"""

from __future__ import annotations

import pytest

from tests.matching.invented_lamps import (
    LAMPS,
    RANGES,
    LampCase,
    clear_lines,
    draw_lamp,
    run_lamp,
)
from workbench.refdata import load_set


@pytest.fixture(scope="module")
def optical():
    return load_set("optical")


def _case(lamp: str, lo_nm: float, resolving_power: float, seed: int, variant: str) -> LampCase:
    lo, hi, medium = next(r for r in RANGES if r[0] == lo_nm)
    return LampCase(lamp, LAMPS[lamp], lo, hi, medium, resolving_power, seed, variant)


# (lamp, range start nm, R, seed, variant, the absent element engine 4123f2f
# called "probable"): lamp_cases(6, variant=...) draws, seed 20261203. Since
# data version 2026.12.4 (one row per observed NIST line: the lamps' lines
# changed, so every draw did) these seeds draw other spectra; they stay as
# regression cases. V I (seed 564351200, a strict xfail until then) is no
# longer "probable" in its new draw.
FALSE_PROBABLE_DRAWS = [
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 2000.0, 564351200, "comparable", "V"),
    ("Xe", 550.0, 1000.0, 1897802466, "unequal", "Gd"),
    ("Ne+Ar+Hg+Kr+Xe", 400.0, 2000.0, 1575577883, "unequal", "Ce"),
    # Ce I + II pooled until stop 23: Ce's scale was fitted on lamp lines the
    # gases account for (joint.independent_scale_factor).
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 2000.0, 1923360067, "unequal", "Ce"),
    ("Ne+Ar+Hg+Kr+Xe", 400.0, 1000.0, 23017169, "saturated", "Gd"),
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 2000.0, 564351200, "saturated", "Nd"),
]

# The absent elements "probable" in the draws of data version 2026.12.4
# (benchmarks/lamp_gases.py --seeds 6, three variants, 432 spectra), strict
# xfails at stop 24 (two of them, Nd unequal and Ce saturated, were
# "established" by pooling until the pooled top class needed one stage
# established on its own). Since stop 25 none is "probable": the chance of a
# hit is that of the peaks around each group outside the species' own windows,
# bounded by ρw (workbench.matching.density), and ion stages are pooled with
# Simes' method (workbench.matching.pooling).
FALSE_PROBABLE_DRAWS += [
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 2000.0, 111838774, "comparable", "Ce"),
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 5000.0, 1569377642, "comparable", "Nd"),
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 1000.0, 2060361968, "unequal", "Nd"),
    ("Xe", 550.0, 1000.0, 1897802466, "saturated", "Pr"),
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 2000.0, 111838774, "saturated", "Ce"),
]

#: Gases with ≥ 6 clear lines left "probable" in these draws. None since
#: stop 29. From stop 25 to 28 Ar I in the saturated five-gas lamp at R 1000
#: (seed 23017169, 8 clear lines) was: 8 of 10 counted groups hit at a hit
#: chance of 0.30 per group, net 2.84 dex (docs/evidence-model.md section
#: 2); since the joint explanation weighs positions (stop 29), a peak at
#: one of its lines that a gas line farther off had taken is its own again,
#: and it is "established". Since stop 32 Kr I in the unequal five-gas lamp
#: at R 1000 (seed 2060361968) is "probable" (net 2.82 dex: 25 of 33 expected
#: groups found, missing-line tail −0.82 dex): the response curve that had
#: put it at 3.64 dex (−0.13u + 0.065u², 0.27 decade across the range; 23 of
#: 24 expected) is not kept by the information criterion (nor by AIC), which
#: now decides whether a curve is fitted at all (workbench.matching.response).
#: Over the 432 date-seeded lamps of benchmarks/lamp_gases.py the count of
#: "established" gases was 875 before and after.
RECALL_COST: dict[tuple[str, float, float, int, str], set[str]] = {
    ("Ne+Ar+Hg+Kr+Xe", 550.0, 1000.0, 2060361968, "unequal"): {"Kr"},
}


@pytest.mark.slow
@pytest.mark.parametrize(("lamp", "lo_nm", "r", "seed", "variant", "absent"), FALSE_PROBABLE_DRAWS)
def test_absent_line_rich_species_not_probable(optical, lamp, lo_nm, r, seed, variant, absent):
    """No element that was not put in reaches "probable"; the gases stay "established"."""
    case = _case(lamp, lo_nm, r, seed, variant)
    best = run_lamp(optical, case)
    false_calls = {e: lv for e, lv in best.items() if e not in case.gases and lv >= 2}
    assert false_calls == {}, absent
    clear = clear_lines(case, *draw_lamp(optical, case)[:3])
    weak = {g: best.get(g, 0) for g, n in clear.items() if n >= 6 and best.get(g, 0) < 3}
    assert set(weak) == RECALL_COST.get((lamp, lo_nm, r, seed, variant), set())
    assert all(lv >= 2 for lv in weak.values())
