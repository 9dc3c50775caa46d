"""Invented rare-gas and mercury lamp spectra (invented data) drawn from the optical set.

A lamp's lines are the shipped optical set's own lines of its gases (neutral
atoms only, the lines a low-current discharge lamp shows) that carry a
tabulated relative intensity, at that intensity times a log-normal scatter
of :data:`SCATTER_DEX` (the ``discharge-lamp`` model's own σ, 0.8 dex:
lamp, current and detector differ from the tabulation by that much) and a
smooth instrument response falling by :data:`RESPONSE_DECADES` decades
(10×) across the range, to the red or to the blue by the seed. Lines are
Gaussians at resolving power R sampled at :data:`PIXELS_PER_FWHM` pixels
per FWHM at the blue end, on a flat background of :data:`BACKGROUND_E`
electrons, with Poisson noise and a read noise of :data:`READ_NOISE_E`
electrons, and then go through the product's own peak finding and matching
(:func:`workbench.matching.analyse.analyse_spectrum`, the user's path).
Each gas is scaled so that its lines in range sum to the same total counts
(gases at comparable total brightness). Every figure here is invented;
none comes from a real lamp (common practice, no source).

Used by ``tests/matching/test_lamp_gases.py`` and
``benchmarks/lamp_gases.py`` (the recall table).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import polars as pl

from workbench.datamodel import Spectrum
from workbench.physics.synth import render_lines

#: Log-normal scatter of each line about its tabulated intensity (decades).
SCATTER_DEX: float = 0.8
#: Decades the instrument response falls across the range (10×).
RESPONSE_DECADES: float = 1.0
#: Detector sampling: pixels per line FWHM at the short-wavelength end.
PIXELS_PER_FWHM: float = 3.0
#: Peak height of the brightest line of the spectrum, electrons.
PEAK_E: float = 40_000.0
#: Flat background under the lines (scattered light, dark), electrons per pixel.
BACKGROUND_E: float = 20.0
#: Read noise per pixel, electrons.
READ_NOISE_E: float = 5.0

#: Lamp cases: name → gases (element symbols; neutral lines).
LAMPS: dict[str, tuple[str, ...]] = {
    "Kr": ("Kr",),
    "Xe": ("Xe",),
    "Hg-Ar pen lamp": ("Hg", "Ar"),
    "Ne+Ar+Hg+Kr+Xe": ("Ne", "Ar", "Hg", "Kr", "Xe"),
}
#: Ranges (nm) and their medium: a blue-red spectrograph (vacuum) and a red one (air).
RANGES: tuple[tuple[float, float, str], ...] = ((400.0, 850.0, "vacuum"), (550.0, 1000.0, "air"))
RESOLVING_POWERS: tuple[float, ...] = (1000.0, 2000.0, 5000.0)
#: Variants of the draw: ``comparable`` (each gas the same total counts);
#: ``unequal`` (each gas's total drawn from 10^U(−1, 1): one gas up to 100×
#: brighter than another, as lamps of different age and current are);
#: ``saturated`` (comparable gases, exposed so that the brightest line peaks
#: at 4× the detector's full scale :data:`FULL_SCALE_E`, clipped there:
#: arcs are exposed for their faint lines).
VARIANTS: tuple[str, ...] = ("comparable", "unequal", "saturated")
#: A clearly present line (:func:`clear_lines`): peak ≥ this many background σ,
CLEAR_SNR: float = 20.0
#: ... with no other gas's line at least this fraction as high ...
CLEAR_BLEND_FRACTION: float = 0.3
#: ... within this many FWHM.
CLEAR_FWHM: float = 1.5
#: Full scale of the detector (electrons) for the ``saturated`` variant (invented).
FULL_SCALE_E: float = 65_000.0


@dataclass(frozen=True)
class LampCase:
    """One invented lamp spectrum: what was put in and how it was drawn."""

    lamp: str
    gases: tuple[str, ...]
    lo_nm: float
    hi_nm: float
    medium: str
    resolving_power: float
    seed: int
    variant: str = "comparable"


def lamp_cases(
    seeds_per_config: int, seed: int = 20261203, variant: str = "comparable"
) -> list[LampCase]:
    """All lamps × ranges × resolving powers, ``seeds_per_config`` draws each (reproducible)."""
    rng = np.random.default_rng(seed)
    out = []
    for lamp, gases in LAMPS.items():
        for lo, hi, medium in RANGES:
            for R in RESOLVING_POWERS:
                for _ in range(seeds_per_config):
                    s = int(rng.integers(1, 2**31))
                    out.append(LampCase(lamp, gases, lo, hi, medium, R, s, variant))
    return out


def lamp_lines(optical, gases: tuple[str, ...], lo: float, hi: float, medium: str):
    """(position_nm, tabulated intensity, element): the gases' tabulated neutral lines in range."""
    col = "wavelength_air_nm" if medium == "air" else "wavelength_vac_nm"
    t = optical.table.filter(
        pl.col("element").is_in(list(gases))
        & (pl.col("ion") == 1)
        & (pl.col("rel_intensity") > 0)
        & pl.col(col).is_between(lo, hi)
    )
    return t[col].to_numpy(), t["rel_intensity"].to_numpy(), t["element"].to_numpy()


def draw_lamp(optical, case: LampCase):
    """The drawn lines of one lamp case and the generator that drew them.

    Returns
    -------
    pos_nm, height_e, element : numpy.ndarray
        Line centres, peak heights (electrons) and gas of every line.
    rng : numpy.random.Generator
        The case's generator, after the draw (the noise comes next).
    """
    rng = np.random.default_rng(case.seed)
    pos, tab, el = lamp_lines(optical, case.gases, case.lo_nm, case.hi_nm, case.medium)
    flux = tab * 10.0 ** rng.normal(0.0, SCATTER_DEX, tab.size)
    # Each gas to the same total flux (comparable brightness).
    for g in case.gases:
        m = el == g
        total = 10.0 ** rng.uniform(-1.0, 1.0) if case.variant == "unequal" else 1.0
        flux[m] *= total / flux[m].sum()
    u = (pos - case.lo_nm) / (case.hi_nm - case.lo_nm)
    slope = RESPONSE_DECADES if rng.random() < 0.5 else -RESPONSE_DECADES
    # Smooth response: 10× from one end to the other, slightly curved (invented).
    flux = flux * 10.0 ** (-slope * u + 0.3 * u * (1 - u))
    height = flux / (pos / case.resolving_power)  # Gaussian peak ∝ area / FWHM
    peak_e = 4.0 * FULL_SCALE_E if case.variant == "saturated" else PEAK_E
    return pos, height * (peak_e / height.max()), el, rng


def clear_lines(case: LampCase, pos: np.ndarray, height: np.ndarray, el: np.ndarray) -> dict:
    """Per gas, its lines that are *clearly present*: what an analyst would point at.

    A line is clear when its peak is at least :data:`CLEAR_SNR` times the
    background noise (√(background + read noise²)) and no line of another gas
    at least :data:`CLEAR_BLEND_FRACTION` as high lies within
    :data:`CLEAR_FWHM` FWHM (resolved from its neighbours). Thresholds:
    common practice, no source.
    """
    noise = np.sqrt(BACKGROUND_E + READ_NOISE_E**2)
    fwhm = pos / case.resolving_power
    out = {}
    for g in case.gases:
        mine = el == g
        n = 0
        for i in np.flatnonzero(mine & (height >= CLEAR_SNR * noise)):
            near = ~mine & (np.abs(pos - pos[i]) < CLEAR_FWHM * fwhm[i])
            n += not np.any(near & (height >= CLEAR_BLEND_FRACTION * height[i]))
        out[g] = n
    return out


def render_lamp(optical, case: LampCase) -> Spectrum:
    """The invented spectrum (electrons per pixel) of one lamp case."""
    pos, height, _, rng = draw_lamp(optical, case)
    fwhm = pos / case.resolving_power
    step = case.lo_nm / case.resolving_power / PIXELS_PER_FWHM
    x = np.arange(case.lo_nm, case.hi_nm, step)
    # render_lines takes areas: a Gaussian's area is height · σ · √(2π).
    area = height * (fwhm / 2.3548200450309493) * np.sqrt(2.0 * np.pi)
    y = BACKGROUND_E + render_lines(pos, area, x, fwhm=fwhm)
    y = rng.poisson(y).astype(float) + rng.normal(0.0, READ_NOISE_E, x.size)
    if case.variant == "saturated":
        y = np.minimum(y, FULL_SCALE_E)
    return Spectrum(x, y, "wavelength", case.medium)


def analyse_lamp(optical, case: LampCase, params=None):
    """The user's path on one lamp case: peak finding, then matching (an ``AnalysisOutcome``)."""
    from workbench.matching.analyse import analyse_spectrum
    from workbench.matching.engine import MatchParameters

    spec = render_lamp(optical, case)
    return analyse_spectrum(spec, None, params or MatchParameters(mode="emission"))


def run_lamp(optical, case: LampCase, params=None, outcome=None) -> dict[str, int]:
    """Best class (0–3) per element after the user's path: peak finding, then matching."""
    outcome = outcome or analyse_lamp(optical, case, params)
    best: dict[str, int] = {}
    for sp in outcome.report["elements"]:
        best[sp["element"]] = max(best.get(sp["element"], 0), sp["verdict_level"])
    return best
