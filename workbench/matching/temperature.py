"""Excitation temperature from the best-identified species (Boltzmann plot).

Candidates are species called at least "probable", best first. Only lines
that are unique to the species, unsaturated, alone in their peak's window
(no blend with another line of the same species) and that have g_k, A_ki and
E_k are used. The first species that gives a physical fit is reported;
:func:`workbench.physics.boltzmann.boltzmann_plot` refuses fewer than three
lines or an upper-level energy span below 1 eV.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from workbench.errors import PhysicsError
from workbench.matching.evidence import EvidencePass, ObservedLines
from workbench.matching.reference import ReferenceIndex

__all__ = ["TemperatureEstimate", "estimate_temperature"]


@dataclass
class TemperatureEstimate:
    """Outcome of the temperature estimate (also when it could not be made)."""

    temperature_K: float | None
    uncertainty_K: float | None
    r_squared: float | None
    species: str | None
    n_lines: int
    energy_span_eV: float | None
    lines: list[dict[str, float | str]] = field(default_factory=list)
    message: str = ""
    plot: dict[str, list[float]] | None = None

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form."""
        return {
            "temperature_K": self.temperature_K,
            "uncertainty_K": self.uncertainty_K,
            "r_squared": self.r_squared,
            "species": self.species,
            "n_lines": self.n_lines,
            "energy_span_eV": self.energy_span_eV,
            "lines": self.lines,
            "message": self.message,
            "plot": self.plot,
        }


def estimate_temperature(
    obs: ObservedLines, index: ReferenceIndex, ev_pass: EvidencePass, min_level: int = 2
) -> TemperatureEstimate:
    """Try a Boltzmann plot on each well-identified species, best first."""
    from workbench.physics.boltzmann import boltzmann_plot

    ranked = sorted(
        (ev for ev in ev_pass.evidence.values() if ev.level >= min_level and ev.ion is not None),
        key=lambda ev: (-ev.level, -len(ev.unique_lines), -ev.score, ev.label),
    )
    reasons: list[str] = []
    pairs = ev_pass.pairs
    for ev in ranked:
        unique = set(ev.unique_lines)
        rows = []
        for line, peak in zip(ev.found_lines, ev.found_peaks, strict=True):
            if line not in unique or obs.saturated[peak] or not np.isfinite(obs.intensity[peak]):
                continue
            # Alone in its window among this species' lines?
            same = (pairs.obs == peak) & (ev_pass.pair_species == ev.code)
            if int(np.sum(same)) != 1:
                continue
            g, A, E = index.g_upper[line], index.A_ki_per_s[line], index.E_upper_eV[line]
            lam = index.wavelength_vac_nm[line]
            if (
                not (np.isfinite(g) and np.isfinite(A) and np.isfinite(E))
                or obs.intensity[peak] <= 0
            ):
                continue
            rows.append((float(obs.intensity[peak]), g, A, E, lam, str(index.line_id[line])))
        if len(rows) < 3:
            reasons.append(f"{ev.label}: {len(rows)} usable line(s)")
            continue
        arr = np.array([r[:5] for r in rows], dtype=np.float64)
        try:
            fit = boltzmann_plot(arr[:, 0], arr[:, 1], arr[:, 2], arr[:, 3], arr[:, 4])
        except PhysicsError as exc:
            reasons.append(f"{ev.label}: {exc.problem}")
            continue
        lines = [{"line_id": r[5], "E_upper_eV": r[3], "observed_intensity": r[0]} for r in rows]
        return TemperatureEstimate(
            temperature_K=float(fit.temperature_K),
            uncertainty_K=float(fit.temperature_uncertainty_K),
            r_squared=float(fit.r_squared),
            species=ev.label,
            n_lines=int(fit.n_lines),
            energy_span_eV=float(fit.energy_span_eV),
            lines=lines,
            message=f"Boltzmann plot of {ev.label}: {len(rows)} lines",
            plot={
                "E_upper_eV": [float(v) for v in fit.x_E_upper_eV],
                "ln_I_lambda_over_gA": [float(v) for v in fit.y_ln],
                "slope_per_eV": float(fit.slope_per_eV),
                "intercept": float(fit.intercept),
            },
        )
    why = "; ".join(reasons) if reasons else "no species called probable or better"
    return TemperatureEstimate(
        None, None, None, None, 0, None, [], f"temperature not estimated ({why})"
    )
