"""Instrument response: one smooth curve in position shared by all species of a spectrum.

Detectors, gratings and filters change the recorded intensity by a factor
that varies slowly with wavelength (often 10× across a detector, and an
order-blocking filter cuts one end). Predictions from any source model are
multiplied by a response R(x) fitted on the data:

    log10(I_obs / (scale_s · S_g)) = c_s + P(u),   u = (x − mid) / half-span ∈ [−1, 1]

over the found, unique, unsaturated groups of every species called
"probable" or better in the first pass (``c_s`` absorbs each species'
amount; P has no constant term). P is a polynomial of degree at most 2 with
at least 12 points, at most 1 with at least 6, none otherwise; one refit of
the richest allowed curve drops points beyond 3 robust standard deviations,
and on the points kept the degree (0, 1 or 2) is the one with the least
Bayesian information criterion, n·ln(RSS/n) + k·ln n (k the species'
constants plus the degree): a curve is applied only where it explains the
points better than the species' amounts alone by more than its terms cost.
P is clipped to [−2, +1] decades so that a few points cannot invent a huge
correction. The report gives the degree, the coefficients and the number of
points.

Why the degree is chosen (stop 32): a quadratic was fitted wherever 12
points existed (32 of the 33 real emission spectra of ``tests/realdata``);
the information criterion keeps it in 14, prefers a straight line in 9 and
no curve at all in 10 (ASTM G173 in absorption: none, was a line): the
points scatter by the lamps' own 0.3–0.8 dex departures, which a
quadratic then partly took for the instrument's, moving every other
species' predictions with it (in the 9 of those 10 that had a curve, by
0.09–0.98 dex across the range: the Goodman 1200M5 Ne lamp −0.28 and
−0.94 decades at its ends).
Figures are in ``docs/evidence-model.md``.

In emission every species weighs the same in the fit, however many points
it brings (each point 1/n of its species' n; ``equal_species``). Lamp and
plasma lines depart from their tabulated ratios species by species (a
non-LTE lamp's own pattern in wavelength), and with equal point weights the
species with most lines sets the curve nearly alone, its own departures
taken for the instrument's (the Keck LRIS arc, pypeit 2.0.1: Ne I 47
points, Ar I 13). Measured (stop 27), before → after: Fe I in the Goodman
1200M3 Fe-He-Ar lamp "probable" → "established"; invented lamps 868 → 871
of 898 gases with six or more clear lines "established"; no false call
either way; the emission mixtures unchanged; held-out, Xe in the LRIS arc
"possible" → "probable" (its fitted response at 546 / 1014 nm: +0.80 /
−0.10 → +0.81 / +0.04 decades). In absorption every point weighs the
same, as before: there the departures are per line (the curve of growth),
the line-rich species (Fe I) measures the response best, and equal weights
gave the invented absorption mixtures with the solar prior 5 more false
"probable" calls (4 → 9).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from workbench.matching.evidence import EvidencePass, ObservedLines

__all__ = ["ResponseFit", "fit_response"]


@dataclass(frozen=True)
class ResponseFit:
    """Fitted instrument response (flat when ``degree`` is 0)."""

    degree: int = 0
    coefficients: tuple[float, ...] = ()
    mid: float = 0.0
    half_span: float = 1.0
    n_points: int = 0
    species: tuple[str, ...] = field(default_factory=tuple)

    def log10_at(self, x: np.ndarray) -> np.ndarray:
        """log10 R at positions ``x`` (0 where flat)."""
        if self.degree == 0:
            return np.zeros_like(np.asarray(x, dtype=float))
        u = np.clip((np.asarray(x, dtype=float) - self.mid) / self.half_span, -1.0, 1.0)
        p = sum(c * u ** (i + 1) for i, c in enumerate(self.coefficients))
        return np.clip(p, -2.0, 1.0)

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form."""
        return {
            "degree": self.degree,
            "coefficients_log10": list(self.coefficients),
            "centre": self.mid,
            "half_span": self.half_span,
            "n_points": self.n_points,
            "species": list(self.species),
        }


def fit_response(
    obs: ObservedLines,
    ev_pass: EvidencePass,
    min_level: int = 2,
    *,
    equal_species: bool = False,
) -> ResponseFit:
    """Fit the shared response curve from the well-identified species of one pass.

    Parameters
    ----------
    obs : ObservedLines
        The observed peaks.
    ev_pass : EvidencePass
        The pass whose species at ``min_level`` or above measure the curve.
    min_level : int
        Lowest class of a measuring species (2, "probable").
    equal_species : bool
        Give every measuring species the same total weight in the fit (each
        point weighs 1/n of its species' n points) rather than every point
        the same (module docstring: emission).

    Returns
    -------
    ResponseFit
        The curve (flat when too few points).
    """
    xs, ys, ss, names = [], [], [], []
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label):
        if ev.level < min_level or ev.scale is None or not ev.missing_evidence:
            continue
        g = ev.groups
        pk = np.where(g["found"], g["peak"], 0)
        inten = obs.intensity[pk]
        m = (
            g["found"]
            & g["unique"]
            & g["known"]
            & (g["strength"] > 0)
            & np.isfinite(inten)
            & (inten > 0)
            & ~obs.saturated[pk]
        )
        if np.sum(m) < 3:
            continue
        xs.append(g["position"][m])
        ys.append(np.log10(inten[m] / (ev.scale * g["strength"][m])))
        ss.append(np.full(int(np.sum(m)), len(names)))
        names.append(ev.label)
    if not xs:
        return ResponseFit()
    x = np.concatenate(xs)
    y = np.concatenate(ys)
    s = np.concatenate(ss)
    n = x.size
    max_degree = 2 if n >= 12 else 1 if n >= 6 else 0
    if max_degree == 0:
        return ResponseFit()
    lo, hi = float(obs.position[0]), float(obs.position[-1])
    mid, half = 0.5 * (lo + hi), max(0.5 * (hi - lo), 1e-12)
    u = (x - mid) / half
    n_sp = len(names)
    # Outliers are those of the richest curve allowed; every degree is then
    # judged on the same points.
    keep = _robust_keep(u, y, s, n_sp, max_degree, equal_species)
    degree = _bic_degree(u[keep], y[keep], s[keep], n_sp, max_degree, equal_species)
    if degree == 0:
        return ResponseFit()
    coef = _weighted_fit(u[keep], y[keep], s[keep], n_sp, degree, equal_species)[0][n_sp:]
    return ResponseFit(
        degree, tuple(float(c) for c in coef), mid, half, int(np.sum(keep)), tuple(names)
    )


def _design(u: np.ndarray, s: np.ndarray, n_sp: int, degree: int) -> np.ndarray:
    """Columns: one constant per species (its amount), then u, u², … (no common constant)."""
    return np.column_stack(
        [(s == j).astype(float) for j in range(n_sp)] + [u ** (i + 1) for i in range(degree)]
    )


def _weights(s: np.ndarray, n_sp: int, equal_species: bool) -> np.ndarray:
    """Point weights, mean 1: equal per species (1/n of its n points) or equal per point."""
    if not equal_species:
        return np.ones(s.size)
    w = 1.0 / np.bincount(s, minlength=n_sp)[s]
    return w / w.mean()


def _weighted_fit(
    u: np.ndarray, y: np.ndarray, s: np.ndarray, n_sp: int, degree: int, equal_species: bool
) -> tuple[np.ndarray, float]:
    """Weighted least squares: the solution (species constants, then curve) and weighted RSS."""
    a = _design(u, s, n_sp, degree)
    sw = np.sqrt(_weights(s, n_sp, equal_species))
    sol, *_ = np.linalg.lstsq(a * sw[:, None], y * sw, rcond=None)
    return sol, float(np.sum((sw * (y - a @ sol)) ** 2))


def _robust_keep(
    u: np.ndarray, y: np.ndarray, s: np.ndarray, n_sp: int, degree: int, equal_species: bool
) -> np.ndarray:
    """Points kept after one refit without those beyond 3 robust σ (module docstring)."""
    keep = np.ones(u.size, dtype=bool)
    for _ in range(2):
        sol, _ = _weighted_fit(u[keep], y[keep], s[keep], n_sp, degree, equal_species)
        resid = y - _design(u, s, n_sp, degree) @ sol
        mad = 1.4826 * float(np.median(np.abs(resid[keep] - np.median(resid[keep]))))
        new_keep = np.abs(resid) <= 3.0 * max(mad, 0.05)
        if np.array_equal(new_keep, keep) or np.sum(new_keep) < 6:
            break
        keep = new_keep
    return keep


def _bic_degree(
    u: np.ndarray, y: np.ndarray, s: np.ndarray, n_sp: int, max_degree: int, equal_species: bool
) -> int:
    """The degree (0 … ``max_degree``) with the least Bayesian information criterion.

    BIC = n·ln(RSS/n) + k·ln n for n points and k = species constants +
    degree, the Gaussian likelihood with its variance estimated: a curve is
    fitted only where it explains the points better than the species'
    amounts alone by more than its extra terms cost (module docstring).
    """
    n = u.size
    best, best_bic = 0, np.inf
    for d in range(max_degree + 1):
        if n <= n_sp + d:
            break
        rss = _weighted_fit(u, y, s, n_sp, d, equal_species)[1]
        bic = n * np.log(max(rss, 1e-300) / n) + (n_sp + d) * np.log(n)
        if bic < best_bic:
            best, best_bic = d, bic
    return best
