"""Peak finding: baseline/continuum removal, robust noise, detection and sub-pixel centres.

:func:`find_peaks` turns a :class:`~workbench.datamodel.Spectrum` into a
:class:`~workbench.datamodel.PeakList` (emission maxima or absorption dips),
recording its :class:`PeakFindingParameters`. Baselines by SNIP
(Ryan et al. 1988) or asymmetric least squares (Eilers & Boelens 2005);
noise by the MAD of first differences; centres by three-point Gaussian
interpolation (Caruana et al. 1986).
"""

from workbench.peaks.baseline import als_baseline, estimate_baseline, snip_baseline
from workbench.peaks.detect import PeakFindingParameters, find_peaks, refine_centres
from workbench.peaks.noise import MAD_TO_SIGMA, noise_sigma

__all__ = [
    "MAD_TO_SIGMA",
    "PeakFindingParameters",
    "als_baseline",
    "estimate_baseline",
    "find_peaks",
    "noise_sigma",
    "refine_centres",
    "snip_baseline",
]
