"""The real-spectra table for the PREVIOUS engine (commit 598942b), for the before/after record.

Run from outside the working copy with the old tree first on the path, e.g.::

    git archive 598942b workbench reference_sets | tar -x -C /tmp/old
    cd /tmp && PYTHONPATH=/tmp/old:<worktree> WORKBENCH_REFERENCE_SETS=/tmp/old/reference_sets \
        <worktree>/.venv/bin/python <worktree>/benchmarks/realdata_table_baseline.py
"""

# ruff: noqa: E402
import time

import numpy as np

import workbench

assert "/wt/engine/workbench" not in workbench.__file__, workbench.__file__
from tests.realdata.loader import HELD_OUT, TUNE, load
from workbench.matching.analyse import analyse_peaks
from workbench.matching.engine import build_index
from workbench.peaks import find_peaks
from workbench.refdata import load_set

ORDER = {"established": 3, "probable": 2, "possible": 1, "not supported": 0}
SHORT = {"established": "EST", "probable": "prob", "possible": "poss", "not supported": "-"}
names_lv = {v: k for k, v in ORDER.items()}
for title, names in (("TUNE", TUNE), ("HELD-OUT", HELD_OUT)):
    print(f"== {title} ==")
    for name in names:
        rs = load(name)
        t0 = time.perf_counter()
        peaks = find_peaks(rs.spectrum, mode=rs.mode)
        peaks.extra.setdefault("x_range", (float(rs.spectrum.x[0]), float(rs.spectrum.x[-1])))
        rep = analyse_peaks(
            peaks,
            None,
            None
            if rs.mode == "emission"
            else __import__("workbench.matching", fromlist=["MatchParameters"]).MatchParameters(
                mode="absorption"
            ),
            spectrum=rs.spectrum,
        ).report
        dt = time.perf_counter() - t0
        best = {}
        for sp in rep["elements"]:
            best[sp["element"]] = max(best.get(sp["element"], 0), ORDER[sp["verdict"]])
        idx = build_index([load_set("optical")], "wavelength", rs.spectrum.medium)
        el = np.array(idx.species_element, dtype=object)[idx.species]
        shown = {e: 0 for e in rs.expected}
        for w in rs.identified_nm:
            lo, hi = np.searchsorted(idx.position, [w - 0.01, w + 0.01])
            near = {e for e in el[lo:hi] if e in shown}
            if len(near) == 1:
                shown[near.pop()] += 1
        exp = " ".join(
            f"{e}({shown[e] if rs.identified_nm.size else '?'}):{SHORT[names_lv[best.get(e, 0)]]}"
            for e in rs.expected
        )
        false = (
            " ".join(
                f"{e}:{SHORT[names_lv[v]]}"
                for e, v in sorted(best.items())
                if e not in rs.expected and v >= 2
            )
            or "none"
        )
        print(
            f"{name:40s} peaks {peaks.table.height:4d}  expected {exp:44s} "
            f"extra>=prob {false}  ({dt:.2f}s)"
        )
