"""Boltzmann populations: relative line intensities and the Boltzmann-plot temperature.

For optically thin lines of one species in (partial) LTE the upper level k is
populated as n_k ∝ g_k exp(−E_k/kT). The emitted power of a line is
n_k A_ki h c/λ, so

    I_energy ∝ g_k A_ki / λ · exp(−E_k / kT)        (energy flux, the default)
    I_photon ∝ g_k A_ki · exp(−E_k / kT)            (photon counting)

A detector that reports counts per photon (most CCD spectrometers after a
spectral-response correction in photon units) follows the second form; a
radiometrically calibrated (energy-unit) spectrum follows the first. Pass
``photon_counting=True`` for the former. λ cancels out of the Boltzmann plot's
slope only if it is treated consistently, so use the same convention for
synthesis and fitting.

The Boltzmann plot fits ln(I λ / (g A)) (or ln(I/(gA))) against E_k; the
slope is −1/(kT).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy import constants as sc

from workbench.errors import InsufficientDataError, PhysicsError, ValueRangeError

__all__ = [
    "K_B_EV_PER_K",
    "BoltzmannFit",
    "boltzmann_plot",
    "relative_line_intensities",
]

#: Boltzmann constant in eV/K (CODATA via scipy.constants).
K_B_EV_PER_K: float = sc.k / sc.e


def _arrays(**named: ArrayLike) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    for name, values in named.items():
        arr = np.atleast_1d(np.asarray(values, dtype=np.float64))
        if arr.ndim != 1:
            raise ValueRangeError(f"{name} must be one-dimensional", "pass one value per line")
        out[name] = arr
    sizes = {name: arr.size for name, arr in out.items()}
    if len(set(sizes.values())) > 1:
        listed = ", ".join(f"{k}={v}" for k, v in sizes.items())
        raise ValueRangeError(f"line arrays differ in length ({listed})", "give one value per line")
    return out


def _check_line_data(
    g_upper: np.ndarray, A_ki_per_s: np.ndarray, E_upper_eV: np.ndarray, wavelength_nm: np.ndarray
) -> None:
    for name, arr, positive in (
        ("g_upper", g_upper, True),
        ("A_ki_per_s", A_ki_per_s, True),
        ("E_upper_eV", E_upper_eV, False),
        ("wavelength_nm", wavelength_nm, True),
    ):
        bad = ~np.isfinite(arr) | ((arr <= 0) if positive else (arr < 0))
        if np.any(bad):
            idx = int(np.flatnonzero(bad)[0])
            need = "positive" if positive else "finite and ≥ 0"
            raise ValueRangeError(
                f"{name} of line {idx} is {arr[idx]!r}; it must be {need}",
                f"fill in or drop line {idx} (lines without atomic data cannot be used)",
            )


def relative_line_intensities(
    g_upper: ArrayLike,
    A_ki_per_s: ArrayLike,
    E_upper_eV: ArrayLike,
    wavelength_nm: ArrayLike,
    temperature_K: float,
    photon_counting: bool = False,
) -> np.ndarray:
    """Relative LTE intensities of optically thin lines of one species.

    Parameters
    ----------
    g_upper : array_like
        Statistical weight of each upper level.
    A_ki_per_s : array_like
        Transition probabilities in s⁻¹.
    E_upper_eV : array_like
        Upper-level energies above the ground level, eV.
    wavelength_nm : array_like
        Line wavelengths in nm (vacuum or air; the 0.03 % difference is
        immaterial for relative intensities).
    temperature_K : float
        Excitation temperature.
    photon_counting : bool
        ``False`` (default): energy-flux intensities ∝ gA/λ · exp(−E/kT).
        ``True``: photon rates ∝ gA · exp(−E/kT).

    Returns
    -------
    numpy.ndarray
        Intensities scaled so the strongest line is 1.
    """
    d = _arrays(
        g_upper=g_upper, A_ki_per_s=A_ki_per_s, E_upper_eV=E_upper_eV, wavelength_nm=wavelength_nm
    )
    _check_line_data(d["g_upper"], d["A_ki_per_s"], d["E_upper_eV"], d["wavelength_nm"])
    if not (np.isfinite(temperature_K) and temperature_K > 0):
        raise ValueRangeError(
            f"temperature {temperature_K!r} K is not positive", "give the temperature in kelvin"
        )
    log_i = np.log(d["g_upper"] * d["A_ki_per_s"]) - d["E_upper_eV"] / (
        K_B_EV_PER_K * temperature_K
    )
    if not photon_counting:
        log_i -= np.log(d["wavelength_nm"])
    # Work in logs so very cold plasmas / high levels do not underflow before scaling.
    return np.exp(log_i - log_i.max())


@dataclass(frozen=True)
class BoltzmannFit:
    """Result of a Boltzmann plot.

    Attributes
    ----------
    temperature_K : float
        Excitation temperature, −1/(k·slope).
    temperature_uncertainty_K : float
        One standard error, propagated from the slope: σ_T = σ_slope/(k·slope²).
    slope_per_eV : float
        Fitted slope of ln(...) against E_upper in eV⁻¹.
    slope_uncertainty_per_eV : float
        Standard error of the slope.
    intercept : float
        Fitted intercept (ln of a species-dependent constant).
    r_squared : float
        Coefficient of determination of the (weighted) fit.
    n_lines : int
        Lines used.
    energy_span_eV : float
        max − min upper-level energy of the lines used.
    x_E_upper_eV : numpy.ndarray
        Upper-level energies of all lines given.
    y_ln : numpy.ndarray
        ln(I λ/(gA)) (or ln(I/(gA))) of all lines; NaN where not usable.
    residuals : numpy.ndarray
        y − fit for all lines; NaN where not used.
    used : numpy.ndarray
        Boolean mask of the lines that entered the fit.
    weighted : bool
        Whether intensity uncertainties weighted the fit.
    """

    temperature_K: float
    temperature_uncertainty_K: float
    slope_per_eV: float
    slope_uncertainty_per_eV: float
    intercept: float
    r_squared: float
    n_lines: int
    energy_span_eV: float
    x_E_upper_eV: np.ndarray
    y_ln: np.ndarray
    residuals: np.ndarray
    used: np.ndarray
    weighted: bool

    def to_dict(self) -> dict[str, object]:
        """Return a JSON-friendly dictionary (NaN written as ``None``)."""

        def clean(a: np.ndarray) -> list[object]:
            return [None if not np.isfinite(v) else float(v) for v in np.asarray(a, float)]

        return {
            "temperature_K": self.temperature_K,
            "temperature_uncertainty_K": self.temperature_uncertainty_K,
            "slope_per_eV": self.slope_per_eV,
            "slope_uncertainty_per_eV": self.slope_uncertainty_per_eV,
            "intercept": self.intercept,
            "r_squared": self.r_squared,
            "n_lines": self.n_lines,
            "energy_span_eV": self.energy_span_eV,
            "x_E_upper_eV": clean(self.x_E_upper_eV),
            "y_ln": clean(self.y_ln),
            "residuals": clean(self.residuals),
            "used": [bool(u) for u in self.used],
            "weighted": self.weighted,
        }


def boltzmann_plot(
    intensity: ArrayLike,
    g_upper: ArrayLike,
    A_ki_per_s: ArrayLike,
    E_upper_eV: ArrayLike,
    wavelength_nm: ArrayLike,
    intensity_uncertainty: ArrayLike | None = None,
    min_energy_span_eV: float = 1.0,
    photon_counting: bool = False,
) -> BoltzmannFit:
    """Excitation temperature from a Boltzmann plot of lines of one species.

    Fits y = ln(I λ/(g A)) = −E_upper/(kT) + c by least squares (weighted by
    1/σ_y² with σ_y = σ_I/I when ``intensity_uncertainty`` is given; the
    slope's standard error then comes from those σ alone, otherwise from the
    residual scatter with n − 2 degrees of freedom).

    Lines whose intensity is not a positive finite number (or whose
    uncertainty is not positive) are left out and marked in ``used``.

    Parameters
    ----------
    intensity : array_like
        Measured line intensities (areas), in energy units unless
        ``photon_counting``.
    g_upper, A_ki_per_s, E_upper_eV, wavelength_nm : array_like
        Atomic data of each line (see :func:`relative_line_intensities`).
    intensity_uncertainty : array_like, optional
        One-sigma uncertainty of each intensity.
    min_energy_span_eV : float
        Smallest acceptable spread of upper-level energies.
    photon_counting : bool
        Intensities are photon rates (fit ln(I/(gA))).

    Returns
    -------
    BoltzmannFit
        The fit.

    Raises
    ------
    InsufficientDataError
        Fewer than 3 usable lines, or an upper-level energy span below
        ``min_energy_span_eV``.
    PhysicsError
        The fitted slope is not negative (no physical temperature).
    ValueRangeError
        Arrays of different length or invalid atomic data.
    """
    named = {
        "intensity": intensity,
        "g_upper": g_upper,
        "A_ki_per_s": A_ki_per_s,
        "E_upper_eV": E_upper_eV,
        "wavelength_nm": wavelength_nm,
    }
    if intensity_uncertainty is not None:
        named["intensity_uncertainty"] = intensity_uncertainty
    d = _arrays(**named)
    _check_line_data(d["g_upper"], d["A_ki_per_s"], d["E_upper_eV"], d["wavelength_nm"])
    inten = d["intensity"]
    x = d["E_upper_eV"]
    usable = np.isfinite(inten) & (inten > 0)
    sigma_y = None
    if intensity_uncertainty is not None:
        unc = d["intensity_uncertainty"]
        usable &= np.isfinite(unc) & (unc > 0)
        with np.errstate(divide="ignore", invalid="ignore"):
            sigma_y = np.where(usable, unc / np.where(usable, inten, 1.0), np.nan)
    y = np.full(x.shape, np.nan)
    base = np.log(d["g_upper"] * d["A_ki_per_s"])
    if not photon_counting:
        base = base - np.log(d["wavelength_nm"])
    y[usable] = np.log(inten[usable]) - base[usable]

    n = int(usable.sum())
    if n < 3:
        raise InsufficientDataError(
            f"Boltzmann plot needs at least 3 usable lines, got {n} (of {x.size} given)",
            "add lines of the same species with a wider spread of upper-level energies",
        )
    xu, yu = x[usable], y[usable]
    span = float(xu.max() - xu.min())
    if span < min_energy_span_eV:
        raise InsufficientDataError(
            f"upper-level energy span of the {n} lines is {span:.3f} eV, below the "
            f"{min_energy_span_eV:g} eV needed for a meaningful slope",
            "add lines of the same species with a wider spread of upper-level energies",
        )
    w = np.ones(n) if sigma_y is None else 1.0 / sigma_y[usable] ** 2
    sw = w.sum()
    x_mean = float((w * xu).sum() / sw)
    y_mean = float((w * yu).sum() / sw)
    sxx = float((w * (xu - x_mean) ** 2).sum())
    slope = float((w * (xu - x_mean) * (yu - y_mean)).sum() / sxx)
    intercept = y_mean - slope * x_mean
    res_u = yu - (intercept + slope * xu)
    ss_res = float((w * res_u**2).sum())
    ss_tot = float((w * (yu - y_mean) ** 2).sum())
    r_squared = 1.0 - ss_res / ss_tot if ss_tot > 0 else 1.0
    if sigma_y is None:
        slope_se = float(np.sqrt(ss_res / (n - 2) / sxx)) if n > 2 else float("nan")
    else:
        slope_se = float(np.sqrt(1.0 / sxx))
    if not slope < 0:
        raise PhysicsError(
            f"Boltzmann-plot slope is {slope:+.4g} per eV (not negative), so no physical "
            "temperature follows",
            "check line assignments, self-absorption of strong lines and the intensity "
            "calibration; use lines of a single species and ion stage",
        )
    temperature = -1.0 / (K_B_EV_PER_K * slope)
    temperature_se = slope_se / (K_B_EV_PER_K * slope * slope)
    residuals = np.full(x.shape, np.nan)
    residuals[usable] = res_u
    return BoltzmannFit(
        temperature_K=float(temperature),
        temperature_uncertainty_K=float(temperature_se),
        slope_per_eV=slope,
        slope_uncertainty_per_eV=slope_se,
        intercept=float(intercept),
        r_squared=float(r_squared),
        n_lines=n,
        energy_span_eV=span,
        x_E_upper_eV=x.copy(),
        y_ln=y,
        residuals=residuals,
        used=usable,
        weighted=sigma_y is not None,
    )
