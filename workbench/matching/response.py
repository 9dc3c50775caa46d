"""Instrument response: one smooth curve in position shared by all species of a spectrum.

Detectors, gratings and filters change the recorded intensity by a factor
that varies slowly with wavelength (often 10× across a detector, and an
order-blocking filter cuts one end). Predictions from any source model are
multiplied by a response R(x) fitted on the data:

    log10(I_obs / (scale_s · S_g)) = c_s + P(u),   u = (x − mid) / half-span ∈ [−1, 1]

over the found, unique, unsaturated groups of every species called
"probable" or better in the first pass (``c_s`` absorbs each species'
amount; P has no constant term). P is a polynomial of degree 2 with at least
12 points, degree 1 with at least 6, none otherwise; one refit drops points
beyond 3 robust standard deviations. P is clipped to [−2, +1] decades so
that a few points cannot invent a huge correction. The report gives the
degree, the coefficients and the number of points.
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


def fit_response(obs: ObservedLines, ev_pass: EvidencePass, min_level: int = 2) -> ResponseFit:
    """Fit the shared response curve from the well-identified species of one pass."""
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
    degree = 2 if n >= 12 else 1 if n >= 6 else 0
    if degree == 0:
        return ResponseFit()
    lo, hi = float(obs.position[0]), float(obs.position[-1])
    mid, half = 0.5 * (lo + hi), max(0.5 * (hi - lo), 1e-12)
    u = (x - mid) / half
    keep = np.ones(n, dtype=bool)
    coef = np.zeros(degree)
    for _ in range(2):
        a = np.column_stack(
            [(s[keep] == j).astype(float) for j in range(len(names))]
            + [u[keep] ** (i + 1) for i in range(degree)]
        )
        sol, *_ = np.linalg.lstsq(a, y[keep], rcond=None)
        coef = sol[len(names) :]
        resid = y - sol[: len(names)][s] - sum(c * u ** (i + 1) for i, c in enumerate(coef))
        mad = 1.4826 * float(np.median(np.abs(resid[keep] - np.median(resid[keep]))))
        new_keep = np.abs(resid) <= 3.0 * max(mad, 0.05)
        if np.array_equal(new_keep, keep) or np.sum(new_keep) < 6:
            break
        keep = new_keep
    return ResponseFit(
        degree, tuple(float(c) for c in coef), mid, half, int(np.sum(keep)), tuple(names)
    )
