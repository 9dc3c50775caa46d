"""The matching engine: observed lines + reference sets → element calls with evidence.

Flow of :func:`match_peaks`:

1. Tolerance per observed line (:mod:`~workbench.matching.tolerance`).
2. Reference lines in the observed range, expected strengths at the working
   temperature (:mod:`~workbench.matching.expected`).
3. Evidence pass 1, all species competing; pass 2, competition restricted
   to species with real support in pass 1 — "probable" or better, or
   "possible" with a chance probability ≤ 0.01 and no missing strong line
   (:mod:`~workbench.matching.evidence`).
4. Emission without a given temperature: a Boltzmann-plot estimate from the
   best-identified species; when it differs from the working value by more
   than 10 %, steps 2–3 are repeated once at the estimate.
5. Wavelength-scale check from unambiguous strong matches; applied (and
   steps 2–4 repeated on corrected positions) only when asked.
6. Peak assignment and interference warnings
   (:mod:`~workbench.matching.interference`).

Everything is deterministic: the same input and parameters give the same
result, and :func:`workbench.matching.report.result_json` the same bytes.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass, field, replace
from typing import Any, Literal

import numpy as np
import polars as pl

from workbench.datamodel import FWHM_COLUMN, PeakList
from workbench.errors import ValueRangeError
from workbench.matching.calibration import ScaleCheck, estimate_scale
from workbench.matching.evidence import EvidencePass, ObservedLines, gather_evidence
from workbench.matching.expected import expected_strengths
from workbench.matching.interference import (
    PeakAssignment,
    assign_peaks,
    interference_warnings,
)
from workbench.matching.reference import ReferenceIndex
from workbench.matching.temperature import TemperatureEstimate, estimate_temperature
from workbench.matching.tolerance import ToleranceSpec

__all__ = ["RARE_RADIOACTIVE", "MatchParameters", "MatchResult", "build_index", "match_peaks"]

#: Elements left out unless asked for by name: no stable isotope and no
#: place in ordinary casework samples (Tc, Pm, Po and heavier except Th and U).
#: Their many listed lines would otherwise compete for every peak
#: (common practice, no source).
RARE_RADIOACTIVE: tuple[str, ...] = (
    "Tc",
    "Pm",
    "Po",
    "At",
    "Rn",
    "Fr",
    "Ra",
    "Ac",
    "Pa",
    "Np",
    "Pu",
    "Am",
    "Cm",
    "Bk",
    "Cf",
    "Es",
    "Fm",
    "Md",
    "No",
    "Lr",
)


@dataclass(frozen=True)
class MatchParameters:
    """All settings of a match; recorded verbatim in every result.

    Attributes
    ----------
    tolerance : ToleranceSpec
        Match window.
    temperature_K : float or None
        Excitation temperature for expected intensities; ``None`` to start
        from ``default_temperature_K`` and estimate it from the data.
    default_temperature_K : float
        Starting temperature (10 000 K is typical of LIBS and spark plasmas a
        few µs after the pulse; common practice, no source).
    elements : tuple of str or None
        Restrict candidates to these element symbols.
    mode : {"emission", "absorption"}
        Line kind; must agree with the peak list.
    strong_fraction : float
        Lines at least this fraction of their species' strongest line in
        range count as strong.
    min_rel_intensity : float
        Lines weaker than this fraction are ignored entirely.
    competitor_min_rel : float
        A line must be at least this strong to compete for a peak.
    missing_factor : float
        A line is "missing" when predicted at ≥ this × the detection limit.
    detection_snr : float
        Detection limit = this × the noise level (from the peaks' SNR).
    estimate_temperature : bool
        Estimate T by a Boltzmann plot when none is given.
    apply_calibration : bool
        Correct observed positions by the estimated scale error.
    electron_density_per_cm3 : float or None
        For the McWhirter check; unknown when ``None``.
    share_ratio : float
        A second species explains a peak too when predicted at ≥ this × the best.
    max_ion : int or None
        Highest ion stage considered (2 = I and II); ``None`` for all stages.
    exclude_elements : tuple of str
        Elements left out (default :data:`RARE_RADIOACTIVE`); ignored for
        elements named in ``elements``.
    instrument : workbench.xray.Instrument or None
        XRF instrument for an energy axis (the documented default when ``None``).
    """

    tolerance: ToleranceSpec = field(default_factory=ToleranceSpec)
    temperature_K: float | None = None
    default_temperature_K: float = 10_000.0
    elements: tuple[str, ...] | None = None
    mode: Literal["emission", "absorption"] = "emission"
    strong_fraction: float = 0.1
    min_rel_intensity: float = 1e-3
    competitor_min_rel: float = 0.05
    missing_factor: float = 3.0
    detection_snr: float = 3.0
    estimate_temperature: bool = True
    apply_calibration: bool = False
    electron_density_per_cm3: float | None = None
    share_ratio: float = 0.2
    max_ion: int | None = 2
    exclude_elements: tuple[str, ...] = RARE_RADIOACTIVE
    instrument: Any = None

    def __post_init__(self) -> None:
        t = self.temperature_K
        if t is not None and not (500.0 <= t <= 100_000.0):
            raise ValueRangeError(
                f"temperature {t:g} K is outside 500–100000 K",
                "give the excitation temperature in kelvin (e.g. 9000)",
            )
        if self.mode not in ("emission", "absorption"):
            raise ValueRangeError(f"unknown mode {self.mode!r}", "use emission or absorption")
        for name in ("strong_fraction", "min_rel_intensity", "competitor_min_rel", "share_ratio"):
            v = getattr(self, name)
            if not 0.0 < v <= 1.0:
                raise ValueRangeError(f"{name} must be in (0, 1], got {v!r}", "check settings")

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly form."""
        d = asdict(self)
        d["tolerance"] = self.tolerance.to_dict()
        d["elements"] = list(self.elements) if self.elements else None
        d["exclude_elements"] = list(self.exclude_elements)
        return d


@dataclass
class MatchResult:
    """Everything the engine found; ``report()`` makes the schema-1 JSON record."""

    peaks: PeakList
    observed: ObservedLines
    index: ReferenceIndex
    evidence: EvidencePass
    assignments: list[PeakAssignment]
    warnings: list[dict[str, object]]
    temperature: TemperatureEstimate | None
    working_temperature_K: float
    scale: ScaleCheck
    parameters: MatchParameters
    lte: dict[str, object] | None = None
    xray: dict[str, Any] | None = None

    def report(self) -> dict[str, Any]:
        """The result as the versioned JSON-ready dictionary."""
        from workbench.matching.report import build_report

        return build_report(self)


_INDEX_CACHE: dict[tuple, ReferenceIndex] = {}


def build_index(
    sets: Sequence[Any],
    axis: str,
    medium: str | None,
    elements: Sequence[str] | None = None,
    max_ion: int | None = 2,
    exclude: Sequence[str] = (),
) -> ReferenceIndex:
    """Reference index for these sets, cached by set ids, hashes and the other arguments."""
    els = tuple(sorted(elements)) if elements else None
    exc = tuple(sorted(set(exclude) - set(els or ())))
    key = (tuple((s.id, s.sha256) for s in sets), axis, medium, els, max_ion, exc)
    index = _INDEX_CACHE.get(key)
    if index is None:
        index = ReferenceIndex.from_sets(
            list(sets), axis, medium, els, max_ion=max_ion, exclude=exc
        )
        if len(_INDEX_CACHE) >= 16:
            _INDEX_CACHE.pop(next(iter(_INDEX_CACHE)))
        _INDEX_CACHE[key] = index
    return index


def _observed(peaks: PeakList, params: MatchParameters) -> ObservedLines:
    x = peaks.positions
    if x.size == 0:
        raise ValueRangeError("the peak list is empty", "give at least one observed line")
    if not np.all(np.isfinite(x)) or np.any(x <= 0):
        bad = int(np.flatnonzero(~np.isfinite(x) | (x <= 0))[0]) + 1
        raise ValueRangeError(
            f"peak {bad} has a non-positive or non-finite position",
            "remove or correct that row",
        )
    inten = peaks.intensities
    t = peaks.table
    fwhm_col = FWHM_COLUMN[peaks.axis]
    fwhm = (
        t[fwhm_col].cast(pl.Float64).fill_null(np.nan).to_numpy() if fwhm_col in t.columns else None
    )
    spec = params.tolerance.resolve(peaks.axis, fwhm)
    tol = spec.half_window(x, fwhm)
    sat = (
        t["saturated"].fill_null(False).to_numpy().astype(bool)
        if "saturated" in t.columns
        else np.zeros(x.size, dtype=bool)
    )
    dl: float | None = None
    if np.any(np.isfinite(inten)):
        if "snr" in t.columns:
            snr = t["snr"].cast(pl.Float64).fill_null(np.nan).to_numpy()
            with np.errstate(divide="ignore", invalid="ignore"):
                noise = inten / snr
            noise = noise[np.isfinite(noise) & (noise > 0)]
            if noise.size:
                dl = params.detection_snr * float(np.median(noise))
        if dl is None:
            pos_i = inten[np.isfinite(inten) & (inten > 0)]
            dl = float(pos_i.min()) if pos_i.size else None
    order_ok = np.all(np.diff(x) >= 0)
    if not order_ok:
        raise ValueRangeError(
            "peak positions are not sorted",
            "sort the peak list by position (readers do this; a hand-built list must too)",
        )
    return ObservedLines(
        position=x, intensity=inten, half_window=tol, saturated=sat, detection_limit=dl
    )


def _run_passes(
    obs: ObservedLines,
    index: ReferenceIndex,
    params: MatchParameters,
    temperature_K: float,
    in_range: np.ndarray,
) -> EvidencePass:
    strengths = expected_strengths(index, temperature_K, params.mode, in_range)
    kw = dict(
        strong_fraction=params.strong_fraction,
        min_rel_intensity=params.min_rel_intensity,
        competitor_min_rel=params.competitor_min_rel,
        missing_factor=params.missing_factor,
    )
    first = gather_evidence(obs, index, strengths, in_range, **kw)
    # Species that may compete for a peak in the second pass: those with real
    # support, not every species that happens to have one line in some window
    # (in a dense line list many do, and would make every line "shared").
    plausible = {
        c
        for c, ev in first.evidence.items()
        if ev.level >= 2
        or (ev.level >= 1 and ev.chance_probability <= 0.01 and not ev.missing_strong)
    }
    return gather_evidence(obs, index, strengths, in_range, plausible=plausible, **kw)


def _scale_pairs(
    obs: ObservedLines, ev_pass: EvidencePass, index: ReferenceIndex, strong_fraction: float
) -> tuple[np.ndarray, np.ndarray]:
    o, r, used = [], [], set()
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label):
        if ev.level < 2:
            continue
        unique = set(ev.unique_lines)
        for line, peak in zip(ev.found_lines, ev.found_peaks, strict=True):
            if line in unique and peak not in used and ev_pass.strengths[line] >= strong_fraction:
                used.add(peak)
                o.append(obs.position[peak])
                r.append(index.position[line])
    return np.array(o), np.array(r)


def match_peaks(
    peaks: PeakList, sets: Sequence[Any], params: MatchParameters | None = None
) -> MatchResult:
    """Match observed lines against reference sets.

    Parameters
    ----------
    peaks : PeakList
        Observed lines (sorted by position).
    sets : sequence of ReferenceSet
        Reference sets on the same axis as the peaks.
    params : MatchParameters, optional
        Settings; defaults when omitted.

    Returns
    -------
    MatchResult
        Evidence, verdicts, assignments and warnings; ``.report()`` gives the
        versioned JSON-ready dictionary.
    """
    params = params or MatchParameters()
    if peaks.mode != params.mode:
        raise ValueRangeError(
            f"the peak list holds {peaks.mode} lines but the match was asked in {params.mode} mode",
            f"use --mode {peaks.mode}, or find the peaks again in {params.mode} mode",
        )
    index = build_index(
        sets, peaks.axis, peaks.medium, params.elements, params.max_ion, params.exclude_elements
    )
    xray = None
    if peaks.axis == "energy" and not peaks.extra.get("xray_prepared"):
        # X-ray physics (workbench.xray): artefact peaks out, detector-resolution
        # widths in, energy scale checked; unexcitable lines dropped below.
        from workbench.xray.prepare import prepare_energy_peaks

        ref_species = np.asarray(index.species_names, dtype=object)[index.species]
        peaks, xray = prepare_energy_peaks(
            peaks,
            params.instrument,
            (ref_species, index.position, index.rel_intensity * index.subshell_weight),
        )
    obs = _observed(peaks, params)
    x_range = peaks.extra.get("x_range") if isinstance(peaks.extra, dict) else None
    if x_range:
        lo, hi = float(x_range[0]), float(x_range[1])
    else:
        lo = float(np.min(obs.position - obs.half_window))
        hi = float(np.max(obs.position + obs.half_window))
    in_range = (index.position >= lo) & (index.position <= hi)
    if xray is not None:
        el_line = np.asarray(index.species_element, dtype=object)[index.species]
        in_range &= xray.reference_mask(el_line, index.transition, index.position)

    working_T = params.temperature_K or (
        params.default_temperature_K if params.mode == "emission" else 5800.0
    )
    ev_pass = _run_passes(obs, index, params, working_T, in_range)
    temperature: TemperatureEstimate | None = None
    if params.mode == "emission" and params.temperature_K is None and params.estimate_temperature:
        temperature = estimate_temperature(obs, index, ev_pass)
        t_est = temperature.temperature_K
        if (
            t_est is not None
            and 2000.0 <= t_est <= 50_000.0
            and abs(t_est - working_T) > 0.1 * working_T
        ):
            working_T = float(t_est)
            ev_pass = _run_passes(obs, index, params, working_T, in_range)

    unit = "nm" if peaks.axis == "wavelength" else "eV"
    o, r = _scale_pairs(obs, ev_pass, index, params.strong_fraction)
    scale = estimate_scale(o, r, unit, applied=False)
    if params.apply_calibration and scale.shift is not None:
        corrected = scale.correct(obs.position)
        new_table = peaks.table.with_columns(pl.Series(peaks.position_column, corrected))
        new_peaks = PeakList(
            new_table, peaks.axis, peaks.medium, peaks.source, peaks.mode, dict(peaks.extra)
        )
        inner = match_peaks(new_peaks, sets, replace(params, apply_calibration=False))
        inner.scale = ScaleCheck(
            scale.n_pairs,
            scale.shift,
            scale.shift_uncertainty,
            scale.stretch,
            scale.stretch_interval,
            scale.centre,
            True,
            scale.message + " (applied)",
        )
        inner.peaks = peaks
        inner.xray = xray.to_dict() | {"warnings": xray.warnings} if xray else inner.xray
        return inner

    assignments = assign_peaks(obs, ev_pass, params.share_ratio)
    warnings = interference_warnings(
        obs, index, ev_pass, assignments, strong_fraction=params.strong_fraction
    )
    lte = None
    if temperature is not None and temperature.temperature_K is not None:
        lte = _lte_check(temperature, params)
    return MatchResult(
        peaks=peaks,
        observed=obs,
        index=index,
        evidence=ev_pass,
        assignments=assignments,
        warnings=warnings,
        temperature=temperature,
        working_temperature_K=working_T,
        scale=scale,
        parameters=params,
        lte=lte,
        xray=xray.to_dict() | {"warnings": xray.warnings} if xray else None,
    )


def _lte_check(temperature: TemperatureEstimate, params: MatchParameters) -> dict[str, object]:
    from workbench.physics.lte import check_mcwhirter

    # The largest gap relevant to the Boltzmann plot is bounded by the span of
    # upper-level energies used; it is the conservative choice.
    delta = float(temperature.energy_span_eV or 0.0)
    check = check_mcwhirter(temperature.temperature_K, params.electron_density_per_cm3, delta)
    return {
        "criterion": "McWhirter",
        "delta_E_eV": delta,
        "required_electron_density_per_cm3": float(check.required_per_cm3),
        "given_electron_density_per_cm3": params.electron_density_per_cm3,
        "satisfied": check.satisfied,
        "message": check.message,
    }
