"""Speed of the XRF path on the forward-model spectra, beside another commit's.

Run: ``uv run --extra test python benchmarks/bench_xrf.py [--before 4123f2f] [--repeat 3]``

The cases of ``tests/xray/cases.py`` (5 invented samples × detector FWHM
130/180 eV, seed 20261202; spectra from :mod:`workbench.xray.forward`,
xraylib fundamental parameters) are modelled once, outside the timing. Each
spectrum then goes through the steps of ``run_case``, timed separately:

* ``peaks``: peak finding on the spectrum (SNIP baseline, the detector's
  iteration count);
* ``match``: :func:`workbench.matching.match_peaks` on the shipped ``xray``
  set: preparation (artefacts, widths, fitted centres, the scale checks),
  matching, overlap settling and any re-run after a significant energy
  scale reading;
* ``report``: the JSON-ready report.

One more spectrum has its axis read 20 eV high (``scale_offset_eV``), the
case that makes the engine read the scale after matching and match again.

Figures are the best of ``--repeat`` runs, wall time, with the process's CPU
time of that run beside it and the load average; the same script runs on the
code of ``--before`` (``git archive`` into a temporary folder, the working
copy's ``tests/xray/cases.py`` so that both sides see the same spectra) in the
same session. Prints; asserts nothing.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SEED = 20261202
DRIFT_CASE = ("leaded_brass", 130.0, 20.0)  # (case, FWHM eV, axis read high by eV)


def _cases() -> list[tuple[str, float, float]]:
    from tests.xray.cases import CASES, RESOLUTIONS_EV

    return [(c, f, 0.0) for c in sorted(CASES) for f in RESOLUTIONS_EV] + [DRIFT_CASE]


def _timed(fn, repeat: int) -> tuple[float, float, object]:
    """Best wall time of ``repeat`` calls, that call's CPU time, and its result."""
    best = (float("inf"), 0.0, None)
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        w, c = time.perf_counter() - w0, time.process_time() - c0
        if w < best[0]:
            best = (w, c, out)
    return best


def compute(repeat: int) -> dict[str, dict]:
    """Per spectrum (``case fwhm offset``): seconds of each step, wall and CPU."""
    import numpy as np

    from tests.xray.cases import CASES, instrument
    from workbench.datamodel import Spectrum
    from workbench.matching import MatchParameters, match_peaks
    from workbench.peaks import find_peaks
    from workbench.refdata import load_set
    from workbench.xray.detector import snip_iterations_for
    from workbench.xray.forward import forward_model

    xray = load_set("xray")
    out: dict[str, dict] = {}
    for case, fwhm, offset in _cases():
        inst = instrument(fwhm)
        fs = forward_model(CASES[case], inst, rng=np.random.default_rng(SEED))
        keep = fs.energy_eV >= 1000.0  # as run_case: below ~1 keV only noise
        spec = Spectrum(fs.energy_eV[keep] + offset, fs.counts[keep], "energy", None)

        def peaks_of(spec=spec, inst=inst):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # zero-width Poisson spikes, as run_case
                p = find_peaks(spec, snip_iterations=snip_iterations_for(inst, 10.0))
            p.extra.setdefault("x_range", (float(spec.x[0]), float(spec.x[-1])))
            p.extra["spectrum"] = (spec.x, spec.y)
            return p

        t_peaks = _timed(peaks_of, repeat)
        params = MatchParameters(instrument=inst)
        t_match = _timed(lambda p=t_peaks[2], params=params: match_peaks(p, [xray], params), repeat)
        t_report = _timed(t_match[2].report, repeat)
        rep = t_report[2]
        n_top = sum(e["verdict"] == "established" for e in rep["elements"])
        out[f"{case} {fwhm:.0f} eV{f' +{offset:.0f} eV' if offset else ''}"] = {
            "channels": int(keep.sum()),
            "peaks": int(t_peaks[2].table.height),
            "established": n_top,
            **{f"{k}_wall_s": v[0] for k, v in (("peaks", t_peaks), ("match", t_match))},
            **{f"{k}_cpu_s": v[1] for k, v in (("peaks", t_peaks), ("match", t_match))},
            "report_wall_s": t_report[0],
        }
    return out


def _before(ref: str, repeat: int) -> dict[str, dict]:
    from at_commit import run_at_commit

    return json.loads(
        run_at_commit(
            ref,
            ["workbench", "reference_sets", "tests/__init__.py", "tests/xray"],
            ["bench_xrf.py", "at_commit.py"],
            ["--json-only", "--repeat", str(repeat)],
            working_files=("tests/xray/cases.py",),
        )
    )


def _fmt(r: dict | None) -> str:
    if r is None:
        return "(not run)"
    return (
        f"{r['peaks']:>4} {r['peaks_wall_s'] * 1e3:>6.0f} {r['match_wall_s'] * 1e3:>7.0f} "
        f"({r['match_cpu_s'] * 1e3:>6.0f}) {r['report_wall_s'] * 1e3:>5.0f} {r['established']:>3}"
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--before", default="4123f2f", help="commit to time beside (default 4123f2f)")
    ap.add_argument("--no-before", action="store_true", help="only the working copy")
    ap.add_argument("--repeat", type=int, default=3, help="runs per step (best is shown)")
    ap.add_argument("--json-only", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args()
    sys.path.insert(0, str(Path.cwd() if os.environ.get("BENCH_REF_ROOT") else ROOT))
    if args.json_only:
        print(json.dumps(compute(args.repeat)))
        return
    print(f"load average before: {os.getloadavg()[0]:.2f}")
    now = compute(args.repeat)
    old = None if args.no_before else _before(args.before, args.repeat)
    print(f"load average after: {os.getloadavg()[0]:.2f}")
    head = "peaks find_ms match_ms (cpu) report_ms est"
    print(
        f"{'spectrum':<30} {'working copy: ' + head:<52}"
        + ("" if old is None else f"| {args.before}")
    )
    tot = {"now": 0.0, "old": 0.0}
    for key, r in now.items():
        o = None if old is None else old.get(key)
        print(f"{key:<30} {_fmt(r):<52}" + ("" if old is None else f"| {_fmt(o)}"))
        tot["now"] += r["match_wall_s"]
        tot["old"] += 0.0 if o is None else o["match_wall_s"]
    print(
        f"match, all {len(now)} spectra: {tot['now']:.2f} s"
        + ("" if old is None else f" ({args.before}: {tot['old']:.2f} s)")
    )


if __name__ == "__main__":
    main()
