"""Local thermodynamic equilibrium: the McWhirter criterion.

McWhirter (1965), in *Plasma Diagnostic Techniques*, eds. R. H. Huddlestone and
S. L. Leonard (Academic Press), gives the electron density at which collisions
dominate radiative decay, so that level populations follow Boltzmann:

    n_e ≥ 1.6 × 10¹² · T^{1/2} · (ΔE)³   cm⁻³,   T in K, ΔE in eV,

with ΔE the largest energy gap between adjacent levels relevant to the lines
used (often the resonance transition). The criterion is **necessary but not
sufficient**: transient and inhomogeneous plasmas (laser-induced plasmas in
particular) also need their relaxation times and diffusion lengths checked
(Cristoforetti et al. 2010, Spectrochim. Acta B 65, 86).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from workbench.errors import ValueRangeError

__all__ = [
    "MCWHIRTER_COEFFICIENT",
    "LteCheck",
    "check_mcwhirter",
    "mcwhirter_min_electron_density_per_cm3",
]

#: Coefficient of the McWhirter criterion in cm⁻³ K^{-1/2} eV⁻³ (McWhirter 1965).
MCWHIRTER_COEFFICIENT: float = 1.6e12

_CAUTION = (
    "the McWhirter criterion is necessary, not sufficient, for LTE "
    "(Cristoforetti et al. 2010): also check relaxation times and gradients"
)


def _positive(value: float, name: str, unit: str) -> float:
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise ValueRangeError(
            f"{name} = {value!r} {unit} is not positive", f"give {name} in {unit}"
        )
    return v


def mcwhirter_min_electron_density_per_cm3(temperature_K: float, delta_E_eV: float) -> float:
    """Smallest electron density (cm⁻³) for LTE by the McWhirter criterion.

    Parameters
    ----------
    temperature_K : float
        Plasma temperature.
    delta_E_eV : float
        Largest gap between adjacent relevant levels, eV.

    Returns
    -------
    float
        1.6e12 · √T · ΔE³ in cm⁻³.
    """
    t = _positive(temperature_K, "temperature_K", "K")
    de = _positive(delta_E_eV, "delta_E_eV", "eV")
    return MCWHIRTER_COEFFICIENT * math.sqrt(t) * de**3


@dataclass(frozen=True)
class LteCheck:
    """Outcome of a McWhirter check.

    Attributes
    ----------
    satisfied : bool or None
        Whether the given density meets the criterion; ``None`` if unknown.
    required_per_cm3 : float
        Minimum electron density by McWhirter.
    given_per_cm3 : float or None
        The electron density supplied.
    temperature_K, delta_E_eV : float
        Inputs.
    message : str
        One-line summary including the necessary-not-sufficient caution.
    """

    satisfied: bool | None
    required_per_cm3: float
    given_per_cm3: float | None
    temperature_K: float
    delta_E_eV: float
    message: str

    def to_dict(self) -> dict[str, object]:
        """Return a JSON-friendly dictionary."""
        return {
            "satisfied": self.satisfied,
            "required_per_cm3": self.required_per_cm3,
            "given_per_cm3": self.given_per_cm3,
            "temperature_K": self.temperature_K,
            "delta_E_eV": self.delta_E_eV,
            "message": self.message,
        }


def check_mcwhirter(
    temperature_K: float, electron_density_per_cm3: float | None, delta_E_eV: float
) -> LteCheck:
    """Check a plasma against the McWhirter criterion.

    Parameters
    ----------
    temperature_K : float
        Plasma temperature.
    electron_density_per_cm3 : float or None
        Measured electron density (e.g. from Stark widths); ``None`` if unknown.
    delta_E_eV : float
        Largest relevant gap between adjacent levels.

    Returns
    -------
    LteCheck
        ``satisfied`` is ``None`` when the density is unknown.
    """
    required = mcwhirter_min_electron_density_per_cm3(temperature_K, delta_E_eV)
    head = (
        f"McWhirter needs n_e ≥ {required:.3g} cm⁻³ at T = {temperature_K:g} K, "
        f"ΔE = {delta_E_eV:g} eV"
    )
    if electron_density_per_cm3 is None:
        return LteCheck(
            None,
            required,
            None,
            float(temperature_K),
            float(delta_E_eV),
            f"{head}; electron density unknown, so LTE is not established; {_CAUTION}",
        )
    ne = _positive(electron_density_per_cm3, "electron_density_per_cm3", "cm⁻³")
    ok = ne >= required
    verdict = "met" if ok else "NOT met"
    return LteCheck(
        ok,
        required,
        ne,
        float(temperature_K),
        float(delta_E_eV),
        f"{head}; given {ne:.3g} cm⁻³: criterion {verdict}; {_CAUTION}",
    )
