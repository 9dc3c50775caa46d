"""Engine settings: :class:`MatchParameters` and the limits the engine enforces.

Kept apart from :mod:`workbench.matching.engine` so that the evidence passes
(:mod:`workbench.matching.passes`) and the faces can use the settings
without importing the engine.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any, Literal

from workbench.errors import ValueRangeError
from workbench.matching.priors import prior_dex
from workbench.matching.sourcemodels import (
    get_model,
)
from workbench.matching.tolerance import ToleranceSpec

__all__ = [
    "BAND_WIDTH_FACTOR",
    "CALIBRATION_FRACTION",
    "MAX_CANDIDATE_PAIRS",
    "RARE_RADIOACTIVE",
    "MatchParameters",
]

#: Most (peak, reference line) pairs the candidate search may compare. About
#: 100 bytes per pair in the evidence pass: 5 million is ~0.5 GB and a few
#: seconds; 10,000 peaks against the whole optical set at λ/5000 give ~0.4
#: million. A wider window is refused at once (common practice, no source).
MAX_CANDIDATE_PAIRS: int = 5_000_000
#: In an absorption spectrum, a dip wider than this many times the median
#: FWHM of the spectrum's dips is a band (molecular, e.g. telluric O2/H2O,
#: or a blend), not one atomic line: it is labelled and not used as evidence.
BAND_WIDTH_FACTOR: float = 3.0
#: A scale error is applied by default when it exceeds this part of the
#: median half-window (and 3 standard uncertainties).
CALIBRATION_FRACTION: float = 0.25

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
        A resolvable group must be at least this strong to compete for a peak.
    detection_snr : float
        Detection limit = this × the noise level (from the peaks' SNR).
    estimate_temperature : bool
        Estimate T by a Boltzmann plot when none is given (``lte-plasma``).
    apply_calibration : bool or None
        ``None`` (default): correct observed positions by the estimated scale
        error when it is significant (see module docstring); ``True``: always;
        ``False``: never.
    source_model : str
        ``"auto"`` or one of :data:`~workbench.matching.sourcemodels.SOURCE_MODELS`.
    abundance_prior : {"none", "crustal", "solar"}
        Prior odds from element abundances (:mod:`~workbench.matching.priors`).
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
    detection_snr: float = 3.0
    estimate_temperature: bool = True
    apply_calibration: bool | None = None
    electron_density_per_cm3: float | None = None
    share_ratio: float = 0.2
    max_ion: int | None = 2
    exclude_elements: tuple[str, ...] = RARE_RADIOACTIVE
    instrument: Any = None
    source_model: str = "auto"
    abundance_prior: str = "none"

    def __post_init__(self) -> None:
        if self.source_model != "auto":
            get_model(self.source_model)
        prior_dex(self.abundance_prior, "H")  # one clear error for an unknown prior
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
