"""Synthetic line spectra for demonstrations and tests (results are invented data).

Lines are rendered as area-normalised profiles: a line of intensity I adds a
profile whose integral over x is I (same x unit as the grid). Widths are either
given directly (``fwhm``) or follow from a resolving power R as FWHM = x/R per
line. Each line is evaluated only on a window around its centre (±20 FWHM for
a Gaussian, which keeps all but ~1e-300 of the area; ±1000 FWHM for
Lorentzian and Voigt profiles, whose far wings beyond that hold about 0.03 %
of the area), so a 10⁶-point grid with hundreds of lines stays quick. Voigt
profiles are computed exactly (Faddeeva function) within ±50 FWHM and by their
Lorentzian asymptote beyond, where the two agree to ~1e-4 of the wing value.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from workbench.datamodel import Spectrum
from workbench.errors import ValueRangeError

__all__ = [
    "Profile",
    "absorption_spectrum",
    "line_profile",
    "render_lines",
    "synthetic_spectrum",
    "voigt_widths",
]

Profile = Literal["gaussian", "lorentzian", "voigt"]

_FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
#: Half-width of the evaluation window in FWHM, by profile.
_WINDOW_FWHM = {"gaussian": 20.0, "lorentzian": 1000.0, "voigt": 1000.0}
#: Half-width (FWHM) inside which a Voigt profile is evaluated exactly.
_VOIGT_CORE_FWHM = 50.0


def voigt_widths(
    fwhm: float | np.ndarray, lorentz_fraction: float
) -> tuple[np.ndarray, np.ndarray]:
    """Gaussian and Lorentzian FWHM whose Voigt profile has the total ``fwhm``.

    Uses the Olivero & Longbothum (1977, JQSRT 17, 233) approximation
    f_V ≈ 0.5346 f_L + √(0.2166 f_L² + f_G²) (accurate to ~0.02 %), with
    f_L = ``lorentz_fraction`` · f_V.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        (fwhm_gaussian, fwhm_lorentzian).
    """
    eta = float(lorentz_fraction)
    if not 0.0 <= eta <= 1.0:
        raise ValueRangeError(
            f"lorentz_fraction {lorentz_fraction!r} is outside 0..1",
            "give the Lorentzian share of the Voigt FWHM as a fraction",
        )
    f = np.asarray(fwhm, dtype=np.float64)
    g2 = (1.0 - 0.5346 * eta) ** 2 - 0.2166 * eta * eta
    return f * math.sqrt(max(g2, 0.0)), f * eta


def _profile_values(dx: np.ndarray, fwhm: float, kind: str, lorentz_fraction: float) -> np.ndarray:
    if kind == "gaussian":
        sigma = fwhm / _FWHM_PER_SIGMA
        return np.exp(-0.5 * (dx / sigma) ** 2) / (sigma * math.sqrt(2.0 * math.pi))
    if kind == "lorentzian":
        gamma = 0.5 * fwhm
        return (gamma / math.pi) / (dx * dx + gamma * gamma)
    if kind == "voigt":
        from scipy.special import voigt_profile

        f_g, f_l = voigt_widths(fwhm, lorentz_fraction)
        sigma, gamma = float(f_g) / _FWHM_PER_SIGMA, 0.5 * float(f_l)
        core = np.abs(dx) <= _VOIGT_CORE_FWHM * fwhm
        if gamma == 0.0 or core.all():
            return voigt_profile(dx, sigma, gamma)
        # Far wings: the Voigt profile tends to its Lorentzian component, with a
        # relative error of order (σ/x)² (≈ 1e-4 at 50 FWHM); the Faddeeva function
        # is ~20× slower per point, and the wings are most of the window.
        out = (gamma / math.pi) / (dx * dx + gamma * gamma)
        out[core] = voigt_profile(dx[core], sigma, gamma)
        return out
    raise ValueRangeError(
        f"unknown line profile {kind!r}", "use 'gaussian', 'lorentzian' or 'voigt'"
    )


def line_profile(
    x: ArrayLike,
    centre: float,
    fwhm: float,
    kind: Profile = "gaussian",
    lorentz_fraction: float = 0.5,
) -> np.ndarray:
    """A line profile of unit area.

    Parameters
    ----------
    x : array_like
        Positions (any unit, same as ``centre`` and ``fwhm``).
    centre : float
        Line centre.
    fwhm : float
        Full width at half maximum (> 0).
    kind : {"gaussian", "lorentzian", "voigt"}
        Profile shape; Voigt via :func:`scipy.special.voigt_profile`.
    lorentz_fraction : float
        For ``"voigt"``: Lorentzian FWHM as a fraction of the total FWHM
        (0 → Gaussian, 1 → Lorentzian); see :func:`voigt_widths`.

    Returns
    -------
    numpy.ndarray
        Profile values, ∫ φ dx = 1.
    """
    f = float(fwhm)
    if not (math.isfinite(f) and f > 0):
        raise ValueRangeError(f"fwhm {fwhm!r} is not positive", "give a positive line width")
    dx = np.asarray(x, dtype=np.float64) - float(centre)
    return _profile_values(dx, f, kind, lorentz_fraction)


def _check_grid(x_grid: ArrayLike) -> np.ndarray:
    x = np.asarray(x_grid, dtype=np.float64)
    if x.ndim != 1 or x.size < 2:
        raise ValueRangeError("x_grid must be a 1-D array of at least 2 points", "pass a grid")
    if not np.all(np.isfinite(x)) or np.any(np.diff(x) <= 0):
        raise ValueRangeError(
            "x_grid is not strictly increasing and finite", "sort the grid and remove duplicates"
        )
    return x


def _line_arrays(
    positions: ArrayLike, values: ArrayLike, what: str
) -> tuple[np.ndarray, np.ndarray]:
    pos = np.atleast_1d(np.asarray(positions, dtype=np.float64))
    val = np.atleast_1d(np.asarray(values, dtype=np.float64))
    if pos.shape != val.shape or pos.ndim != 1:
        raise ValueRangeError(
            f"positions ({pos.size}) and {what} ({val.size}) differ in length",
            f"give one {what[:-1]} per line",
        )
    bad = ~np.isfinite(pos) | ~np.isfinite(val)
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise ValueRangeError(f"line {i} has a NaN or infinite value", "remove or fix that line")
    return pos, val


def _widths(
    pos: np.ndarray, resolving_power: float | None, fwhm: float | ArrayLike | None
) -> np.ndarray:
    if (resolving_power is None) == (fwhm is None):
        raise ValueRangeError(
            "give exactly one of resolving_power and fwhm",
            "set resolving_power=R (FWHM = x/R) or fwhm=<width in x units>",
        )
    if resolving_power is not None:
        r = float(resolving_power)
        if not (math.isfinite(r) and r > 0):
            raise ValueRangeError(
                f"resolving power {resolving_power!r} is not positive", "give R > 0"
            )
        if np.any(pos <= 0):
            raise ValueRangeError(
                "a resolving power needs positive line positions", "give fwhm instead"
            )
        return pos / r
    w = np.broadcast_to(np.asarray(fwhm, dtype=np.float64), pos.shape).copy()
    if np.any(~np.isfinite(w) | (w <= 0)):
        raise ValueRangeError("fwhm must be positive for every line", "give positive widths")
    return w


def _windows(
    x: np.ndarray, pos: np.ndarray, widths: np.ndarray, profile: str
) -> tuple[np.ndarray, np.ndarray]:
    if profile not in _WINDOW_FWHM:
        raise ValueRangeError(
            f"unknown line profile {profile!r}", "use 'gaussian', 'lorentzian' or 'voigt'"
        )
    half = _WINDOW_FWHM[profile] * widths
    return np.searchsorted(x, pos - half, "left"), np.searchsorted(x, pos + half, "right")


def render_lines(
    positions: ArrayLike,
    intensities: ArrayLike,
    x_grid: ArrayLike,
    resolving_power: float | None = None,
    fwhm: float | ArrayLike | None = None,
    profile: Profile = "gaussian",
    lorentz_fraction: float = 0.5,
) -> np.ndarray:
    """Sum of area-normalised line profiles on a grid.

    Parameters
    ----------
    positions : array_like
        Line centres in grid units.
    intensities : array_like
        Integrated intensity (area) of each line.
    x_grid : array_like
        Strictly increasing grid.
    resolving_power : float, optional
        R; each line gets FWHM = position/R.
    fwhm : float or array_like, optional
        Width(s) in grid units (instead of ``resolving_power``).
    profile : {"gaussian", "lorentzian", "voigt"}
        Line shape.
    lorentz_fraction : float
        Lorentzian share of a Voigt FWHM.

    Returns
    -------
    numpy.ndarray
        The rendered signal (zero away from lines).
    """
    x = _check_grid(x_grid)
    pos, inten = _line_arrays(positions, intensities, "intensities")
    widths = _widths(pos, resolving_power, fwhm)
    start, stop = _windows(x, pos, widths, profile)
    y = np.zeros_like(x)
    for i in range(pos.size):
        a, b = int(start[i]), int(stop[i])
        if a < b and inten[i] != 0:
            y[a:b] += inten[i] * _profile_values(
                x[a:b] - pos[i], widths[i], profile, lorentz_fraction
            )
    return y


def _grid(
    pos: np.ndarray, widths_hint: float, x_range: tuple[float, float] | None, n_points: int
) -> np.ndarray:
    if int(n_points) != n_points or n_points < 2:
        raise ValueRangeError(f"n_points {n_points!r} must be an integer ≥ 2", "give n_points ≥ 2")
    if x_range is None:
        if pos.size == 0:
            raise ValueRangeError("no lines and no x_range", "give x_range=(lo, hi)")
        pad = max(10.0 * widths_hint, 0.05 * (pos.max() - pos.min()), 1e-9)
        lo, hi = float(pos.min() - pad), float(pos.max() + pad)
    else:
        lo, hi = (float(v) for v in x_range)
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise ValueRangeError(f"x_range ({lo}, {hi}) is not increasing", "give x_range=(lo, hi)")
    return np.linspace(lo, hi, int(n_points))


def _continuum(
    continuum: float | Callable[[np.ndarray], ArrayLike] | ArrayLike | None,
    x: np.ndarray,
    default: float,
) -> np.ndarray:
    if continuum is None:
        return np.full_like(x, default)
    c = np.asarray(continuum(x) if callable(continuum) else continuum, dtype=np.float64)
    c = np.broadcast_to(c, x.shape) if c.ndim == 0 else c
    if c.shape != x.shape:
        raise ValueRangeError(
            f"continuum has {c.size} values for a {x.size}-point grid",
            "give a scalar, a callable of x, or one value per grid point",
        )
    if not np.all(np.isfinite(c)):
        raise ValueRangeError("continuum contains NaN or infinity", "give finite values")
    return np.array(c, dtype=np.float64)


def _axis_medium(axis: str, medium: str | None) -> None:
    if axis == "energy" and medium is not None:
        raise ValueRangeError(
            "an energy axis has no medium, but medium was given",
            "pass medium=None with axis='energy'",
        )


def synthetic_spectrum(
    positions: ArrayLike,
    intensities: ArrayLike,
    axis: Literal["wavelength", "energy"] = "wavelength",
    medium: Literal["air", "vacuum"] | None = "air",
    x_range: tuple[float, float] | None = None,
    n_points: int = 20001,
    resolving_power: float | None = None,
    fwhm: float | ArrayLike | None = None,
    profile: Profile = "gaussian",
    lorentz_fraction: float = 0.5,
    noise_sigma: float = 0.0,
    continuum: float | Callable[[np.ndarray], ArrayLike] | ArrayLike | None = None,
    seed: int | None = None,
) -> Spectrum:
    """An invented emission spectrum: lines on a continuum plus Gaussian noise.

    Parameters
    ----------
    positions, intensities : array_like
        Line centres (nm or eV) and areas.
    axis : {"wavelength", "energy"}
        Axis kind; positions are nm or eV accordingly.
    medium : {"air", "vacuum"} or None
        Medium of a wavelength axis; must be ``None`` for an energy axis.
    x_range : (float, float), optional
        Grid limits; by default the lines' span plus a margin.
    n_points : int
        Grid points (uniform).
    resolving_power, fwhm, profile, lorentz_fraction
        Line widths and shape (see :func:`render_lines`; if neither width is
        given, R = 5000 is used).
    noise_sigma : float
        Standard deviation of additive Gaussian noise.
    continuum : float, callable or array_like, optional
        Background (scalar, f(x) or per-point values); 0 by default.
    seed : int, optional
        Seed for :func:`numpy.random.default_rng`; fix it for reproducible noise.

    Returns
    -------
    Spectrum
        With ``y_label`` ``"synthetic (invented)"`` and no source.
    """
    _axis_medium(axis, medium)
    pos, inten = _line_arrays(positions, intensities, "intensities")
    if resolving_power is None and fwhm is None:
        resolving_power = 5000.0
    widths = _widths(pos, resolving_power, fwhm)
    x = _grid(pos, float(widths.max()) if widths.size else 0.0, x_range, n_points)
    y = _continuum(continuum, x, 0.0) + render_lines(
        pos, inten, x, fwhm=widths, profile=profile, lorentz_fraction=lorentz_fraction
    )
    y = _add_noise(y, noise_sigma, seed)
    return Spectrum(x=x, y=y, axis=axis, medium=medium, source=None, y_label="synthetic (invented)")


def _add_noise(y: np.ndarray, noise_sigma: float, seed: int | None) -> np.ndarray:
    s = float(noise_sigma)
    if not (math.isfinite(s) and s >= 0):
        raise ValueRangeError(f"noise_sigma {noise_sigma!r} is negative", "give σ ≥ 0")
    if s > 0:
        y = y + np.random.default_rng(seed).normal(0.0, s, y.shape)
    return y


def absorption_spectrum(
    positions: ArrayLike,
    depths: ArrayLike,
    axis: Literal["wavelength", "energy"] = "wavelength",
    medium: Literal["air", "vacuum"] | None = "air",
    x_range: tuple[float, float] | None = None,
    n_points: int = 20001,
    resolving_power: float | None = None,
    fwhm: float | ArrayLike | None = None,
    profile: Profile = "gaussian",
    lorentz_fraction: float = 0.5,
    noise_sigma: float = 0.0,
    continuum: float | Callable[[np.ndarray], ArrayLike] | ArrayLike | None = None,
    seed: int | None = None,
) -> Spectrum:
    """An invented absorption spectrum: dips of given central depth on a continuum.

    Each line multiplies the transmission by (1 − d · φ/φ_max), with φ its
    profile scaled to 1 at the centre, so a lone line's minimum is
    continuum · (1 − d) and overlapping lines never drive it below zero.

    Parameters
    ----------
    positions : array_like
        Line centres.
    depths : array_like
        Fractional central depths, each in [0, 1].
    axis, medium, x_range, n_points, resolving_power, fwhm, profile, lorentz_fraction
        As for :func:`synthetic_spectrum`.
    noise_sigma, seed
        Additive Gaussian noise and its seed.
    continuum : float, callable or array_like, optional
        Unabsorbed level; 1 by default.

    Returns
    -------
    Spectrum
        With ``y_label`` ``"synthetic absorption (invented)"``.
    """
    _axis_medium(axis, medium)
    pos, depth = _line_arrays(positions, depths, "depths")
    if np.any((depth < 0) | (depth > 1)):
        i = int(np.flatnonzero((depth < 0) | (depth > 1))[0])
        raise ValueRangeError(
            f"depth of line {i} is {depth[i]!r}, outside 0..1", "give depths as fractions"
        )
    if resolving_power is None and fwhm is None:
        resolving_power = 5000.0
    widths = _widths(pos, resolving_power, fwhm)
    x = _grid(pos, float(widths.max()) if widths.size else 0.0, x_range, n_points)
    start, stop = _windows(x, pos, widths, profile)
    trans = np.ones_like(x)
    for i in range(pos.size):
        a, b = int(start[i]), int(stop[i])
        if a < b and depth[i] > 0:
            shape = _profile_values(x[a:b] - pos[i], widths[i], profile, lorentz_fraction)
            peak = _profile_values(np.zeros(1), widths[i], profile, lorentz_fraction)[0]
            trans[a:b] *= 1.0 - depth[i] * shape / peak
    y = _add_noise(_continuum(continuum, x, 1.0) * trans, noise_sigma, seed)
    return Spectrum(
        x=x, y=y, axis=axis, medium=medium, source=None, y_label="synthetic absorption (invented)"
    )
