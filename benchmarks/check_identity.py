"""Result identity check: the engine's canonical JSON, byte for byte, against another commit.

Run: ``uv run --extra test python benchmarks/check_identity.py [--ref main]``

Performance work on the matching engine must not change any result. This
script runs a fixed set of inputs through the working copy and through the
code of ``--ref`` (a git commit or branch, extracted with ``git archive`` into
a temporary folder and run in a subprocess, as ``bench_match.py`` does for its
baseline) and compares the SHA-256 of the canonical JSON bytes
(:func:`workbench.matching.report.result_json`) of every case:

* the two invented demo spectra (LIBS ``paint_chip``, XRF ``white_pigment``),
  through :func:`workbench.matching.analyse.analyse_input`, as ``workbench
  match`` runs them;
* 10,000 random peaks against the whole optical set (the ``bench_match.py``
  case, seed 20261202), with and without intensities;
* the 5,000-line dense absorption spectrum of ``bench_match.py``, with the
  window from the measured widths and with λ/20000, and shifted by 0.008 nm
  (an applied calibration: the match runs again on corrected positions);
* the random peaks with every 7th excluded and a fixed 0.01 nm window;
* every real spectrum in ``tests/data/realspectra`` (``--quick``: four of
  them), peak finding + matching as ``tests/realdata/run.py`` does.

``--stored FILE`` compares with hashes stored in a JSON file instead of
running another commit; ``--write FILE`` stores the hashes of ``--ref`` (the
file names the commit they came from). Prints one line per case; exits 1
when any differs. Asserts nothing else and times nothing.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
QUICK_REAL = (
    "goodman_comp_1200M2_FeHeAr",
    "goodman_comp_1200M6_GG495_HgArNe",
    "kastr_600_7500_PYPIT",
    "ASTMG173",
)


def _sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def compute_hashes(quick: bool = False) -> dict[str, str]:
    """SHA-256 of the canonical result JSON per case, with the importable ``workbench``."""
    import numpy as np
    import polars as pl

    from workbench.datamodel import PeakList
    from workbench.demo import SCENARIOS, demo_file
    from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
    from workbench.matching.analyse import analyse_input
    from workbench.matching.report import result_json
    from workbench.refdata import load_set

    # bench_match.py sits beside this script; tests/ one level up (in the
    # working copy and in the extracted tree alike).
    here = Path(__file__).resolve().parent
    sys.path[:0] = [str(here), str(here.parent)]
    from bench_match import dense_absorption_peaks

    out: dict[str, str] = {}
    for key in sorted(SCENARIOS):
        outcome = analyse_input(demo_file(key), name=SCENARIOS[key].filename)
        out[f"demo:{key}"] = _sha(outcome.json_bytes)

    optical = load_set("optical")
    rng = np.random.default_rng(20261202)
    obs = np.sort(rng.uniform(200.0, 900.0, 10_000))
    inten = rng.lognormal(3.0, 1.0, obs.size)
    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", 20_000.0))
    for name, i in (("random10k", inten), ("random10k:no-intensity", np.full(obs.size, np.nan))):
        peaks = PeakList(pl.DataFrame({"wavelength_nm": obs, "intensity": i}), "wavelength", "air")
        out[name] = _sha(result_json(match_peaks(peaks, [optical], params).report()))

    dense = dense_absorption_peaks(optical)
    for name, p in (
        ("dense-absorption:auto-window", MatchParameters(mode="absorption")),
        (
            "dense-absorption:R20000",
            MatchParameters(
                mode="absorption", tolerance=ToleranceSpec("resolving_power", 20_000.0)
            ),
        ),
    ):
        out[name] = _sha(result_json(match_peaks(dense, [optical], p).report()))
    # Shifted by 0.008 nm: the scale check applies a correction and matches again.
    shifted = PeakList(
        dense.table.with_columns(pl.col("wavelength_nm") + 0.008),
        "wavelength",
        "air",
        mode="absorption",
    )
    res = match_peaks(shifted, [optical], MatchParameters(mode="absorption"))
    assert res.scale.applied, "the shifted case is meant to exercise an applied calibration"
    out["dense-absorption:shifted-0.008nm"] = _sha(result_json(res.report()))
    # Every 7th random peak excluded, a fixed 0.01 nm window.
    peaks = PeakList(pl.DataFrame({"wavelength_nm": obs, "intensity": inten}), "wavelength", "air")
    res = match_peaks(
        peaks,
        [optical],
        MatchParameters(tolerance=ToleranceSpec("fixed", 0.01)),
        excluded_peaks=np.arange(0, obs.size, 7),
    )
    out["random10k:excluded-fixed-0.01nm"] = _sha(result_json(res.report()))

    from tests.realdata.loader import all_names, load
    from tests.realdata.run import run_real

    for name in QUICK_REAL if quick else all_names():
        out[f"real:{name}"] = _sha(run_real(load(name)).json_bytes)
    return out


def ref_hashes(ref: str, quick: bool) -> dict[str, str]:
    """The hashes computed by the code (and reference data) of commit ``ref``."""
    from at_commit import run_at_commit

    # This script (and bench_match.py, for the dense case) run against the
    # extracted code: cwd and PYTHONPATH point there, not at the working copy.
    return json.loads(
        run_at_commit(
            ref,
            [
                "workbench",
                "reference_sets",
                "tests/__init__.py",
                "tests/realdata",
                "tests/data/realspectra",
            ],
            ["check_identity.py", "bench_match.py"],
            ["--hashes-only"] + (["--quick"] if quick else []),
        )
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--ref", default="main", help="git commit or branch to compare with")
    ap.add_argument("--stored", type=Path, help="compare with hashes stored in this file")
    ap.add_argument("--write", type=Path, help="store the hashes of --ref in this file")
    ap.add_argument("--quick", action="store_true", help="four real spectra instead of all")
    ap.add_argument("--hashes-only", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args()

    if args.hashes_only:
        import workbench

        expect = os.environ.get("BENCH_REF_ROOT")  # set by at_commit.run_at_commit
        if expect and not workbench.__file__.startswith(expect):
            sys.exit(f"imported the wrong workbench: {workbench.__file__}")
        print(json.dumps(compute_hashes(args.quick), sort_keys=True))
        return

    if args.write:
        commit = subprocess.run(
            ["git", "-C", str(ROOT), "rev-parse", args.ref], capture_output=True, text=True
        ).stdout.strip()
        hashes = ref_hashes(args.ref, args.quick)
        args.write.write_text(
            json.dumps({"commit": commit, "hashes": hashes}, indent=1, sort_keys=True) + "\n"
        )
        print(f"{len(hashes)} hashes of {args.ref} ({commit[:10]}) written to {args.write}")
        return

    if args.stored:
        stored = json.loads(args.stored.read_text())
        expected, source = stored["hashes"], f"stored ({stored['commit'][:10]})"
    else:
        expected, source = ref_hashes(args.ref, args.quick), args.ref
    current = compute_hashes(args.quick)
    if args.quick:
        expected = {k: v for k, v in expected.items() if k in current}
    bad = 0
    for name in sorted(set(expected) | set(current)):
        a, b = expected.get(name), current.get(name)
        same = a == b
        bad += not same
        mark = "identical" if same else "DIFFERENT"
        print(f"{mark:9}  {name}  {(b or 'missing')[:16]}  ({source}: {(a or 'missing')[:16]})")
    print(f"{len(current) - bad} of {len(current)} cases identical ({source} vs working copy)")
    sys.exit(1 if bad else 0)


if __name__ == "__main__":
    main()
