"""Peak centres from a Gaussian fit of the line shape (workbench.xray.centroid).

Truth is analytic: Gaussian lines of known centre and width on a known flat
background, Poisson noise from fixed seeds. The standard error of a fitted
Gaussian's centre is σ/√N for a line without background (N its counts),
larger with background (common practice, no source); the tests compare the
reported error with the scatter it claims.
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.xray.centroid import fit_centres

_GAUSS = 2.0 * np.sqrt(2.0 * np.log(2.0))
CHANNEL_EV = 10.0
GRID = np.arange(7000.0, 10000.0, CHANNEL_EV)


def _spectrum(rng, centres, areas, fwhm, background):
    lam = np.full(GRID.size, float(background))
    s = fwhm / _GAUSS
    for c, a in zip(centres, areas, strict=True):
        lam += a * CHANNEL_EV / (s * np.sqrt(2 * np.pi)) * np.exp(-0.5 * ((GRID - c) / s) ** 2)
    return rng.poisson(lam).astype(float)


def _top(counts, start):
    """The highest channel within ±1 channel-wide search around ``start`` ± 60 eV."""
    sel = np.abs(GRID - start) <= 60.0
    return GRID[sel][np.argmax(counts[sel])]


@pytest.mark.parametrize(
    ("area", "background"),
    [
        (1500.0, 85.0),
        (20000.0, 85.0),
        (800.0, 10.0),
    ],  # weak on high background, strong, weak on low
)
def test_fitted_centre_is_unbiased_and_its_error_is_honest(area, background):
    """Over 300 draws: mean within 3 standard errors of the truth, scatter ≈ reported σ."""
    rng = np.random.default_rng(20261203)
    truth, fwhm = 8630.0, 140.0
    fits, sigmas, tops = [], [], []
    for _ in range(300):
        y = _spectrum(rng, [truth], [area], fwhm, background)
        start = _top(y, truth)
        c, s = fit_centres(GRID, y, np.full(GRID.size, float(background)), [start], [fwhm])
        assert np.isfinite(s[0])
        fits.append(c[0])
        sigmas.append(s[0])
        tops.append(start)
    fits = np.asarray(fits)
    scatter = float(np.std(fits))
    assert abs(fits.mean() - truth) < 3.0 * scatter / np.sqrt(fits.size)
    # The reported error describes the scatter (within 25 %: 300 draws give
    # the scatter to about 4 %; √(χ²/dof) inflation may add a little).
    assert 0.75 < float(np.median(sigmas)) / scatter < 1.25
    # And the fit beats the top channel, whose error includes the channel width.
    assert scatter < float(np.std(np.asarray(tops) - truth))


def test_neighbour_fitted_together_does_not_pull():
    """A 10× stronger line 1.2 FWHM away is fitted with the weak one and does not pull it."""
    rng = np.random.default_rng(7)
    fwhm = 140.0
    weak, strong = 8630.0, 8630.0 + 1.2 * fwhm
    errs = []
    for _ in range(100):
        y = _spectrum(rng, [weak, strong], [3000.0, 30000.0], fwhm, 50.0)
        c, s = fit_centres(GRID, y, np.full(GRID.size, 50.0), [weak, strong], [fwhm, fwhm])
        errs.append((c[0] - weak) / s[0])
    # Fitted together, the pulls are standard normal. (Fitted alone, the
    # first draw's weak line sat 66 eV, 7σ, towards the strong one.)
    errs = np.asarray(errs)
    assert abs(float(np.mean(errs))) < 3.0 / np.sqrt(errs.size)
    assert 0.75 < float(np.std(errs)) < 1.25


def test_no_line_keeps_the_start_and_gives_no_error():
    """A window of pure background: no positive amplitude, the start stands."""
    rng = np.random.default_rng(11)
    y = rng.poisson(np.full(GRID.size, 100.0)).astype(float)
    y[np.abs(GRID - 8630.0) < 80.0] -= 40.0  # a dip, not a line
    c, s = fit_centres(GRID, y, np.full(GRID.size, 100.0), [8630.0], [140.0])
    assert c[0] == 8630.0 and np.isnan(s[0])


def test_too_few_channels_keep_the_start():
    c, s = fit_centres(GRID[:3], np.array([5.0, 9.0, 5.0]), np.zeros(3), [7010.0], [140.0])
    assert c[0] == 7010.0 and np.isnan(s[0])


def test_a_blend_of_two_lines_keeps_the_peak_finders_centre():
    """Two lines 45 eV apart at a 117 eV FWHM (as Ba Lα 4466.5 and Ti Kα 4510.8
    eV, Elam; from memory), 20,000 and 40,000 counts: the peak is wider than one
    line (about 6 %, derivation), so its centroid, which is neither line's, is
    not used."""
    rng = np.random.default_rng(3)
    fwhm = 117.0
    y = _spectrum(rng, [8600.0, 8645.0], [20000.0, 40000.0], fwhm, 50.0)
    start = _top(y, 8630.0)
    c, s = fit_centres(GRID, y, np.full(GRID.size, 50.0), [start], [fwhm])
    assert c[0] == start and np.isnan(s[0])
