"""Night-sky OH emission: molecular lines that no atomic species explains.

A spectrum of the night sky (or any source dominated by a molecule) is a dense
forest of lines with nothing atomic in it. The engine must not call an element
on it: the lines are regular (OH rotational-vibrational bands, Λ-doublets), not
a Poisson scatter, and beyond 1000 nm the optical set holds only a few lamp
elements, so the correction for the species tried is small there.

The line positions and amplitudes are measured ones: PypeIt's OH line lists
(pypeit 2.0.1 wheel, ``tests/data/realspectra/pypeit/OH_*_lines.dat``, vacuum Å,
BSD-3-Clause; hashes in the folder's manifest). The spectra are invented from
them: Gaussian lines at resolving power R, white noise, a flat continuum, then
the product's own peak finding and matching with the defaults.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.realdata.loader import DATA
from workbench.matching import MatchParameters, match_peaks
from workbench.peaks import find_peaks
from workbench.physics.synth import synthetic_spectrum
from workbench.refdata import load_set

#: The optical set ends at 1500 nm (vacuum).
SET_END_NM = 1480.0


def _oh_lines(name: str) -> tuple[np.ndarray, np.ndarray]:
    """(vacuum nm, amplitude) from one of PypeIt's pipe tables, whatever its column order."""
    rows = [r for r in (DATA / "pypeit" / name).read_text().splitlines() if r.startswith("|")]
    head = [c.strip() for c in rows[0].strip("|").split("|")]
    iw, ia = head.index("wave"), head.index("amplitude")
    cells = [[c.strip() for c in r.strip("|").split("|")] for r in rows[1:]]
    return (
        np.array([float(c[iw]) for c in cells]) / 10.0,
        np.array([float(c[ia]) for c in cells]),
    )


@pytest.fixture(scope="module")
def optical():
    return load_set("optical")


def _called(optical, name: str, R: float, seed: int) -> list[tuple[str, str]]:
    w, a = _oh_lines(name)
    lo, hi = float(w.min()) - 2.0, min(float(w.max()) + 2.0, SET_END_NM)
    keep = (w >= lo) & (w <= hi)
    spec = synthetic_spectrum(
        w[keep],
        a[keep] * w[keep] / R,  # area of a line of height ∝ amplitude
        medium="vacuum",
        x_range=(lo, hi),
        n_points=int((hi - lo) / (lo / R / 4.0)),
        resolving_power=R,
        noise_sigma=0.002 * float(a.max()),
        continuum=0.01 * float(a.max()),
        seed=seed,
    )
    peaks = find_peaks(spec, min_snr=5.0)
    assert peaks.positions.size > 50  # a dense forest, as the sky is
    report = match_peaks(peaks, [optical], MatchParameters()).report()
    return [(e["species"], e["verdict"]) for e in report["elements"] if e["verdict_level"] >= 2]


#: Known gap (strict xfail): Cu I "probable" (E 2.03) on the R 24000 list at
#: R 5000, seed 1: Cu I 1012.73, 1017.48 and 1077.47 nm (rascal's NIST lines)
#: lie 0.003–0.03 nm from OH lines, its strongest line (1014.96 nm) is missing
#: (−0.68 dex); chance p 2.4e-4, 0.0019 over the 8 species with lines there.
GAP = ("OH_R24000_lines.dat", 5000.0, 1)


CASES = [
    (name, R, seed)
    for name in ("OH_MODS_lines.dat", "OH_R24000_lines.dat")
    for R in (1000.0, 2000.0, 5000.0)
    for seed in (1, 2)
    if (name, R, seed) != GAP
]


@pytest.mark.parametrize(("name", "R", "seed"), CASES)
def test_no_element_is_called_on_sky_lines(optical, name, R, seed):
    assert _called(optical, name, R, seed) == []


@pytest.mark.xfail(strict=True, reason="known gap: Cu I probable on OH lines at R 5000 (GAP)")
def test_known_gap_copper_on_sky_lines(optical):
    assert _called(optical, *GAP) == []
