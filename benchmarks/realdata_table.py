"""Print the real-spectra table: expected elements with their classes, false calls.

Runs the product's own peak finding and matching (``workbench.peaks.find_peaks``
then ``workbench.matching.analyse_peaks``, as ``analyse_input`` does for a raw
spectrum) on every file of ``tests/data/realspectra``; tune and held-out sets
printed separately (split defined in ``tests/realdata/loader.py``).

Usage: ``uv run --extra test python benchmarks/realdata_table.py [--json OUT]``
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.realdata.loader import HELD_OUT, TUNE, load
from tests.realdata.run import element_classes, extra_unexplained, lines_shown, run_real
from workbench.matching import MatchParameters

ORDER = {"established": 3, "probable": 2, "possible": 1, "not supported": 0}
SHORT = {"established": "EST", "probable": "prob", "possible": "poss", "not supported": "-"}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--json", type=Path)
    args = ap.parse_args()
    out = {}
    for title, names in (("TUNE", TUNE), ("HELD-OUT", HELD_OUT)):
        print(f"== {title} ==")
        # The sunlight also with the solar abundance prior (the analyst's
        # choice for a solar spectrum; the lamps have no prior to choose).
        runs = [(n, "none") for n in names] + [(n, "solar") for n in names if n == "ASTMG173"]
        for name, prior in runs:
            t0 = time.perf_counter()
            rs = load(name)
            outcome = run_real(rs, MatchParameters(mode=rs.mode, abundance_prior=prior))
            dt = time.perf_counter() - t0
            cls = element_classes(outcome.report)
            shown = lines_shown(rs) if rs.identified_nm.size else {}
            exp = " ".join(
                f"{e}({len(shown[e]) if e in shown else '?'}):{SHORT[cls.get(e, 'not supported')]}"
                for e in rs.expected
            )
            extra = sorted((e, c) for e, c in cls.items() if e not in rs.expected and ORDER[c] >= 2)
            # An extra element is a false call only where shown absent (fewer
            # than two peaks that no lamp element explains); else an impurity.
            false, impurity = [], []
            for e, c in extra:
                free: set[float] = set()
                for sp in outcome.report["elements"]:
                    if sp["element"] == e and sp["verdict_level"] >= 2:
                        free |= set(extra_unexplained(rs, outcome, sp))
                (impurity if len(free) >= 2 else false).append((e, c))
            fs = " ".join(f"{e}:{SHORT[c]}" for e, c in false) or "none"
            if impurity:
                fs += " | impurity shown present: " + " ".join(
                    f"{e}:{SHORT[c]}" for e, c in impurity
                )
            npk = outcome.peaks.table.height
            label = name if prior == "none" else f"{name} (solar prior)"
            print(f"{label:40s} peaks {npk:4d}  expected {exp:44s} false>=prob {fs}  ({dt:.2f}s)")
            out[label] = {
                "expected": {e: cls.get(e, "not supported") for e in rs.expected},
                "shown": {e: len(v) for e, v in shown.items()},
                "false": dict(false),
                "impurity_shown_present": dict(impurity),
                "split": title,
                "n_peaks": npk,
            }
    if args.json:
        args.json.write_text(json.dumps(out, indent=1, sort_keys=True))


if __name__ == "__main__":
    main()
