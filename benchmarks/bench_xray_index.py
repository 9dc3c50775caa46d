"""Cold build of the X-ray reference index, with and without the shipped line yields.

Run: ``uv run --extra test python benchmarks/bench_xray_index.py``

Each figure is a fresh process (``build_index`` on the ``xray`` set, the
loading of the set excluded), three runs each, median printed: with the
shipped default-instrument yields (:mod:`workbench.xray.yield_cache`) and,
as the baseline in the same run, with the cache disabled so that the yields
are computed by xraylib as before. Prints; asserts nothing.
"""

from __future__ import annotations

import statistics
import subprocess
import sys

_CODE = """
import time
import workbench.xray.yield_cache as yc
if {disable}:
    yc._load = lambda: None
from workbench.refdata import load_set
from workbench.matching.engine import build_index
s = load_set("xray")
t0 = time.perf_counter()
build_index([s], "energy", None)
print(time.perf_counter() - t0)
"""


def _time(disable: bool) -> float:
    runs = []
    for _ in range(3):
        out = subprocess.run(
            [sys.executable, "-c", _CODE.format(disable=disable)],
            capture_output=True,
            text=True,
            check=True,
        )
        runs.append(float(out.stdout.strip().splitlines()[-1]))
    return statistics.median(runs)


def main() -> None:
    cached = _time(False)
    computed = _time(True)
    print(f"cold x-ray index build: {cached:.2f} s with the shipped yields")
    print(f"                        {computed:.2f} s computing them with xraylib (baseline)")


if __name__ == "__main__":
    main()
