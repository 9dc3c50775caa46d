"""X-ray fluorescence physics: instrument, detector, excitation, artefacts, forward model.

This package knows what an XRF analyst knows about a spectrum before any
element is called: the detector's resolution at each energy, which lines the
tube can excite and the beam path lets through, and which peaks are
artefacts (tube scatter, escape, pile-up sums, argon in air). The matching
engine calls :func:`prepare_energy_peaks` on an energy axis; faces call the
wording helpers (:func:`format_energy_eV`, :func:`family_label`, …); maps and
demos call :func:`simulate_spectrum`; the reference index takes its x-ray
line pattern from :func:`line_weights` and :func:`supplement_lines`. Atomic data come from xraylib 4
(imported inside functions only, so importing this package is cheap).
"""

from workbench.xray.artefacts import Artefact, label_peaks, predict_artefacts
from workbench.xray.detector import detector_efficiency, escape_fraction, fwhm_eV
from workbench.xray.energy_scale import EnergyScale, fit_energy_scale
from workbench.xray.excitation import edge_energy_eV, excitable, family_ratio, measurable
from workbench.xray.forward import (
    ForwardSpectrum,
    Layer,
    forward_model,
    line_yields,
    simulate_spectrum,
)
from workbench.xray.instrument import (
    DEFAULT_INSTRUMENT,
    Instrument,
    load_instrument,
    save_instrument,
)
from workbench.xray.lines import line_weights, supplement_lines
from workbench.xray.overlap import OverlapDecision, decide_overlap, decide_overlap_spectrum
from workbench.xray.prepare import XrayPreparation, prepare_energy_peaks
from workbench.xray.wording import (
    artefact_kind_label,
    artefact_lines,
    family_label,
    format_energy_eV,
    instrument_line,
    overlap_text,
    xrf_message,
)

__all__ = [
    "DEFAULT_INSTRUMENT",
    "Artefact",
    "EnergyScale",
    "ForwardSpectrum",
    "Instrument",
    "Layer",
    "OverlapDecision",
    "XrayPreparation",
    "artefact_kind_label",
    "artefact_lines",
    "decide_overlap",
    "decide_overlap_spectrum",
    "detector_efficiency",
    "edge_energy_eV",
    "escape_fraction",
    "excitable",
    "family_label",
    "family_ratio",
    "fit_energy_scale",
    "format_energy_eV",
    "forward_model",
    "fwhm_eV",
    "instrument_line",
    "label_peaks",
    "line_weights",
    "line_yields",
    "load_instrument",
    "measurable",
    "overlap_text",
    "predict_artefacts",
    "prepare_energy_peaks",
    "save_instrument",
    "simulate_spectrum",
    "supplement_lines",
    "xrf_message",
]
