"""Forward-model test cases (invented compositions) and the chain spectrum → report.

Compositions are invented but typical (mass fractions; common practice, no
source): they exercise the X-ray physics, not any real object.
"""

from __future__ import annotations

import warnings
from dataclasses import replace

import numpy as np
from scipy.signal._peak_finding_utils import PeakPropertyWarning

from workbench.datamodel import Spectrum
from workbench.matching import MatchParameters, match_peaks
from workbench.peaks import find_peaks
from workbench.refdata import load_set
from workbench.xray.detector import snip_iterations_for
from workbench.xray.forward import ForwardSpectrum, Layer, forward_model
from workbench.xray.instrument import Instrument

#: Organic binder / fibre: carbon, hydrogen, oxygen (mass fractions).
_ORGANIC = {"C": 0.6, "H": 0.07, "O": 0.33}

CASES: dict[str, list[Layer]] = {
    "lead_white_on_chalk": [
        Layer({"Pb": 0.78, "C": 0.06, "O": 0.16}, 6.0, 3.0, "lead white"),
        Layer({"Ca": 0.40, "C": 0.12, "O": 0.48}, 2.0, None, "chalk ground"),
    ],
    "leaded_brass": [Layer({"Cu": 0.60, "Zn": 0.37, "Pb": 0.03}, 8.5, None, "leaded brass")],
    "soil": [
        Layer(
            {
                "O": 0.48,
                "Si": 0.30,
                "Al": 0.07,
                "Fe": 0.04,
                "Ca": 0.03,
                "K": 0.02,
                "Ti": 0.005,
                "Mn": 0.0008,
                "Zn": 0.0001,
                "Rb": 0.0001,
                "Sr": 0.0002,
                "Zr": 0.0003,
                "C": 0.0535,
            },
            1.6,
            None,
            "soil",
        )
    ],
    "gsr_on_cotton": [
        Layer(
            {"Pb": 0.30, "Ba": 0.15, "Sb": 0.08, "O": 0.12, "S": 0.05, "C": 0.30}, 3.0, 2.0, "GSR"
        ),
        Layer(_ORGANIC, 1.5, None, "cotton"),
    ],
    "gsr_on_ti_fabric": [
        Layer(
            {"Pb": 0.30, "Ba": 0.15, "Sb": 0.08, "O": 0.12, "S": 0.05, "C": 0.30}, 3.0, 2.0, "GSR"
        ),
        Layer({"C": 0.62, "H": 0.05, "O": 0.32, "Ti": 0.01}, 1.4, None, "TiO2-delustred polyester"),
    ],
}

#: Two detector resolutions (FWHM at Mn Kα): a good silicon-drift detector
#: and an older or fast-shaped one (common practice, no source).
RESOLUTIONS_EV = (130.0, 180.0)
SEEDS = (20261202, 7, 11)


def instrument(fwhm: float) -> Instrument:
    """The test instrument: the defaults with this resolution."""
    return replace(Instrument(name="test unit"), fwhm_MnKa_eV=fwhm)


def run_case(
    name: str,
    fwhm: float,
    seed: int,
    scale_offset_eV: float = 0.0,
    scale_gain: float = 1.0,
    apply_calibration: bool | None = None,
) -> tuple[ForwardSpectrum, dict]:
    """Model the case, find peaks, match on the shipped xray set; (model, report).

    ``scale_offset_eV`` and ``scale_gain`` read the energy axis off as a
    drifted unit would show it: shown = scale_gain · true + scale_offset_eV
    (the counts stay in their channels; defaults: the true axis).
    ``apply_calibration`` is passed to :class:`MatchParameters`.
    """
    inst = instrument(fwhm)
    fs = forward_model(CASES[name], inst, rng=np.random.default_rng(seed))
    keep = fs.energy_eV >= 1000.0  # below ~1 keV a handheld unit shows only noise
    shown_eV = scale_gain * fs.energy_eV[keep] + scale_offset_eV
    spec = Spectrum(shown_eV, fs.counts[keep], "energy", None)
    with warnings.catch_warnings():
        # scipy warns "some peaks have a width of 0" on single-channel Poisson
        # spikes (a peaks-module issue reported to the lead); not an XRF matter.
        warnings.simplefilter("ignore", PeakPropertyWarning)
        peaks = find_peaks(spec, snip_iterations=snip_iterations_for(inst, 10.0))
    peaks.extra.setdefault("x_range", (float(spec.x[0]), float(spec.x[-1])))
    peaks.extra["spectrum"] = (spec.x, spec.y)  # as workbench.matching.analyse passes it
    params = MatchParameters(instrument=inst, apply_calibration=apply_calibration)
    rep = match_peaks(peaks, [load_set("xray")], params).report()
    return fs, rep
