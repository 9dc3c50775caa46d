"""Absorption confusion table on seeded invented mixtures, beside another commit's.

Run: ``uv run --extra test python benchmarks/absorption_confusion.py [--ref main] [--n 30]``

Invented absorption spectra, rendered as ``tests/matching/test_absorption_mixtures.py``
renders them (the same 16-species pool, 5800 K absorption strengths
log gf − θχ, depth ∝ strength^0.3, 380–900 nm, noise σ 0.003, resolving
powers 500, 2000 and 20000), but ``--n`` mixtures per resolving power drawn
with seed ``--seed`` (default 20261204, distinct from the test's 20261203)
by the same generator (``tests.matching.invented.seeded_mixtures``). Each
goes through the product's peak finding in absorption mode and the engine
WITHOUT an abundance prior (``--prior`` to choose one), with the working
copy and with the code of ``--ref`` (``at_commit.run_at_commit``: the
mixtures, invented test inputs, from the working copy on both sides), and per resolving
power the figures are printed side by side:

* elements put in reaching "probable" or better / elements put in;
* elements put in reaching "established";
* absent elements called "established" and "probable" (counts);
* the most absent elements called "possible" in one spectrum;
* the names of the false "established" / "probable" species.

Prints; asserts nothing and times nothing.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path


def compute(n_per_r: int, seed: int, prior: str) -> dict[str, list]:
    """Per resolving power: one record per mixture (put in, levels of every element)."""
    from tests.matching.invented import absorption_mixtures, absorption_renderer
    from workbench.matching import MatchParameters, match_peaks
    from workbench.refdata import load_set

    optical = load_set("optical")
    render = absorption_renderer(optical)
    out: dict[str, list] = {}
    for R, abundance, spec_seed in absorption_mixtures(seed, n_per_r):
        peaks = render(R, abundance, spec_seed)
        params = MatchParameters(mode="absorption", abundance_prior=prior)
        rep = match_peaks(peaks, [optical], params)
        levels: dict[str, int] = {}
        species: dict[str, int] = {}
        for el in rep.report()["elements"]:
            levels[el["element"]] = max(levels.get(el["element"], 0), el["verdict_level"])
            species[el["species"]] = el["verdict_level"]
        out.setdefault(f"{R:g}", []).append(
            {
                "put_in": sorted(abundance),
                "levels": levels,
                "species": {s: v for s, v in species.items() if v >= 2},
            }
        )
    return out


def summarise(runs: list[dict]) -> dict:
    """The figures of the module docstring for one resolving power."""
    present = prob = est = 0
    f_est: list[str] = []
    f_prob: list[str] = []
    max_poss = 0
    for r in runs:
        put = {s.split()[0] for s in r["put_in"]}
        lv = r["levels"]
        present += len(put)
        prob += sum(lv.get(el, 0) >= 2 for el in put)
        est += sum(lv.get(el, 0) == 3 for el in put)
        for s, v in r["species"].items():
            if s.split()[0] not in put:
                (f_est if v == 3 else f_prob).append(s)
        max_poss = max(max_poss, sum(v == 1 for el, v in lv.items() if el not in put))
    return {
        "present": present,
        "prob": prob,
        "est": est,
        "false_est": sorted(f_est),
        "false_prob": sorted(f_prob),
        "max_poss": max_poss,
    }


def ref_results(ref: str, n_per_r: int, seed: int, prior: str) -> dict[str, list]:
    """The records computed by the code of commit ``ref`` on the same invented mixtures."""
    from at_commit import run_at_commit

    return json.loads(
        run_at_commit(
            ref,
            ["workbench", "reference_sets", "tests/__init__.py", "tests/matching/__init__.py"],
            ["absorption_confusion.py"],
            ["--json-only", "--n", str(n_per_r), "--seed", str(seed), "--prior", prior],
            working_files=("tests/matching/invented.py",),
        )
    )


def _row(s: dict) -> str:
    return (
        f"{s['prob']:>3}/{s['present']:<3} {s['est']:>3} {len(s['false_est']):>3} "
        f"{len(s['false_prob']):>3} {s['max_poss']:>3}"
    )


def _names(s: dict) -> str:
    est = " ".join(s["false_est"]) or "-"
    prob = " ".join(s["false_prob"]) or "-"
    return f"EST: {est}; prob: {prob}"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--ref", default="main", help="git commit or branch to compare with")
    ap.add_argument("--no-ref", action="store_true", help="only the working copy")
    ap.add_argument("--n", type=int, default=30, help="mixtures per resolving power")
    ap.add_argument("--seed", type=int, default=20261204, help="mixture seed")
    ap.add_argument("--prior", default="none", help="abundance prior (none, solar, crustal)")
    ap.add_argument("--json-only", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.json_only:
        print(json.dumps(compute(args.n, args.seed, args.prior)))
        return
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    now = compute(args.n, args.seed, args.prior)
    old = None if args.no_ref else ref_results(args.ref, args.n, args.seed, args.prior)
    head = "prob+/put  est  fEST fprob maxposs"
    print(
        f"absorption mixtures: {args.n} per R, seed {args.seed}, prior {args.prior}\n"
        f"{'R':>6}  {'working copy: ' + head:<40}" + ("" if old is None else f" | {args.ref}")
    )
    tot: dict[str, list] = {"working copy": [], args.ref: []}
    for key, runs in now.items():
        s = summarise(runs)
        tot["working copy"] += runs
        line = f"{key:>6}  {'':14}{_row(s):<26}"
        so = None
        if old is not None and key in old:
            so = summarise(old[key])
            tot[args.ref] += old[key]
            line += f" | {_row(so)}"
        print(line)
        print(f"{'':8}working copy {_names(s)}")
        if so is not None:
            print(f"{'':8}{args.ref} {_names(so)}")
    for name, runs in tot.items():
        if not runs:
            continue
        s = summarise(runs)
        print(
            f"TOTAL {name}: put in ≥ probable {s['prob']}/{s['present']}, established "
            f"{s['est']}, false established {len(s['false_est'])}, false probable "
            f"{len(s['false_prob'])}, most false 'possible' in one spectrum {s['max_poss']}"
        )


if __name__ == "__main__":
    main()
