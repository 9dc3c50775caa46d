"""Source models: what emitted or absorbed the light decides how strong each line should be.

Each model gives, per reference line, a predicted relative strength on ONE
scale per species (1 = the species' strongest line in the observed range)
and carries an explicit standard uncertainty of that prediction in decades
(``sigma_dex``: the standard deviation of log10(observed / predicted) one
should expect for a correctly identified species). The likelihood of
:mod:`workbench.matching.evidence` uses that uncertainty: a line predicted
ten times above the detection limit and not seen counts much more against a
species under ``lte-plasma`` (σ = 0.35 dex) than under ``discharge-lamp``
(σ = 0.8 dex).

``lte-plasma`` (LIBS, spark, ICP; σ = 0.35 dex)
    Boltzmann population of the upper level at the working temperature,
    I ∝ gA/λ · exp(−E_k/kT) (:mod:`workbench.matching.expected`). Lines
    that carry only a tabulated relative intensity are put on the same scale
    by the median offset ln(Boltzmann) − ln(tabulated) over the species'
    lines that have both (at least three such lines); otherwise their
    strength is *unknown* (they can match but are never "missing").
    σ: Boltzmann-plot scatter of good LIBS data is 0.1–0.3 dex; atomic data
    add 0.1 (common practice, no source).
    *Worked example*: Fe I 371.99 nm (gA 1.6e8 s⁻¹, E_k 3.33 eV) against
    Fe I 404.58 nm (gA 7.7e8 s⁻¹, E_k 4.55 eV) at 10 000 K: the ratio is
    (1.6/7.7)·(404.6/372.0)·exp(1.22 eV / 0.862 eV) ≈ 0.93, so both are
    "strong"; if 404.58 is seen at 1000 counts, 371.99 is predicted near
    930 counts (±0.35 dex: 420–2080 counts at 1σ).

``discharge-lamp`` (hollow cathode, glow discharge, pen lamps; σ = 0.8 dex)
    Not in LTE: the tabulated relative intensities of the source (measured
    on lamps of this kind) are the prediction; lines with only atomic data
    are put on that scale by the median offset over lines that have both
    (at least three), and are "strength unknown" otherwise; a species with
    only atomic data in range (Fe I in the shipped set) uses Boltzmann at the
    lamp excitation temperature :data:`LAMP_EXCITATION_K` as a weak prior,
    with a wider uncertainty (:data:`LAMP_PRIOR_SIGMA`, 1.2 dex).
    σ = 0.8 dex: tabulated
    lamp intensities differ from one lamp, current and detector to the next
    by factors of 3–10 (from memory; the issue's 0.3–1.3 decades). Where a
    lamp shows a species' weaker lines below their tabulated ratios
    together, the missing-line penalty uses the species' fitted contrast
    (:mod:`workbench.matching.contrast`).
    *Worked example*: Ne I 640.225 nm (tabulated 20 000) and Ne I 633.443
    (tabulated 10 000): predicted ratio 0.5; Ar I 706.72 (tabulated 10 000)
    and Ar I 714.70 (tabulated 1 000): a 714.70 line missing where 706.72 is
    50× the detection limit is predicted at 5× the limit, z = −log10(5)/0.8
    = −0.87, probability of not seeing it 0.19: a weak point against Ar.

``absorption`` (stellar/solar spectra, absorption cells; σ = 0.5 dex)
    Curve of growth. Lines are ranked by the weak-line strength
    log(gf) − θ·χ (θ = 5040/T, χ the lower-level energy in eV; the
    Boltzmann factor at the working temperature), normalised so the
    strongest line of the species in range has 1. Depth or equivalent width
    grows linearly while weak, and as the square root of the logarithm once
    saturated: with x = S / S_sat, W = x for x ≤ 1, W = √(1 + 2 ln x) beyond
    (continuous with slope 1 at x = 1). S_sat = 10^-1.5 of the species'
    strongest line (tuned on the ASTM G173 spectrum of the tune set).
    *Worked example*: Na I D2 (log gf 0.11) and D1 (−0.19), χ = 0: weak-line
    ratio 10^-0.30 = 0.50; both far beyond S_sat, so W = √(1 + 2 ln 31.6) =
    2.8 and √(1 + 2 ln 15.8) = 2.5: predicted depth ratio 0.90, as seen in
    the Sun (near-equal D lines).

``x-ray`` (XRF / EDS; σ = 0.2 dex)
    Relative intensities within the initial vacancy level (Elam), weighted
    per sub-shell (:mod:`workbench.matching.reference`); no temperature.
    *Worked example*: Cu Kα1 (100) + Kα2 (51) form one resolvable group at
    silicon-drift resolution (predicted 151), Kβ1 (17) a second one.

``auto``: absorption for absorption spectra, x-ray on an energy axis; for
emission the engine runs the first evidence pass under both ``lte-plasma``
and ``discharge-lamp`` and keeps the one under which the spectrum is better
explained: the larger sum over species of their positive net evidence
(decades, :mod:`workbench.matching.scoring`), counted over the species with
atomic data in range only (a species with tabulated intensities only is
predicted alike by both; :func:`workbench.matching.passes.choose_model`);
``lte-plasma`` on a tie and for
peak lists without intensities. The report says
which model was used and why.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.errors import ValueRangeError
from workbench.matching.expected import atomic_log_strength
from workbench.matching.reference import ReferenceIndex

__all__ = ["SOURCE_MODELS", "SourceModel", "get_model", "model_sigma", "model_strengths"]


@dataclass(frozen=True)
class SourceModel:
    """A source model: its name, the uncertainty of its prediction, a one-line description."""

    name: str
    sigma_dex: float
    description: str


SOURCE_MODELS: dict[str, SourceModel] = {
    "lte-plasma": SourceModel(
        "lte-plasma", 0.35, "Boltzmann at the working temperature (LIBS, spark, ICP)"
    ),
    "discharge-lamp": SourceModel(
        "discharge-lamp", 0.8, "tabulated lamp intensities, non-LTE (hollow cathode, pen lamp)"
    ),
    "absorption": SourceModel("absorption", 0.5, "curve of growth on log(gf) − θχ"),
    "x-ray": SourceModel("x-ray", 0.2, "Elam relative intensities per initial level"),
}

#: Onset of saturation on the curve of growth, relative to the species' strongest line.
ABSORPTION_SATURATION: float = 10**-1.5
#: Excitation temperature of the Boltzmann prior under ``discharge-lamp``:
#: sputtered cathode metals in hollow-cathode and glow discharges show
#: excitation temperatures of roughly 3000–5000 K (from memory); 4000 K was
#: chosen on the tune set (Goodman 1200M2–M5 Fe/Cu lamps).
LAMP_EXCITATION_K: float = 4000.0
#: Uncertainty (dex) of a line predicted under ``discharge-lamp`` from the
#: Boltzmann prior alone (no tabulated intensity): a weak prior, wider than
#: the tabulated lines' 0.8 dex (chosen on the tune set).
LAMP_PRIOR_SIGMA: float = 1.2
#: Lines with both kinds of strength needed to put one kind on the other's scale.
MIN_CALIBRATION_LINES: int = 3


def get_model(name: str) -> SourceModel:
    """The model of this name, or one clear error."""
    try:
        return SOURCE_MODELS[name]
    except KeyError:
        raise ValueRangeError(
            f"unknown source model {name!r}",
            "use auto, " + ", ".join(SOURCE_MODELS),
        ) from None


def _species_median(values: np.ndarray, species: np.ndarray, n_species: int) -> np.ndarray:
    """Median of finite ``values`` per species (NaN with fewer than MIN_CALIBRATION_LINES)."""
    out = np.full(n_species, np.nan)
    ok = np.isfinite(values)
    if not np.any(ok):
        return out
    sp = species[ok]
    v = values[ok]
    order = np.lexsort((v, sp))
    sp, v = sp[order], v[order]
    codes, starts, counts = np.unique(sp, return_index=True, return_counts=True)
    good = counts >= MIN_CALIBRATION_LINES
    mid_lo = starts + (counts - 1) // 2
    mid_hi = starts + counts // 2
    med = 0.5 * (v[mid_lo] + v[mid_hi])
    out[codes[good]] = med[good]
    return out


def _one_scale(
    primary: np.ndarray, secondary: np.ndarray, index: ReferenceIndex, in_range: np.ndarray
) -> np.ndarray:
    """One log-strength scale per species.

    Primary where known; secondary moved onto the primary scale by the
    species' median offset over lines with both (at least
    :data:`MIN_CALIBRATION_LINES`). Without that calibration, a species whose
    in-range lines carry only one kind uses that kind alone; with both kinds
    in range, the kind held by more in-range lines is the scale and the
    other lines are "strength unknown" (NaN). Never two scales at once.
    """
    both = np.isfinite(primary) & np.isfinite(secondary)
    offset = _species_median(
        np.where(both, primary - secondary, np.nan), index.species, index.n_species
    )
    moved = secondary + offset[index.species]
    out = np.where(np.isfinite(primary), primary, moved)
    n = index.n_species
    n_pri = np.bincount(index.species[in_range & np.isfinite(primary)], minlength=n)
    n_sec = np.bincount(index.species[in_range & np.isfinite(secondary)], minlength=n)
    uncal = ~np.isfinite(offset)
    use_sec = uncal & (n_sec > n_pri)
    sp = index.species
    out = np.where(use_sec[sp], secondary, out)
    return out


def _normalise(log_s: np.ndarray, index: ReferenceIndex, in_range: np.ndarray) -> np.ndarray:
    v = np.where(in_range & np.isfinite(log_s), log_s, -np.inf)
    gmax = np.full(index.n_species, -np.inf)
    np.maximum.at(gmax, index.species, v)
    with np.errstate(invalid="ignore", over="ignore"):
        out = np.exp(log_s - gmax[index.species])
    return np.where(np.isfinite(out), out, np.nan)


def model_strengths(
    index: ReferenceIndex, model: str, temperature_K: float, in_range: np.ndarray
) -> np.ndarray:
    """Predicted relative strength per reference line under ``model`` (NaN = unknown).

    Parameters
    ----------
    index : ReferenceIndex
        Reference lines.
    model : str
        One of :data:`SOURCE_MODELS`.
    temperature_K : float
        Working temperature (Boltzmann factor; θ = 5040/T for absorption).
    in_range : numpy.ndarray of bool
        Lines inside the observed range; the normalisation uses only these.

    Returns
    -------
    numpy.ndarray
        Strength in (0, 1] per line, one scale per species.
    """
    get_model(model)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_src = np.log(np.where(index.rel_intensity > 0, index.rel_intensity, np.nan))
    if model == "x-ray" or index.axis == "energy":
        with np.errstate(divide="ignore", invalid="ignore"):
            log_x = np.log(index.rel_intensity * index.subshell_weight)
        return _normalise(log_x, index, in_range)
    if model == "absorption":
        log_w = atomic_log_strength(index, temperature_K, "absorption")
        log_w = _one_scale(log_w, log_src, index, in_range)
        s = _normalise(log_w, index, in_range)
        x = s / ABSORPTION_SATURATION
        with np.errstate(invalid="ignore", divide="ignore"):
            w = np.where(x <= 1.0, x, np.sqrt(1.0 + 2.0 * np.log(np.maximum(x, 1.0))))
        return _normalise(np.log(w), index, in_range)
    if model == "discharge-lamp":
        temperature_K = LAMP_EXCITATION_K
    log_atomic = atomic_log_strength(index, temperature_K, "emission")
    if model == "discharge-lamp":
        log_e = _one_scale(log_src, log_atomic, index, in_range)
    else:
        log_e = _one_scale(log_atomic, log_src, index, in_range)
    return _normalise(log_e, index, in_range)


def model_sigma(index: ReferenceIndex, model: str) -> np.ndarray:
    """Uncertainty (dex) of each line's predicted log-intensity under ``model``.

    The model's σ for every line, except under ``discharge-lamp``, where a
    line without a tabulated intensity (predicted from the Boltzmann prior)
    has :data:`LAMP_PRIOR_SIGMA`.
    """
    sigma = np.full(index.n_lines, get_model(model).sigma_dex)
    if model == "discharge-lamp":
        tabulated = np.isfinite(index.rel_intensity) & (index.rel_intensity > 0)
        sigma = np.where(tabulated, sigma, LAMP_PRIOR_SIGMA)
    return sigma
