"""The real Th-Ar atlas at lower resolving power: what the engine calls (issue 9).

Not a timing. The KPNO Th-Ar hollow-cathode atlas
(``tests/data/realspectra/pyreduce/thar.fits``) is degraded to R 1000, 2000
and 5000 over five ranges (``tests.realdata.loader.degrade``: a Gaussian
line-spread function of constant R, 3 pixels per FWHM) and run through the
product's own peak finding and matching. Per setting: the class of Th and Ar
(the lamp), and every other species at "probable" or above, leaving out Ca
and Cr, impurities shown present in the full-resolution atlas
(``tests/realdata/test_realspectra.py``).

    uv run --extra test python benchmarks/thar_degraded.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.realdata.loader import degrade, load
from tests.realdata.run import element_classes, run_real

RANGES_NM = ((300.0, 500.0), (380.0, 900.0), (400.0, 700.0), (550.0, 1000.0), (700.0, 1000.0))
RESOLVING_POWERS = (1000.0, 2000.0, 5000.0)
IMPURITIES = {"Ca", "Cr"}


def main() -> None:
    atlas = load("thar")
    t0 = time.perf_counter()
    th_est = ar_est = n = n_false = 0
    for lo, hi in RANGES_NM:
        for r in RESOLVING_POWERS:
            outcome = run_real(degrade(atlas, r, lo, hi))
            cls = element_classes(outcome.report)
            false = sorted(
                f"{sp['species']}:{sp['verdict']}"
                for sp in outcome.report["elements"]
                if sp["verdict_level"] >= 2
                and sp["element"] not in set(atlas.expected) | IMPURITIES
            )
            n += 1
            th_est += cls.get("Th") == "established"
            ar_est += cls.get("Ar") == "established"
            n_false += len(false)
            print(
                f"{lo:.0f}-{hi:.0f} nm R {r:>5.0f}: Th {cls.get('Th', '-'):<13} "
                f"Ar {cls.get('Ar', '-'):<13} other at probable or above: {false or '-'}"
            )
    print(
        f"{n} settings ({time.perf_counter() - t0:.0f} s): Th established {th_est}, "
        f"Ar established {ar_est}, absent species at probable or above {n_false}"
    )


if __name__ == "__main__":
    main()
