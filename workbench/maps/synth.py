"""Synthetic cubes with known element maps (for the demo, tests and benchmarks).

Each pixel's expected spectrum is Σ (family counts × family template) plus a
smooth scatter/bremsstrahlung hump, drawn with Poisson noise. The family
templates are those of :mod:`workbench.maps.templates` (the same detector
response as the fit), so a test of recovery checks the solver and the
pipeline, not the physics of the templates.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from workbench.maps.detector import Instrument
from workbench.maps.templates import build_templates

__all__ = ["background_shape", "synthesise_cube"]


def background_shape(energy_eV: np.ndarray) -> np.ndarray:
    """An invented smooth hump (scatter + bremsstrahlung look-alike), unit sum."""
    e = np.asarray(energy_eV, dtype=float)
    shape = np.exp(-(((e - 9000.0) / 6000.0) ** 2)) + 0.3 * np.exp(-e / 3000.0)
    return shape / shape.sum()


def synthesise_cube(
    energy_eV: np.ndarray,
    family_counts: Mapping[str, np.ndarray],
    instrument: Instrument,
    *,
    background_counts: float | np.ndarray = 500.0,
    seed: int = 20261202,
    dtype: type = np.uint16,
) -> np.ndarray:
    """Draw a Poisson cube ``(ny, nx, n_channels)`` from planted family maps.

    Parameters
    ----------
    energy_eV : numpy.ndarray
        Channel centres (eV).
    family_counts : mapping of str to numpy.ndarray
        Expected counts in each family's lines per pixel, each ``(ny, nx)``.
    instrument : Instrument
        Detector response.
    background_counts : float or numpy.ndarray
        Expected background counts per pixel (scalar or ``(ny, nx)``).
    seed : int
        Random seed.
    dtype : numpy dtype
        Stored type of the counts.

    Returns
    -------
    numpy.ndarray
    """
    names = sorted(family_counts)
    tpl = build_templates(energy_eV, names, instrument)
    if tpl.families != names:
        missing = sorted(set(names) - set(tpl.families))
        raise ValueError(f"families without lines on this axis: {missing}")
    ny, nx = np.shape(family_counts[names[0]])
    amounts = np.stack([np.asarray(family_counts[n], dtype=float) for n in names], axis=-1)
    expected = amounts.reshape(-1, len(names)) @ tpl.matrix[:, : len(names)].T
    bg = np.broadcast_to(np.asarray(background_counts, dtype=float), (ny, nx)).reshape(-1, 1)
    expected += bg * background_shape(energy_eV)[None, :]
    rng = np.random.default_rng(seed)
    return rng.poisson(expected).astype(dtype).reshape(ny, nx, -1)
