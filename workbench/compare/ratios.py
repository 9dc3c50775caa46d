"""Line-intensity ratios and replicate intervals for questioned-vs-known comparison.

A ratio is chosen by the user as two reference lines, e.g.
``"Sr:407.771/Ca:393.366"`` (wavelengths in nm in a stated medium, air by
default) or ``"Fe:6.404keV/Mn:5.899keV"`` for an energy axis. In each
replicate the intensity of the *nearest observed peak within tolerance* of
each reference line is taken and their quotient formed.

Interval rules (the known exemplar's replicates give mean x̄ and sample
standard deviation s, ``ddof=1``):

``"4s"``
    Interval x̄ ± k·s with k = 4 by default: the ±4 s criterion used in
    forensic glass comparison by LA-ICP-MS and µXRF/LIBS (ASTM E2330-19
    (LA-ICP-MS glass), ASTM E2926-17 (µXRF glass); from memory — check the
    current edition. From memory too: LA-ICP-MS glass comparison may be in
    ASTM E2927 rather than E2330, which covers solution ICP-MS).
``"4s-floor"``
    The same interval with s replaced by max(s, f·|x̄|), a minimum relative
    standard deviation f (3 % by default), so that a known with unusually
    tight replicates does not give a too narrow interval (the "modified 4 s"
    practice; from memory, not checked against a standard).

Both rules need at least :data:`MIN_KNOWN_REPLICATES` known replicates
(a standard deviation from two values is too uncertain for a ±4 s
interval; common practice, from memory). The questioned value is the mean
of the questioned replicates; the ratio "cannot be distinguished" when that
mean lies inside the interval and is "distinguishable" otherwise.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from workbench.compare._common import element_symbol
from workbench.compare.similarity import Tolerance
from workbench.errors import ComparisonError, InputError

__all__ = [
    "DEFAULT_FLOOR_RSD",
    "DEFAULT_K",
    "MIN_KNOWN_REPLICATES",
    "RULES",
    "LinePosition",
    "RatioInterval",
    "RatioSpec",
    "Rule",
    "evaluate_ratio",
    "line_intensity",
    "parse_ratio",
    "ratio_interval",
]

Rule = Literal["4s", "4s-floor"]
#: Selectable interval rules.
RULES: tuple[str, ...] = ("4s", "4s-floor")
#: Default multiplier of s (ASTM E2330/E2926 ±4 s; from memory).
DEFAULT_K: float = 4.0
#: Default minimum relative standard deviation for "4s-floor" (3 %; from memory).
DEFAULT_FLOOR_RSD: float = 0.03
#: Fewest known replicates for either rule (common practice; from memory).
MIN_KNOWN_REPLICATES: int = 3

_SIDE_RE = re.compile(
    r"^\s*(?P<el>[A-Za-z]{1,3})\s*:\s*(?P<val>[0-9]+(?:\.[0-9]*)?)\s*(?P<unit>nm|eV|keV)?\s*$",
    re.IGNORECASE,
)


@dataclass(frozen=True)
class LinePosition:
    """A reference line chosen for a ratio.

    Attributes
    ----------
    element : str
        Element symbol (label only; the line is found by position).
    position : float
        Position in the canonical unit (nm or eV).
    axis : {"wavelength", "energy"}
        Axis of ``position``.
    medium : {"air", "vacuum"} or None
        Medium of a wavelength; None for energies.
    """

    element: str
    position: float
    axis: str
    medium: str | None

    @property
    def label(self) -> str:
        """``"Sr 407.771 nm (air)"`` or ``"Fe 6404 eV"``."""
        if self.axis == "wavelength":
            return f"{self.element} {self.position:g} nm ({self.medium})"
        return f"{self.element} {self.position:g} eV"

    def on_axis(self, axis: str, medium: str | None) -> float:
        """Position converted to the given peak list's axis and medium."""
        if axis != self.axis:
            raise ComparisonError(
                f"ratio line {self.label} is on the {self.axis} axis but the peak list "
                f"is on the {axis} axis",
                "give ratio lines in nm for wavelength data and in eV/keV for energy data",
            )
        if axis == "energy" or medium == self.medium:
            return self.position
        from workbench.physics.airvac import air_to_vacuum_nm, vacuum_to_air_nm

        if self.medium == "air":
            return float(air_to_vacuum_nm(self.position))
        return float(vacuum_to_air_nm(self.position))


@dataclass(frozen=True)
class RatioSpec:
    """A chosen intensity ratio numerator/denominator."""

    numerator: LinePosition
    denominator: LinePosition

    @property
    def label(self) -> str:
        """E.g. ``"Sr 407.771 nm (air) / Ca 393.366 nm (air)"``."""
        return f"{self.numerator.label} / {self.denominator.label}"

    def to_dict(self) -> dict[str, Any]:
        """JSON form."""
        return {
            "label": self.label,
            "numerator": {
                "element": self.numerator.element,
                "position": self.numerator.position,
                "axis": self.numerator.axis,
                "medium": self.numerator.medium,
            },
            "denominator": {
                "element": self.denominator.element,
                "position": self.denominator.position,
                "axis": self.denominator.axis,
                "medium": self.denominator.medium,
            },
        }


def _parse_side(text: str, whole: str, medium: str) -> LinePosition:
    m = _SIDE_RE.match(text)
    if not m:
        raise InputError(
            f"ratio {whole!r}: {text.strip()!r} is not ELEMENT:POSITION",
            'write e.g. "Sr:407.771/Ca:393.366" (nm) or "Fe:6.404keV/Mn:5.899keV"',
        )
    el = element_symbol(m["el"], f"ratio {whole!r}")
    value = float(m["val"])
    unit = (m["unit"] or "nm").lower()
    if value <= 0:
        raise InputError(f"ratio {whole!r}: position must be positive", "give a line position")
    if unit == "nm":
        return LinePosition(el, value, "wavelength", medium)
    return LinePosition(el, value * (1000.0 if unit == "kev" else 1.0), "energy", None)


def parse_ratio(text: str, medium: str = "air") -> RatioSpec:
    """Parse ``"Sr:407.771/Ca:393.366"`` into a :class:`RatioSpec`.

    Parameters
    ----------
    text : str
        ``ELEMENT:POSITION/ELEMENT:POSITION``; positions in nm unless suffixed
        ``eV`` or ``keV``.
    medium : {"air", "vacuum"}
        Medium of nm positions.

    Returns
    -------
    RatioSpec
        The parsed ratio.
    """
    if medium not in ("air", "vacuum"):
        raise InputError(f"unknown medium {medium!r} for ratio lines", "use air or vacuum")
    parts = text.split("/")
    if len(parts) != 2:
        raise InputError(
            f"ratio {text!r} needs exactly one '/'", 'write e.g. "Sr:407.771/Ca:393.366"'
        )
    num = _parse_side(parts[0], text, medium)
    den = _parse_side(parts[1], text, medium)
    if num.axis != den.axis:
        raise InputError(f"ratio {text!r} mixes nm and eV", "give both lines in the same unit")
    if num.position == den.position:
        raise InputError(f"ratio {text!r} uses the same line twice", "choose two different lines")
    return RatioSpec(num, den)


def line_intensity(peaks, line: LinePosition, tolerance: Tolerance) -> tuple[float, float] | None:
    """Observed position and intensity of the nearest peak within tolerance of ``line``.

    Parameters
    ----------
    peaks : workbench.datamodel.PeakList
        The replicate.
    line : LinePosition
        The reference line.
    tolerance : Tolerance
        Search half-width.

    Returns
    -------
    (float, float) or None
        ``(position, intensity)`` in the peak list's unit and medium, or None
        if no peak lies within tolerance.
    """
    from workbench.compare.similarity import nearest_index

    pos = peaks.positions
    if pos.size == 0:
        return None
    target = line.on_axis(peaks.axis, peaks.medium)
    order = np.argsort(pos, kind="stable")
    j = int(order[nearest_index(pos[order], np.array([target]))[0]])
    if abs(pos[j] - target) > float(tolerance.at(target)) * (1 + 1e-12):
        return None
    return float(pos[j]), float(peaks.intensities[j])


@dataclass(frozen=True)
class RatioInterval:
    """Known-replicate statistics and the acceptance interval of one ratio.

    Attributes
    ----------
    n : int
        Number of known replicates.
    mean, s : float
        Mean and sample standard deviation (ddof=1).
    s_used : float
        s after the rule (the floor may raise it).
    low, high : float
        Interval limits mean ∓ k·s_used.
    rule : str
        Rule name.
    k : float
        Multiplier.
    floor_rsd : float or None
        Relative floor used by ``"4s-floor"``.
    """

    n: int
    mean: float
    s: float
    s_used: float
    low: float
    high: float
    rule: str
    k: float
    floor_rsd: float | None

    def to_dict(self) -> dict[str, Any]:
        """JSON form."""
        return {
            "n_known": self.n,
            "known_mean": self.mean,
            "known_s": self.s,
            "s_used": self.s_used,
            "interval_low": self.low,
            "interval_high": self.high,
            "rule": self.rule,
            "k": self.k,
            "floor_rsd": self.floor_rsd,
        }


def ratio_interval(
    known_values: np.ndarray,
    rule: Rule = "4s",
    k: float = DEFAULT_K,
    floor_rsd: float = DEFAULT_FLOOR_RSD,
    what: str = "ratio",
) -> RatioInterval:
    """Interval from known replicate values under the chosen rule.

    Parameters
    ----------
    known_values : array_like
        One value per known replicate (finite).
    rule : {"4s", "4s-floor"}
        Interval rule (module docstring).
    k : float
        Multiplier of s (4 by default).
    floor_rsd : float
        Minimum relative standard deviation for ``"4s-floor"``.
    what : str
        Name of the quantity, used in error messages.

    Returns
    -------
    RatioInterval
        Statistics and limits.

    Raises
    ------
    ComparisonError
        With fewer than :data:`MIN_KNOWN_REPLICATES` values, or an unknown rule.
    """
    if rule not in RULES:
        raise ComparisonError(f"unknown interval rule {rule!r}", "use --rule 4s or 4s-floor")
    if not (np.isfinite(k) and k > 0):
        raise ComparisonError(f"k = {k!r} must be positive", "use k = 4 (the usual criterion)")
    vals = np.asarray(known_values, dtype=np.float64)
    if vals.size < MIN_KNOWN_REPLICATES:
        raise ComparisonError(
            f"{what}: only {vals.size} known replicate value(s); the {rule} rule needs at "
            f"least {MIN_KNOWN_REPLICATES}",
            f"measure the known at least {MIN_KNOWN_REPLICATES} times and add the replicates",
        )
    if not np.all(np.isfinite(vals)):
        raise ComparisonError(f"{what}: a known replicate value is not finite", "check the data")
    mean = float(vals.mean())
    s = float(vals.std(ddof=1))
    s_used = s
    used_floor: float | None = None
    if rule == "4s-floor":
        if not (np.isfinite(floor_rsd) and 0 < floor_rsd < 1):
            raise ComparisonError(
                f"floor RSD {floor_rsd!r} is outside (0, 1)", "give a fraction, e.g. 0.03 for 3 %"
            )
        used_floor = float(floor_rsd)
        s_used = max(s, floor_rsd * abs(mean))
    return RatioInterval(
        n=int(vals.size),
        mean=mean,
        s=s,
        s_used=s_used,
        low=mean - k * s_used,
        high=mean + k * s_used,
        rule=rule,
        k=float(k),
        floor_rsd=used_floor,
    )


def evaluate_ratio(
    known_values: np.ndarray,
    questioned_values: np.ndarray,
    rule: Rule = "4s",
    k: float = DEFAULT_K,
    floor_rsd: float = DEFAULT_FLOOR_RSD,
    what: str = "ratio",
) -> dict[str, Any]:
    """Compare the questioned mean with the known interval.

    Parameters
    ----------
    known_values, questioned_values : array_like
        Per-replicate values of the ratio.
    rule, k, floor_rsd, what
        As for :func:`ratio_interval`.

    Returns
    -------
    dict
        The interval fields plus ``questioned_values``, ``questioned_mean``,
        ``questioned_s`` (None for one replicate), ``distance_in_s`` and
        ``outcome`` ("cannot be distinguished" or "distinguishable").
    """
    interval = ratio_interval(known_values, rule, k, floor_rsd, what)
    q = np.asarray(questioned_values, dtype=np.float64)
    if q.size == 0 or not np.all(np.isfinite(q)):
        raise ComparisonError(
            f"{what}: no finite questioned value", "check the questioned measurement"
        )
    q_mean = float(q.mean())
    inside = interval.low <= q_mean <= interval.high
    out = interval.to_dict()
    out.update(
        {
            "questioned_values": [float(v) for v in q],
            "questioned_mean": q_mean,
            "questioned_s": float(q.std(ddof=1)) if q.size >= 2 else None,
            "distance_in_s": (q_mean - interval.mean) / interval.s_used
            if interval.s_used > 0
            else None,
            "outcome": "cannot be distinguished" if inside else "distinguishable",
        }
    )
    return out
