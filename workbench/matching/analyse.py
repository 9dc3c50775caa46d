"""One call from input bytes to a result: read, find peaks if needed, match, report.

This is what the CLI (``workbench match``), the case store's ``analyse`` and
the app all call, so that every face gives the same answer for the same input.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from workbench.datamodel import PeakList, Spectrum
from workbench.matching.engine import MatchParameters, MatchResult, match_peaks
from workbench.matching.report import result_json

__all__ = [
    "DEFAULT_SETS",
    "AnalysisOutcome",
    "analyse_input",
    "analyse_peaks",
    "analyse_spectrum",
    "peaks_from_spectrum",
]

#: Reference sets used when none are chosen, by axis.
DEFAULT_SETS: dict[str, tuple[str, ...]] = {"wavelength": ("optical",), "energy": ("xray",)}


@dataclass
class AnalysisOutcome:
    """Result of :func:`analyse_input`.

    Attributes
    ----------
    report : dict
        The schema-1 result record.
    json_bytes : bytes
        Its canonical JSON (what is stored and signed).
    peaks : PeakList
        The observed lines that were matched.
    spectrum : Spectrum or None
        The raw spectrum, when the input was one.
    result : MatchResult
        The engine's full result (for plots).
    """

    report: dict[str, Any]
    json_bytes: bytes
    peaks: PeakList
    spectrum: Spectrum | None
    result: MatchResult


def analyse_peaks(
    peaks: PeakList,
    set_ids: Sequence[str] | None = None,
    params: MatchParameters | None = None,
    *,
    spectrum: Spectrum | None = None,
    lab_dir: Path | None = None,
) -> AnalysisOutcome:
    """Match an already-read peak list against the named reference sets."""
    from workbench.refdata import load_set

    params = params or MatchParameters(mode=peaks.mode)
    ids = list(set_ids) if set_ids else list(DEFAULT_SETS[peaks.axis])
    sets = [load_set(i, lab_dir=lab_dir) if lab_dir else load_set(i) for i in ids]
    result = match_peaks(peaks, sets, params)
    report = result.report()
    return AnalysisOutcome(report, result_json(report), peaks, spectrum, result)


def analyse_input(
    source: bytes | str | os.PathLike[str],
    *,
    name: str | None = None,
    set_ids: Sequence[str] | None = None,
    params: MatchParameters | None = None,
    unit: str | None = None,
    medium: str | None = None,
    kind: str | None = None,
    peak_options: dict[str, Any] | None = None,
    lab_dir: Path | None = None,
    columns: dict[str, str] | None = None,
    block: int | str | None = None,
) -> AnalysisOutcome:
    """Read an input (peak list or raw spectrum), find peaks if needed, and match.

    Parameters
    ----------
    source : bytes, str or path
        File path, raw bytes, or pasted text.
    name : str, optional
        Display name of the input (defaults to the file name).
    set_ids : sequence of str, optional
        Reference set ids; the axis default (``optical`` / ``xray``) when omitted.
    params : MatchParameters, optional
        Engine settings (its ``mode`` also drives peak finding).
    unit, medium : str, optional
        Override what the file states.
    kind : {"peak_list", "spectrum"}, optional
        Force how the file is read.
    peak_options : dict, optional
        Extra keyword arguments for :func:`workbench.peaks.find_peaks`.
    lab_dir : pathlib.Path, optional
        Directory of lab reference sets.
    columns : dict, optional
        Explicit column choices ``{role: header}`` for a table (see
        :func:`workbench.io.read_any`).
    block : int or str, optional
        The JCAMP-DX block or workbook sheet to read (see
        :func:`workbench.io.read_any`); the first holding data by default.

    Returns
    -------
    AnalysisOutcome
    """
    from workbench.io import read_any

    params = params or MatchParameters()
    kw: dict[str, Any] = {
        "name": name,
        "unit": unit,
        "medium": medium,
        "columns": columns,
        "block": block,
    }
    if kind:
        kw["kind"] = kind
    data = read_any(source, **kw)
    spectrum: Spectrum | None = None
    if isinstance(data, Spectrum):
        spectrum = data
        peaks = peaks_from_spectrum(data, params.mode, peak_options, params.instrument)
    else:
        peaks = data
        if peaks.mode != params.mode:
            peaks = PeakList(
                peaks.table, peaks.axis, peaks.medium, peaks.source, params.mode, dict(peaks.extra)
            )
    outcome = analyse_peaks(peaks, set_ids, params, spectrum=spectrum, lab_dir=lab_dir)
    return outcome


def _peak_options(
    spectrum: Spectrum, instrument: Any, peak_options: dict[str, Any] | None
) -> dict[str, Any]:
    """Peak-finding options, with the SNIP window matched to the detector on an energy axis.

    The default SNIP window (40 samples) is far wider than an XRF peak: it
    clips the curved continuum (scatter, pile-up) and leaves Poisson bumps
    standing as peaks. On an energy axis the window follows the detector's
    FWHM (:func:`workbench.xray.detector.snip_iterations_for`) unless the
    caller set one.
    """
    opts = dict(peak_options or {})
    if spectrum.axis == "energy" and "snip_iterations" not in opts and spectrum.x.size >= 2:
        import numpy as np

        from workbench.xray import DEFAULT_INSTRUMENT
        from workbench.xray.detector import snip_iterations_for

        channel_eV = float(np.median(np.diff(np.asarray(spectrum.x, dtype=float))))
        if channel_eV > 0:
            inst = instrument or DEFAULT_INSTRUMENT
            opts["snip_iterations"] = snip_iterations_for(inst, channel_eV)
    return opts


def peaks_from_spectrum(
    spectrum: Spectrum,
    mode: str = "emission",
    peak_options: dict[str, Any] | None = None,
    instrument: Any = None,
) -> PeakList:
    """Peak finding as every face does it, with what the engine needs from the spectrum.

    On an energy axis the SNIP window follows the detector (``instrument``,
    the documented default when ``None``) unless ``peak_options`` sets one.

    The spectrum's span, less the gaps in its sampling, bounds where lines
    could have been seen (and so where a line can be "missing"); the local
    sample spacing at each peak floors its width at two samples (a line
    cannot be narrower than the sampling allows, and peak finders
    underestimate widths of undersampled lines).
    """
    import numpy as np

    from workbench.peaks import find_peaks
    from workbench.peaks.sampling import sampling_gaps

    peaks = find_peaks(spectrum, mode=mode, **_peak_options(spectrum, instrument, peak_options))
    peaks.extra.setdefault("x_range", (float(spectrum.x[0]), float(spectrum.x[-1])))
    # Where the sampling skips part of the axis (chip gaps, removed samples)
    # no line could have been seen either (workbench.peaks.sampling).
    peaks.extra.setdefault("x_gaps", sampling_gaps(np.asarray(spectrum.x, dtype=float)))
    if spectrum.axis == "energy":
        # X-ray: overlaps are settled by a fit to the spectrum itself
        # (workbench.xray.prepare keeps it off the peak list).
        peaks.extra["spectrum"] = (np.asarray(spectrum.x), np.asarray(spectrum.y))
    if spectrum.x.size >= 2:
        spacing = np.gradient(np.asarray(spectrum.x, dtype=float))
        peaks.extra["sample_spacing"] = np.interp(peaks.positions, spectrum.x, spacing)
    base = peaks.extra.get("baseline")
    sigma = peaks.extra.get("noise_sigma")
    if (
        mode == "absorption"
        and isinstance(base, np.ndarray)
        and sigma
        and peaks.extra.get("intensity_unit") != "fraction of continuum"
        and peaks.table.height
    ):
        # The peak finder keeps raw depths when the continuum is not positive
        # everywhere (e.g. sunlight below 300 nm); depths are made fractions of
        # the local continuum where it is positive, so that every line is
        # predicted on one scale (unknown where the continuum is not positive).
        import polars as pl

        b = np.interp(peaks.positions, spectrum.x, base)
        depth = peaks.intensities
        frac = np.where(b > 0, depth / np.where(b > 0, b, 1.0), np.nan)
        table = peaks.table.with_columns(pl.Series("intensity", frac))
        peaks = PeakList(
            table, peaks.axis, peaks.medium, peaks.source, peaks.mode, dict(peaks.extra)
        )
        peaks.extra["intensity_unit"] = "fraction of continuum"
    if (
        mode == "absorption"
        and peaks.extra.get("intensity_unit") == "fraction of continuum"
        and isinstance(base, np.ndarray)
        and sigma
    ):
        # Depths are fractions of the continuum, so the noise in depth units is
        # σ / continuum: where the continuum is faint (e.g. below 320 nm in
        # ground-level sunlight) no dip could have been seen.
        with np.errstate(divide="ignore"):
            curve = np.where(base > 0, float(sigma) / base, np.inf)
        peaks.extra["noise_curve"] = (np.asarray(spectrum.x, dtype=float), curve)
    return peaks


def analyse_spectrum(
    spectrum: Spectrum,
    set_ids: Sequence[str] | None = None,
    params: MatchParameters | None = None,
    *,
    peak_options: dict[str, Any] | None = None,
    lab_dir: Path | None = None,
) -> AnalysisOutcome:
    """Find peaks in an already-read spectrum and match them (as :func:`analyse_input` does)."""
    params = params or MatchParameters()
    peaks = peaks_from_spectrum(spectrum, params.mode, peak_options, params.instrument)
    return analyse_peaks(peaks, set_ids, params, spectrum=spectrum, lab_dir=lab_dir)
