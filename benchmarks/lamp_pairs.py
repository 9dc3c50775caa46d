"""Invented lamps, paired: the same spectra matched with two versions (invented data).

The invented lamps (:mod:`tests.matching.invented_lamps`) draw their lines from
the shipped optical set, so a change of the reference data draws every lamp
spectrum afresh and ``lamp_gases.py`` before and after compares different
spectra. This script separates the two effects. It renders the lamps of
``lamp_cases(--seeds)`` (three variants) once with the working copy's set and
once with the set of ``--ref`` (the generator code of the working copy on both
sides), and matches both sets of spectra with the working copy and with
``--ref`` (``at_commit.run_at_commit``): a 2 × 2 table of gases established
(of those put in), gases with ≥ 6 clearly present lines established, and
absent elements at "probable" and at "established".

    uv run --extra test python benchmarks/lamp_pairs.py [--ref main] [--seeds 6]

A run takes about four times ``lamp_gases.py`` (two renders, four matchings).
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from pathlib import Path

import numpy as np

VARIANTS = ("comparable", "unequal", "saturated")


def render(seeds: int, out: Path) -> None:
    """Render every case with this interpreter's set: ``out`` (npz) and ``out.json`` (cases)."""
    from tests.matching.invented_lamps import clear_lines, draw_lamp, lamp_cases, render_lamp
    from workbench.refdata import load_set

    optical = load_set("optical")
    arrays: dict[str, np.ndarray] = {}
    meta = []
    for v in VARIANTS:
        for c in lamp_cases(seeds, variant=v):
            s = render_lamp(optical, c)
            i = len(meta)
            arrays[f"x{i}"], arrays[f"y{i}"] = np.asarray(s.x), np.asarray(s.y)
            meta.append(
                {
                    "gases": list(c.gases),
                    "medium": c.medium,
                    "clear": clear_lines(c, *draw_lamp(optical, c)[:3]),
                }
            )
    np.savez_compressed(out, **arrays)
    Path(f"{out}.json").write_text(json.dumps(meta))


def match(spectra: Path, out: Path) -> None:
    """Match every rendered spectrum with this code and set: best class per element."""
    from tests.matching.invented_lamps import run_lamp
    from workbench.datamodel import Spectrum
    from workbench.matching.analyse import analyse_spectrum
    from workbench.matching.engine import MatchParameters

    data = np.load(spectra)
    meta = json.loads(Path(f"{spectra}.json").read_text())
    res = []
    for i, m in enumerate(meta):
        s = Spectrum(data[f"x{i}"], data[f"y{i}"], "wavelength", m["medium"])
        o = analyse_spectrum(s, None, MatchParameters(mode="emission"))
        # The lamp tests' own reduction of an outcome (best class per element).
        res.append(run_lamp(None, None, outcome=o))
    out.write_text(json.dumps(res))


def summary(meta: list[dict], res: list[dict]) -> str:
    """Gases established, 6+ clear established, absent at probable and established."""
    est = tot = c6 = n6 = 0
    f_prob: list[str] = []
    f_est: list[str] = []
    for m, best in zip(meta, res, strict=True):
        for g in m["gases"]:
            tot += 1
            est += best.get(g, 0) == 3
            if m["clear"].get(g, 0) >= 6:
                n6 += 1
                c6 += best.get(g, 0) == 3
        for e, lv in best.items():
            if e not in m["gases"] and lv >= 2:
                (f_est if lv == 3 else f_prob).append(e)
    return (
        f"{est}/{tot}, 6+ clear {c6}/{n6}, absent probable {len(f_prob)} {sorted(f_prob)}, "
        f"established {len(f_est)} {sorted(f_est)}"
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--ref", default="main", help="git commit or branch to pair with")
    ap.add_argument("--seeds", type=int, default=6, help="draws per lamp, range and R")
    ap.add_argument("--render", type=Path, help=argparse.SUPPRESS)
    ap.add_argument("--match", nargs=2, type=Path, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.render:
        render(args.seeds, args.render)
        print(args.render)
        return
    if args.match:
        match(*args.match)
        print(args.match[1])
        return
    root = Path(__file__).resolve().parents[1]
    sys.path.insert(0, str(root))
    sys.path.insert(0, str(root / "benchmarks"))
    from at_commit import run_at_commit

    paths = ["workbench", "reference_sets", "tests/__init__.py", "tests/matching/__init__.py"]
    same = ("tests/matching/invented_lamps.py",)
    with tempfile.TemporaryDirectory() as d:
        spec = {"working copy": Path(d) / "now.npz", args.ref: Path(d) / "ref.npz"}
        render(args.seeds, spec["working copy"])
        run_at_commit(
            args.ref,
            paths,
            ["lamp_pairs.py"],
            ["--seeds", str(args.seeds), "--render", str(spec[args.ref])],
            working_files=same,
        )
        print(f"invented lamps, {args.seeds} draws per lamp, range and R, variants {VARIANTS}")
        print("gases established of those put in; absent elements at probable / established")
        for drawn, path in spec.items():
            meta = json.loads(Path(f"{path}.json").read_text())
            now, ref = Path(d) / "m_now.json", Path(d) / "m_ref.json"
            match(path, now)
            run_at_commit(
                args.ref,
                paths,
                ["lamp_pairs.py"],
                ["--match", str(path), str(ref)],
                working_files=same,
            )
            print(f"spectra drawn with the set of the {drawn} ({len(meta)} spectra):")
            print(f"  matched with the working copy: {summary(meta, json.loads(now.read_text()))}")
            print(f"  matched with {args.ref}: {summary(meta, json.loads(ref.read_text()))}")


if __name__ == "__main__":
    main()
