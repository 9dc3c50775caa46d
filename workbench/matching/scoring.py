"""Per-species evidence, score and verdict.

For each species with at least one candidate pair the engine collects:

found fraction
    Σ expected strength of its lines that have an observed peak, over the
    Σ expected strength of the lines that *should be visible* (predicted
    above the detection limit, or, without intensities, all lines at least
    ``strong_fraction`` of the strongest).
strong lines found
    distinct observed peaks holding a line with expected strength ≥
    ``strong_fraction`` (two lines inside one unresolved peak count once).
missing strong lines
    lines with no peak whose predicted intensity (expected strength × the
    species' intensity scale, the median of observed/expected over its
    matched lines) is at least ``missing_factor`` × the detection limit.
    Each is listed: a strong line that should be there and is not is the
    most telling evidence against an element. A line is *masked* instead
    (not counted either way) when an observed peak at least as strong as its
    prediction lies within three half-windows: it may hide in that wing.
pattern agreement
    Pearson correlation of log observed vs log expected intensity over the
    matched, unshared, unsaturated peaks (needs three or more).
unique lines
    (counted as distinct peaks) matched lines at peaks where no competing species (another plausible
    species with a line of expected strength ≥ ``competitor_min_rel``)
    has a candidate.

Verdict classes, strongest first (``verdict_level``):

3 ``established``
    at least min(3, strong lines in range) and at least 2 strong lines found;
    at least 2 unique lines (1 when the species has ≤ 2 strong lines in
    range); no missing strong line; found fraction ≥ 0.7; chance
    probability ≤ 0.001; pattern correlation ≥ 0.3 when it can be computed.
2 ``probable``
    at least 2 strong lines found, at least 1 unique line, at most 1 missing
    strong line, found fraction ≥ 0.5, chance probability ≤ 0.01.
1 ``possible``
    at least one line found, found fraction ≥ 0.2, at most 2 missing strong
    lines. Includes species whose lines are all shared with others.

Here a *missing strong line* is a missing line (see above) whose expected
strength is ≥ ``strong_fraction``; weaker missing lines lower the found
fraction but do not block a class on their own. The *chance probability*
is the binomial probability that at least as many of the species' strong
lines would have a peak in their windows by coincidence, if the observed
peaks were scattered uniformly with no relation to the species: per line
p = 1 − exp(−2ρ·tol), where ρ is the density of observed peaks at least
30 % as intense as the line's predicted intensity (all peaks when
intensities are unknown). It guards against
species with few listed lines "fitting" a dense spectrum.
0 ``not supported``
    anything weaker. Listed when candidates existed, so that the analyst
    sees what was considered and why it was rejected.

The score (0–1) orders species within a class:
``found_fraction · exp(−0.5·n_missing_strong) · (0.75 + 0.25·max(r, 0)) · u`` with
``u = 1`` if any unique line was found and 0.6 otherwise (``r = 0`` when the
pattern cannot be computed).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["VERDICTS", "SpeciesEvidence", "decide_verdict", "score_of"]

#: Verdict class names by level.
VERDICTS: dict[int, str] = {3: "established", 2: "probable", 1: "possible", 0: "not supported"}


@dataclass
class SpeciesEvidence:
    """Evidence gathered for one species (see module docstring)."""

    code: int
    label: str
    element: str
    ion: int | None
    family: str | None
    n_lines_in_range: int = 0
    n_strong_in_range: int = 0
    found_lines: list[int] = field(default_factory=list)  # reference indices
    found_peaks: list[int] = field(default_factory=list)  # best peak per found line
    missing_lines: list[int] = field(default_factory=list)
    missing_predicted: list[float] = field(default_factory=list)
    shared_lines: list[int] = field(default_factory=list)
    unique_lines: list[int] = field(default_factory=list)
    masked_lines: list[int] = field(default_factory=list)
    missing_strong: list[int] = field(default_factory=list)
    chance_probability: float = 1.0
    n_strong_found: int = 0
    n_unique_peaks: int = 0
    found_fraction: float = 0.0
    pattern_r: float | None = None
    scale: float | None = None
    level: int = 0
    score: float = 0.0

    @property
    def verdict(self) -> str:
        """Name of the verdict class."""
        return VERDICTS[self.level]


def decide_verdict(ev: SpeciesEvidence) -> int:
    """Apply the class rules of the module docstring; return the level."""
    n_found = len(ev.found_lines)
    n_missing_strong = len(ev.missing_strong)
    n_unique = ev.n_unique_peaks
    need_strong = max(2, min(3, ev.n_strong_in_range))
    need_unique = 1 if ev.n_strong_in_range <= 2 else 2
    pattern_ok = ev.pattern_r is None or ev.pattern_r >= 0.3
    if (
        ev.n_strong_found >= need_strong
        and n_unique >= need_unique
        and n_missing_strong == 0
        and ev.found_fraction >= 0.7
        and ev.chance_probability <= 1e-3
        and pattern_ok
    ):
        return 3
    if (
        ev.n_strong_found >= 2
        and n_unique >= 1
        and n_missing_strong <= 1
        and ev.found_fraction >= 0.5
        and ev.chance_probability <= 1e-2
    ):
        return 2
    if n_found >= 1 and ev.found_fraction >= 0.2 and n_missing_strong <= 2:
        return 1
    return 0


def score_of(ev: SpeciesEvidence) -> float:
    """Score in [0, 1] ordering species within a verdict class."""
    r = max(ev.pattern_r or 0.0, 0.0)
    u = 1.0 if ev.unique_lines else 0.6
    s = ev.found_fraction * np.exp(-0.5 * len(ev.missing_strong)) * (0.75 + 0.25 * r) * u
    return float(min(max(s, 0.0), 1.0))
