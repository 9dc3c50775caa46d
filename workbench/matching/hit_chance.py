"""The chance that a group's window holds a peak by coincidence (one pass, all groups).

On a wavelength axis the chance of a hit per group is that of the peaks
around it, never below the spectrum's average density, and bounded by ρw:

* the density is local (:mod:`workbench.matching.density`): peaks crowd
  where line-rich sources have most lines (a Th-Ar lamp's thorium forest in
  the blue, the blue of a cool photosphere), and a species whose lines lie
  there hits more of them than the average predicts. In emission it is
  measured from the peaks *outside the species' own windows*, so that a
  present species' own lines do not raise its chance (an iron lamp's Fe I
  lines are the crowd around Fe I); absorption uses all usable dips (its
  figures were chosen so);
* the hit chance is min(1, ρw) rather than 1 − e^(−ρw): peaks closer than a
  resolution element merge, so a crowded spectrum's peaks are spread more
  evenly than a Poisson scatter; for any stationary scatter P(a window
  holds a peak) ≤ its expected number ρw. Where ρw is small the two agree.

On the energy axis (X-ray) the density is that of peaks comparable in
strength (at least 30 % of the group's prediction) and the chance
1 − e^(−ρw).

Absorption: on 90 seeded invented mixtures
(``benchmarks/absorption_confusion.py``) these took the false calls without
a prior from 12 "established" and 24 "probable" (line-rich Ce, U, Nd, W,
Th, Os, Re, Hf …) to none. Emission (stop 25): until then emission kept the
average density, because the local one cost three R 1000 invented emission
mixtures their "established" (few-line Mg II, Li I, Zn I among crowded
lines). The real Th-Ar atlas at lower resolution
(``tests/realdata/loader.degrade``) showed what that left: Pr II "probable"
at R 1000 and Ce I + II, Gd I + II at R 5000, none of them in the lamp, and
Th itself "possible" at R 1000; with the local density outside the
species' windows, the ρw bound and Simes pooling
(:mod:`workbench.matching.pooling`) none is, and Th is "established"
(figures and costs in ``docs/evidence-model.md``, section 2).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from workbench.matching.density import density_outside_own_peaks, nearest_neighbour_density

if TYPE_CHECKING:
    from workbench.matching.evidence import ObservedLines
    from workbench.matching.layout import PassLayout

__all__ = ["group_hit_chance", "local_density"]


def local_density(obs: ObservedLines, x: np.ndarray) -> np.ndarray:
    """Density of usable (not excluded) peaks around positions ``x``, per axis unit.

    :func:`workbench.matching.density.nearest_neighbour_density` over the
    usable peaks; zero where fewer than
    :data:`~workbench.matching.density.LOCAL_DENSITY_NEIGHBOURS` exist (the
    caller keeps the average then).
    """
    pos = obs.position if obs.excluded is None else obs.position[~obs.excluded]
    return nearest_neighbour_density(pos, x)


def group_hit_chance(
    obs: ObservedLines,
    layout: PassLayout,
    n_species: int,
    *,
    counted: np.ndarray,
    with_scale: np.ndarray,
    predicted: np.ndarray,
    xray: bool,
    absorption: bool,
) -> tuple[np.ndarray, np.ndarray]:
    """Chance density ρ and hit chance per group (module docstring).

    Parameters
    ----------
    obs : ObservedLines
        The observed peaks.
    layout : PassLayout
        The pass's groups and pairs (:func:`workbench.matching.layout.pass_layout`).
    n_species : int
        Species codes in the reference index.
    counted : numpy.ndarray of bool
        Groups the chance test may count (visible, neither masked nor
        crowded); emission measures the local density only for those.
    with_scale, predicted : numpy.ndarray
        Whether each group's species has an intensity scale, and the group's
        predicted intensity (X-ray: the comparable-strength density).
    xray, absorption : bool
        The source model's axis rules (module docstring).

    Returns
    -------
    rho, p_line : numpy.ndarray
        Density (per axis unit) and chance of a hit per group.
    """
    L = layout
    n_groups = L.g_pos.size
    window = 2.0 * L.g_tol + L.g_span
    if L.has_int and xray:
        n_ge = L.sorted_intensity.size - np.searchsorted(
            L.sorted_intensity, 0.3 * predicted, "left"
        )
        rho = np.where(with_scale, n_ge / L.span, L.density)
        return rho, 1.0 - np.exp(-rho * window)
    # Optical: any peak in the window makes the group found, so the chance of
    # a hit is that of any peak (a density of comparably strong peaks made
    # chance hits look rarer than the hits counted).
    rho = np.full(n_groups, L.density)
    if absorption:
        rho = np.maximum(rho, local_density(obs, L.g_pos))
    elif not xray:
        # Emission: the peaks outside the species' own windows, so that a
        # present species' own lines do not raise its chance. Only where a
        # chance probability can use it: groups that could be counted, of
        # species with a hit (no hit: p is 1 anyway).
        has_hit = np.bincount(L.g_species, weights=L.found, minlength=n_species) > 0
        want = counted & has_hit[L.g_species]
        usable_peak = np.ones(L.n_obs, dtype=bool) if obs.excluded is None else ~obs.excluded
        rho = np.maximum(
            rho,
            density_outside_own_peaks(
                obs.position, usable_peak, L.g_pos, L.g_species, L.pairs.obs, L.sp, want
            ),
        )
    if xray:
        return rho, 1.0 - np.exp(-rho * window)
    # Peaks closer than a resolution element merge, so a crowded spectrum's
    # peaks fill windows more often than 1 − e^(−ρw); for any stationary
    # scatter P(a window holds a peak) ≤ ρw (module docstring).
    return rho, np.minimum(1.0, rho * window)
