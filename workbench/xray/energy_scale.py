"""Energy-scale check of an XRF spectrum: offset and gain from unambiguous strong lines.

The model is ``E_true = offset + gain · E_shown``, fitted by weighted least
squares to pairs (observed centre, reference energy). Each pair's weight is
1/σ² with σ the centroid uncertainty FWHM / (2.355 · √N) (N counts in the
peak, for a Gaussian) plus a 2 eV floor for residual blend and tabulation
error (common practice, no source). With one pair only the offset is fitted.

The correction is *significant* when, somewhere in the span of the pairs,
it exceeds both three times its own standard uncertainty and
:data:`MIN_SIGNIFICANT_EV`; only then is it applied.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

__all__ = ["MIN_SIGNIFICANT_EV", "EnergyScale", "fit_energy_scale"]

#: Corrections smaller than this are never applied (some 15 % of a typical
#: detector FWHM; common practice, no source).
MIN_SIGNIFICANT_EV: float = 20.0


@dataclass(frozen=True)
class EnergyScale:
    """Fitted energy-scale correction (``E_true = offset_eV + gain · E_shown``)."""

    n_pairs: int
    offset_eV: float
    offset_uncertainty_eV: float
    gain: float
    gain_uncertainty: float
    max_correction_eV: float
    significant: bool
    applied: bool = False
    lines: tuple[str, ...] = ()

    def correct(self, energy_eV: np.ndarray) -> np.ndarray:
        """Corrected energies."""
        return self.offset_eV + self.gain * np.asarray(energy_eV, dtype=np.float64)

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form."""
        d = asdict(self)
        d["lines"] = list(self.lines)
        return d


def fit_energy_scale(
    observed_eV: np.ndarray,
    reference_eV: np.ndarray,
    sigma_eV: np.ndarray,
    lines: tuple[str, ...] = (),
) -> EnergyScale:
    """Fit offset (and gain, with two or more pairs spanning ≥ 1 keV).

    Parameters
    ----------
    observed_eV, reference_eV : numpy.ndarray
        Pairs of observed centres and reference energies.
    sigma_eV : numpy.ndarray
        1σ uncertainty of each observed centre.
    lines : tuple of str
        Names of the lines used (recorded).

    Returns
    -------
    EnergyScale
    """
    x = np.asarray(observed_eV, dtype=np.float64)
    y = np.asarray(reference_eV, dtype=np.float64)
    s = np.asarray(sigma_eV, dtype=np.float64)
    n = int(x.size)
    if n == 0:
        return EnergyScale(0, 0.0, float("nan"), 1.0, float("nan"), 0.0, False, lines=lines)
    w = 1.0 / np.maximum(s, 1e-6) ** 2
    if n >= 2 and np.ptp(x) >= 1000.0:
        a = np.column_stack([np.ones(n), x])
        cov = np.linalg.inv(a.T @ (w[:, None] * a))
        beta = cov @ (a.T @ (w * y))
        resid = y - a @ beta
        # Inflate by the reduced χ² when the scatter exceeds the stated errors.
        if n > 2:
            chi2 = float(np.sum(w * resid**2) / (n - 2))
            cov = cov * max(chi2, 1.0)
        offset, gain = float(beta[0]), float(beta[1])
        grid = np.array([x.min(), x.max()])
        corr = offset + (gain - 1.0) * grid
        var = cov[0, 0] + 2 * grid * cov[0, 1] + grid**2 * cov[1, 1]
        sd = np.sqrt(np.maximum(var, 0.0))
        u_off, u_gain = float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))
    else:
        offset = float(np.sum(w * (y - x)) / np.sum(w))
        gain, u_gain = 1.0, 0.0
        u_off = float(1.0 / np.sqrt(np.sum(w)))
        corr = np.array([offset])
        sd = np.array([u_off])
    k = int(np.argmax(np.abs(corr)))
    max_corr = float(corr[k])
    significant = bool(abs(max_corr) > max(3.0 * sd[k], MIN_SIGNIFICANT_EV))
    return EnergyScale(n, offset, u_off, gain, u_gain, max_corr, significant, lines=lines)
