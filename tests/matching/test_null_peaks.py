"""Random peaks (the null hypothesis): no species may reach "probable".

Peaks are placed uniformly at random with log-normal heights (invented data,
seeded): whatever lines they hit, they hit by chance, so every call at
"probable" or above is false. Dense lists are the hard case: with 10,000 peaks
and λ/20 000 windows about half of all groups have a peak in their window, and
a chance test that leaves out the missed groups near strong peaks but keeps
the hits there sees far more hits than chance (issue 9 follow-up:
``workbench.matching.evidence``, crowded and masked groups).
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import PeakList
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
from workbench.refdata import load_set


@pytest.mark.parametrize(
    ("seed", "n_peaks", "resolving_power"),
    [(20261202, 10_000, 20_000.0), (2, 1_000, 5_000.0), (3, 100, 1_000.0)],
)
def test_random_peaks_give_no_probable_species(seed, n_peaks, resolving_power):
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(200.0, 900.0, n_peaks))
    peaks = PeakList(
        pl.DataFrame({"wavelength_nm": x, "intensity": rng.lognormal(3.0, 1.0, n_peaks)}),
        "wavelength",
        "air",
    )
    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", resolving_power))
    report = match_peaks(peaks, [load_set("optical")], params).report()
    called = [e["species"] for e in report["elements"] if e["verdict_level"] >= 2]
    assert called == []
