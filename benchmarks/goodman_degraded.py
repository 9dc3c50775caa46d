"""The real Goodman comparison lamps at lower resolving power: what the engine calls (issue 9).

Not a timing. Each Goodman lamp spectrum of ``tests/data/realspectra/goodman``
(1200 l/mm and 2100 l/mm gratings) is degraded over its whole range to
R 700, 1200 and 2000 (``tests.realdata.loader.degrade``: a Gaussian
line-spread function of constant R, 3 pixels per FWHM), the resolving powers
of the coarser gratings such lamps are also recorded with, and run through
the product's own peak finding and matching. Per lamp and R: the class of
each element the lamp holds, with the number of lines the spectrum's own
pipeline identified that only it explains at full resolution (``Ne(19)``;
:func:`tests.realdata.run.lines_shown`), and every other species at
"probable" or above. The tune and held-out sets (``tests/realdata/loader.py``)
are printed and counted separately; the held-out lamps are reported, never
used to choose anything.

    uv run --extra test python benchmarks/goodman_degraded.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.realdata.loader import HELD_OUT, TUNE, degrade, load
from tests.realdata.run import element_classes, lines_shown, run_real

RESOLVING_POWERS = (700.0, 1200.0, 2000.0)
SHORT = {"established": "EST", "probable": "prob", "possible": "poss", "not supported": "-"}
#: Impurities shown present in the full-resolution lamps (the Cr I resonance
#: triplet of the iron cathodes; tests/realdata/test_realspectra.py).
IMPURITIES = {"Cr"}


def main() -> None:
    for title, names in (("TUNE", TUNE), ("HELD-OUT", HELD_OUT)):
        lamps = [n for n in names if n.startswith("goodman")]
        print(f"== {title} ==")
        t0 = time.perf_counter()
        clear_total = clear_est = n_false = 0
        for name in lamps:
            rs = load(name)
            shown = lines_shown(rs)
            lo, hi = float(rs.spectrum.x[0]), float(rs.spectrum.x[-1])
            for r in RESOLVING_POWERS:
                outcome = run_real(degrade(rs, r, lo, hi))
                cls = element_classes(outcome.report)
                exp = " ".join(
                    f"{e}({len(shown[e])}):{SHORT[cls.get(e, 'not supported')]}"
                    for e in rs.expected
                )
                false = sorted(
                    f"{sp['species']}:{SHORT[sp['verdict']]}"
                    for sp in outcome.report["elements"]
                    if sp["verdict_level"] >= 2
                    and sp["element"] not in set(rs.expected) | IMPURITIES
                )
                for e in rs.expected:
                    if len(shown[e]) >= 3:
                        clear_total += 1
                        clear_est += cls.get(e) == "established"
                n_false += len(false)
                short = name.removeprefix("goodman_comp_")
                print(f"{short:<32} R {r:>5.0f}  {exp:<34} {false or '-'}")
        print(
            f"{title}: {len(lamps)} lamps x {len(RESOLVING_POWERS)} R "
            f"({time.perf_counter() - t0:.0f} s): elements with 3+ identified lines "
            f"established {clear_est}/{clear_total}; other species at probable or above {n_false}"
        )


if __name__ == "__main__":
    main()
