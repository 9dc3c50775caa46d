"""X-ray fluorescence physics: instrument, detector, excitation, artefacts, forward model.

This package knows what an XRF analyst knows about a spectrum before any
element is called: the detector's resolution at each energy, which lines the
tube can excite and the beam path lets through, and which peaks are
artefacts (tube scatter, escape, pile-up sums, argon in air). The matching
engine calls :func:`workbench.xray.prepare.prepare_energy_peaks` on an energy
axis; faces call the small wording helpers in :mod:`workbench.xray.wording`.
Atomic data come from xraylib 4 (imported inside functions only).
"""

from workbench.xray.instrument import (
    DEFAULT_INSTRUMENT,
    Instrument,
    load_instrument,
    save_instrument,
)

__all__ = ["DEFAULT_INSTRUMENT", "Instrument", "load_instrument", "save_instrument"]
