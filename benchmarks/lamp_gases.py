"""Recall of lamp gases on invented lamp spectra (invented data): the table of issue 9.

Draws the invented lamps of :mod:`tests.matching.invented_lamps` (pure Kr,
pure Xe, an Hg-Ar pen lamp, Ne+Ar+Hg+Kr+Xe at comparable brightness; two
ranges; R 1000, 2000, 5000), runs each through the product's peak finding
and matching, and prints per lamp and gas how often the gas reached
"established" and "probable or better", and every element not put in that
reached "probable" or better (false calls).

    uv run --extra test python benchmarks/lamp_gases.py [--seeds 3] [--by-r]
"""

from __future__ import annotations

import argparse
import sys
import time
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import numpy as np
from scipy import special

from tests.matching.invented_lamps import (
    analyse_lamp,
    clear_lines,
    draw_lamp,
    lamp_cases,
    run_lamp,
)
from workbench.matching.hit_chance import local_density
from workbench.refdata import load_set


def false_call_detail(outcome, element: str) -> list[str]:
    """The evidence of an absent element's species at probable or above, one line each.

    Counted groups k of n (visible, neither masked, crowded nor explained),
    unique peaks, the binomial chance p with the mean per-group hit chance,
    the closeness probability, the corrected p, the missing-line penalty, the
    net evidence, and the local peak density at the counted hits relative to
    the spectrum's average (:func:`workbench.matching.evidence.local_density`).
    """
    res = outcome.result
    ev_pass, obs = res.evidence, res.observed
    out = []
    for ev in ev_pass.evidence.values():
        if ev.element != element or ev.level < 2:
            continue
        g = ev.groups
        nset = g["visible"] & ~g["masked"] & ~g["crowded"] & ~g["explained"]
        hit = nset & g["found"]
        k, n = int(hit.sum()), int(nset.sum())
        p_mean = float(np.mean(g["p_line"][nset])) if n else float("nan")
        binom = float(special.betainc(k, n - k + 1, p_mean)) if k else 1.0
        ratio = local_density(obs, g["position"][hit]) / ev_pass.density
        out.append(
            f"     {ev.label}: k/n {k}/{n} unique {ev.n_unique_peaks} matched"
            f" {ev.n_groups_matched} p_line {p_mean:.3f} binom {binom:.2e}"
            f" closeness {ev.closeness_probability:.2e} p_corr"
            f" {ev.chance_probability_corrected:.2e} penalty {ev.missing_penalty_dex:+.2f}"
            f" net {ev.net_evidence_dex:.2f} local/avg density at hits"
            f" {np.array2string(ratio, precision=1)} offsets_u"
            f" {np.array2string(g['offset_u'][hit], precision=2)}"
        )
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=6, help="draws per lamp, range and R")
    ap.add_argument("--variant", default="comparable", help="comparable, unequal, saturated")
    ap.add_argument("--by-r", action="store_true", help="one row per resolving power too")
    args = ap.parse_args()
    optical = load_set("optical")
    cases = lamp_cases(args.seeds, variant=args.variant)
    t0 = time.perf_counter()
    est = defaultdict(int)
    prob = defaultdict(int)
    n = defaultdict(int)
    false_calls = []
    details = []
    by_clear = defaultdict(lambda: [0, 0, 0])
    for c in cases:
        outcome = analyse_lamp(optical, c)
        best = run_lamp(optical, c, outcome=outcome)
        pos, height, el, _ = draw_lamp(optical, c)
        for g, n_clear in clear_lines(c, pos, height, el).items():
            b = by_clear[(g, "0-2" if n_clear < 3 else "3-5" if n_clear < 6 else "6+")]
            b[0] += 1
            b[1] += best.get(g, 0) == 3
            b[2] += best.get(g, 0) >= 2
        keys = [(c.lamp, "all")] + ([(c.lamp, f"R{c.resolving_power:.0f}")] if args.by_r else [])
        for g in c.gases:
            for k in keys:
                n[(*k, g)] += 1
                est[(*k, g)] += best.get(g, 0) == 3
                prob[(*k, g)] += best.get(g, 0) >= 2
        for e, lv in best.items():
            if e not in c.gases and lv >= 2:
                false_calls.append((c.lamp, c.lo_nm, c.resolving_power, c.seed, e, lv))
                details.append(false_call_detail(outcome, e))
    print(
        f"invented lamp spectra ({args.variant}): {len(cases)} ({time.perf_counter() - t0:.0f} s)"
    )
    print(f"{'lamp':<16} {'subset':<6} {'gas':<4} {'established':>12} {'probable+':>10}")
    for k in sorted(n):
        print(
            f"{k[0]:<16} {k[1]:<6} {k[2]:<4} {est[k]:>5}/{n[k]:<3} ({est[k] / n[k]:4.0%})"
            f" {prob[k]:>4}/{n[k]:<3}"
        )
    print("by clearly present lines (tests.matching.invented_lamps.clear_lines), all lamps:")
    for (g, b), (m, e, p) in sorted(by_clear.items()):
        print(f"  {g:<3} {b:>4} clear lines: established {e:>3}/{m:<3} probable+ {p:>3}/{m:<3}")
    print(f"false calls (absent element at probable or above): {len(false_calls)}")
    for f, d in zip(false_calls, details, strict=True):
        print("  ", f)
        for line in d:
            print(line)


if __name__ == "__main__":
    main()
