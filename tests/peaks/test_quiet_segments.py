"""A part of a spectrum much quieter than the whole gets its own threshold (peaks.noise)."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import Spectrum
from workbench.peaks import find_peaks
from workbench.peaks.noise import NOISE_BLOCK, QUIET_FACTOR, noise_sigma, quiet_segment_sigma

SEED = 20261204


def test_a_quiet_half_keeps_its_own_sigma():
    # Invented: white noise σ 1 then σ 0.01 (a part scaled 100× lower).
    rng = np.random.default_rng(SEED)
    n = 8 * NOISE_BLOCK
    s = np.concatenate([rng.normal(0, 1.0, n // 2), rng.normal(0, 0.01, n // 2)])
    whole = noise_sigma(s)
    local = quiet_segment_sigma(s, whole)
    assert local is not None and local.shape == s.shape
    # Noisy half: the whole spectrum's σ, never lowered; quiet half: its own,
    # within 15 % (the MAD of 511 differences scatters by about 5 %; a block
    # straddling the step does not occur: the step is on a block edge).
    assert np.all(local[: n // 2] == whole)
    assert np.allclose(local[n // 2 :], 0.01, rtol=0.15)


@pytest.mark.parametrize("n", [NOISE_BLOCK, 8 * NOISE_BLOCK])
def test_uniform_noise_or_a_short_spectrum_gives_none(n):
    rng = np.random.default_rng(SEED)
    s = rng.normal(0, 1.0, n)
    assert quiet_segment_sigma(s, noise_sigma(s)) is None


def test_a_block_noisier_than_the_whole_is_never_used():
    # Lines raise a block's MAD; the rule only ever lowers a threshold.
    rng = np.random.default_rng(SEED)
    s = rng.normal(0, 1.0, 6 * NOISE_BLOCK)
    s[:NOISE_BLOCK] *= 10.0
    assert quiet_segment_sigma(s, noise_sigma(s)) is None
    assert QUIET_FACTOR == 3.0


def _stitched():
    """Invented: 300–332 nm at noise 1, 332–340 nm scaled 100× lower, four lines each.

    The quiet part is the smaller one, as in the real atlas (80 of 760 nm):
    the whole spectrum's σ is then its noisy part's. (Were the quiet part the
    larger, the whole spectrum's MAD would be the quiet part's and the noisy
    part would be thresholded too low: a limit of one σ for a whole spectrum,
    before and after this rule, which never raises a threshold.)
    """
    rng = np.random.default_rng(SEED)
    x = np.linspace(300.0, 340.0, 20 * NOISE_BLOCK)
    y = np.where(x < 332.0, rng.normal(0, 1.0, x.size), rng.normal(0, 0.01, x.size))
    w = 0.02
    loud = [305.0, 312.0, 319.0, 326.0]
    quiet = [333.0, 335.0, 337.0, 339.0]
    for c in loud:
        y = y + 200.0 * np.exp(-0.5 * ((x - c) / w) ** 2)
    for c in quiet:
        # 300 σ of its own part, 4 σ of the whole: under the whole spectrum's
        # threshold (5 σ), and above the baseline, which is lifted there by
        # the whole spectrum's noise centre (about 1.4; noise.quiet_segment_sigma).
        y = y + 3.0 * np.exp(-0.5 * ((x - c) / w) ** 2)
    return Spectrum(x, y + 10.0, "wavelength", "air"), loud, quiet


def test_lines_of_the_quiet_part_are_found():
    spec, loud, quiet = _stitched()
    peaks = find_peaks(spec)
    pos = peaks.positions
    for c in [*loud, *quiet]:
        assert np.min(np.abs(pos - c)) < 0.01, c
    # No noise peak in the quiet part: exactly its four lines. (The noisy
    # part is thresholded at the whole spectrum's σ, which its quiet fifth
    # pulls 27 % below the noisy part's own: a few noise peaks there are the
    # limit of one σ for a whole spectrum, as before this rule.)
    assert np.sum(pos > 332.0) == 4
    # Their SNR is in units of their own part's σ: about 160 (1.6 above the
    # lifted baseline over σ 0.01; invented truth), under 5 in the whole
    # spectrum's; 25, between the two, is a bound chosen here.
    snr = peaks.table.filter(pl.col("wavelength_nm") > 332.0)["snr"].to_numpy()
    assert np.all(snr > 25)
    # The engine's detection limit stays the whole spectrum's (noise.py says why).
    assert "noise_curve" not in peaks.extra


def test_the_real_atlas_segment_keeps_its_lines():
    # KPNO Th-Ar atlas (pyreduce-astro; tests/data/realspectra): 620–700 nm
    # is scaled about 100× lower than the rest. Of the atlas's own identified
    # lines there, 139 of 386 had a peak within one FWHM with one σ for the
    # whole spectrum, 279 with the segment's own σ (measured at stop 33).
    from tests.realdata.loader import load

    rs = load("thar")
    peaks = find_peaks(rs.spectrum)
    pos = peaks.positions
    fwhm = float(np.median(peaks.table["fwhm_nm"].to_numpy()))
    ids = np.asarray(rs.identified_nm)
    seg = ids[(ids > 620.0) & (ids < 700.0)]
    found = np.array([np.min(np.abs(pos - w)) < fwhm for w in seg])
    assert seg.size == 386
    assert found.sum() >= 250
