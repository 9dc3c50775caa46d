"""Energy-scale checks of an XRF spectrum: offset and gain from unambiguous lines.

The model is ``E_true = offset + gain · E_shown``, fitted by weighted least
squares to pairs (observed centre, reference energy). With one pair, or
pairs spanning less than 1 keV, only the offset is fitted.

Two checks use it.

*Before matching* (:func:`fit_energy_scale`, pairs from
``workbench.xray.scale_pairs``): strong peaks that exactly one line family
explains, the family confirmed by a second line. Each pair's weight is 1/σ²
with σ the centroid uncertainty FWHM / (2.355 · √N) (N counts in the peak,
for a Gaussian) plus a 2 eV floor for residual blend and tabulation error
(common practice, no source). Nothing has been decided yet, so chance
alignments must be guarded against and the pairs are few (often none: a
candidate family is "confirmed" by any peak near its second line, and a
peak with a second family's line under it is left out). The correction is
*significant* when, somewhere in the span of the pairs, it exceeds both
three times its own standard uncertainty and :data:`MIN_SIGNIFICANT_EV`;
only then is it applied. A 10–20 eV drift is within that pair tolerance
and stays unseen.

*After matching* (:func:`fit_matched_scale`, pairs from
``workbench.matching.xray_scale``): the families the engine called
probable or established, each pair the peak's measured centre against the
modelled maximum of the family's blend at the detector resolution (what the
evidence itself compares), weighted by the evidence's own position terms
without its calibration allowance. These pairs are trustworthy enough to
measure a drift of a few eV, but a wrong family called on a drifted scale
(one that fits the shifted lines better than the true family would) must
not pull the scale towards itself. So the fit is robust *by family*: a
family's pairs are kept or dropped together, the family whose pairs
disagree most (largest mean squared normalised residual) is dropped while
any pair lies beyond :data:`OUTLIER_SIGMAS` of the fit, and the result
stands only when what is left is consistent across two or more families,
or comes from one family with several lines, and holds more pairs than the
dropped families together (a scale is a majority reading, not one
family's). A gain is tried only with pairs from two or more families
spanning 1 keV or more (with one family, or two pairs, a gain would absorb
any disagreement and nothing would be tested) and kept only when it
differs from 1 by more than 3σ (:func:`_select`).

Its correction is significant when it exceeds three times its standard
uncertainty and :data:`MATCHED_MIN_SIGNIFICANT_EV`. That floor is half of
the calibration allowance the evidence gives every line position
(``workbench.matching.xray_evidence.XRAY_CALIBRATION_SIGMA_EV``, 10 eV at 1σ):
a drift smaller than half the σ it already allows changes a line's
position term by under 0.5σ and is left alone (re-running the match for it
would change classes by noise), while a larger one, measured to better
than 3σ, is corrected (common practice, no source: the quarter-window rule
of the wavelength scale, ``workbench.matching.params.CALIBRATION_FRACTION``,
argued the same way).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, replace
from typing import Any

import numpy as np

__all__ = [
    "MATCHED_MIN_SIGNIFICANT_EV",
    "MIN_SIGNIFICANT_EV",
    "OUTLIER_SIGMAS",
    "EnergyScale",
    "fit_energy_scale",
    "fit_matched_scale",
]

#: Corrections smaller than this are never applied (some 15 % of a typical
#: detector FWHM; common practice, no source).
MIN_SIGNIFICANT_EV: float = 20.0
#: After matching, corrections smaller than this are not applied: half the
#: evidence's 1σ calibration allowance of 10 eV (module docstring; common
#: practice, no source).
MATCHED_MIN_SIGNIFICANT_EV: float = 5.0
#: A pair further than this many of its σ from the fit marks its family as
#: inconsistent (the usual 3σ outlier bound; common practice, no source).
OUTLIER_SIGMAS: float = 3.0


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
    #: "peaks" (before matching) or "matched families" (after matching).
    stage: str = "peaks"
    #: After matching: families whose pairs disagreed with the others (left out).
    rejected: tuple[str, ...] = ()
    #: After matching: lowest and highest shown energy of the pairs kept (eV).
    span_eV: tuple[float, ...] = ()

    def correct(self, energy_eV: np.ndarray) -> np.ndarray:
        """Corrected energies."""
        return self.offset_eV + self.gain * np.asarray(energy_eV, dtype=np.float64)

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form."""
        d = asdict(self)
        d["lines"] = list(self.lines)
        d["rejected"] = list(self.rejected)
        d["span_eV"] = list(self.span_eV)
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> EnergyScale:
        """The scale from its :meth:`to_dict` form."""
        return cls(
            **{
                k: tuple(v) if isinstance(v, list) else v
                for k, v in d.items()
                if k in cls.__dataclass_fields__
            }
        )


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
    if x.size == 0:
        return EnergyScale(0, 0.0, float("nan"), 1.0, float("nan"), 0.0, False, lines=lines)
    fit = _wls(x, y, s, bool(x.size >= 2 and np.ptp(x) >= 1000.0))
    significant = bool(abs(fit[4]) > max(3.0 * fit[5], MIN_SIGNIFICANT_EV))
    return EnergyScale(x.size, *fit[:4], fit[4], significant, lines=lines)


def _wls(
    x: np.ndarray, y: np.ndarray, s: np.ndarray, with_gain: bool, inflate_offset: bool = False
) -> tuple[float, float, float, float, float, float]:
    """Weighted fit: (offset, its σ, gain, its σ, largest correction over the pairs, its σ).

    With ``with_gain`` the covariance is inflated by the reduced χ² when the
    scatter exceeds the stated errors (more than two pairs); with
    ``inflate_offset`` an offset-only fit is too (more than one pair).
    """
    n = int(x.size)
    w = 1.0 / np.maximum(s, 1e-6) ** 2
    if with_gain:
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
        if inflate_offset and n > 1:
            chi2 = float(np.sum(w * (y - x - offset) ** 2) / (n - 1))
            u_off *= float(np.sqrt(max(chi2, 1.0)))
        corr = np.array([offset])
        sd = np.array([u_off])
    k = int(np.argmax(np.abs(corr)))
    return offset, u_off, gain, u_gain, float(corr[k]), float(sd[k])


def fit_matched_scale(
    observed_eV: np.ndarray,
    reference_eV: np.ndarray,
    sigma_eV: np.ndarray,
    family: np.ndarray,
    lines: tuple[str, ...] = (),
) -> EnergyScale:
    """Energy scale from the lines of decided families, robust by family (module docstring).

    Parameters
    ----------
    observed_eV, reference_eV : numpy.ndarray
        Pairs: a peak's measured centre (the energy the spectrum shows) and
        where its family's blend peaks at the detector resolution.
    sigma_eV : numpy.ndarray
        1σ uncertainty of each pair (centre, blend maximum, tabulation).
    family : numpy.ndarray of str
        The family (``"Cu K"``) each pair belongs to.
    lines : tuple of str
        Name of each pair (recorded for the kept pairs).

    Returns
    -------
    EnergyScale
        ``stage`` "matched families"; ``n_pairs`` 0 (nothing measured) when
        no consistent majority is left; ``rejected`` the families dropped.
    """
    x = np.asarray(observed_eV, dtype=np.float64)
    y = np.asarray(reference_eV, dtype=np.float64)
    s = np.asarray(sigma_eV, dtype=np.float64)
    fam = np.asarray(family, dtype=str)
    names = tuple(lines) if lines else tuple("" for _ in range(x.size))
    empty = EnergyScale(
        0, 0.0, float("nan"), 1.0, float("nan"), 0.0, False, stage="matched families"
    )
    keep = np.ones(x.size, dtype=bool)
    rejected: list[str] = []
    fit = None
    while keep.any():
        xs, ys, ss, fs = x[keep], y[keep], s[keep], fam[keep]
        fit = _select(xs, ys, ss, fs, inflate=False)
        z = (ys - (fit[0] + fit[2] * xs)) / np.maximum(ss, 1e-6)
        if np.max(np.abs(z)) <= OUTLIER_SIGMAS:
            break
        # Drop the family whose pairs disagree most (mean squared z): a
        # family is right or wrong as a whole.
        u, inv = np.unique(fs, return_inverse=True)
        score = np.bincount(inv, weights=z**2) / np.bincount(inv)
        worst = str(u[int(np.argmax(score))])
        rejected.append(worst)
        keep &= fam != worst
        fit = None
    if fit is None or not keep.any():
        return replace(empty, rejected=tuple(sorted(rejected)))
    kept_fams = np.unique(fam[keep])
    n_kept, n_dropped = int(keep.sum()), int((~keep).sum())
    # Consistent across two families, or one family with several lines; and
    # a majority of the pairs.
    if (kept_fams.size < 2 and n_kept < 2) or n_kept <= n_dropped:
        return replace(empty, rejected=tuple(sorted(rejected)))
    off, u_off, gain, u_gain, corr, sd = _select(x[keep], y[keep], s[keep], fam[keep], True)
    significant = bool(abs(corr) > max(3.0 * sd, MATCHED_MIN_SIGNIFICANT_EV))
    return EnergyScale(
        n_kept,
        off,
        u_off,
        gain,
        u_gain,
        corr,
        significant,
        lines=tuple(nm for nm, k in zip(names, keep, strict=True) if k),
        stage="matched families",
        rejected=tuple(sorted(rejected)),
        span_eV=(float(np.min(x[keep])), float(np.max(x[keep]))),
    )


def _select(
    x: np.ndarray, y: np.ndarray, s: np.ndarray, fam: np.ndarray, inflate: bool
) -> tuple[float, float, float, float, float, float]:
    """Offset only, or offset and gain when the pairs call for it.

    A gain is tried with pairs of two or more families spanning ≥ 1 keV and
    kept only when it differs from 1 by more than three of its standard
    uncertainties: the pairs of a spectrum often lie within a few keV far
    from zero energy, where offset and gain are nearly degenerate, and a
    gain the data do not require turns a few eV of blend error into tens of
    eV of extrapolated correction (the simpler model stands unless the data
    reject it).
    """
    base = _wls(x, y, s, False, inflate_offset=inflate)
    if np.unique(fam).size < 2 or x.size < 3 or np.ptp(x) < 1000.0:
        return base
    with_gain = _wls(x, y, s, True)
    if abs(with_gain[2] - 1.0) > 3.0 * with_gain[3]:
        return with_gain
    return base
