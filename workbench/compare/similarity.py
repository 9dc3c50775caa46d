"""Line-list similarity between a questioned and a known peak list.

Definition
----------
Two peak lists on the same axis (positions ``x`` in nm or eV, intensities
``I``) are compared in three steps.

1. **Weights.** Each list's intensities are normalised to sum to one,
   ``w = I / ΣI`` (negative intensities count as 0). If a list has no usable
   intensities at all, every line gets the weight ``1/n`` and a note says so.
2. **Pairing.** A questioned line *i* and a known line *j* are paired when
   each is the other's nearest line (mutual nearest neighbours, found with
   ``numpy.searchsorted`` on the sorted positions, no loop over line pairs)
   and ``|x_i − x_j| ≤ tol``. The tolerance is either fixed (nm or eV) or
   derived from a resolving power ``R`` as ``tol = x̄ / R`` at the pair's mean
   position ``x̄`` (the instrument's resolution element, λ/Δλ = R). Mutual
   nearest pairing is one-to-one, so no line is used twice.
3. **Scores.**

   * ``line_overlap`` = Σ_pairs min(w_q, w_k) / (Σ_pairs max(w_q, w_k)
     + Σ_unpaired w_q + Σ_unpaired w_k): the weighted Jaccard (Ruzicka)
     similarity of the two weight vectors, an unpaired line counting as paired
     with a zero weight. It is 1 only when every line is paired and the
     normalised intensities agree, 0 when no line is paired. Because both
     weight vectors sum to one it equals ``S / (2 − S)`` with ``S`` = Σ_pairs
     min(w_q, w_k).
   * ``intensity_agreement`` = Pearson correlation of log10 intensities of the
     paired lines (None for fewer than 3 pairs with positive intensities):
     line overlap rewards shared strong lines, this term checks that the
     *relative* intensities follow the same pattern, and logarithms keep one
     dominant line from deciding it.

Rationale: intensity weighting makes the strong lines (those an analyst
would look at first) dominate, the min/max form is bounded and symmetric, and
unpaired lines lower the score in proportion to their strength, so a strong
line present in only one list counts heavily while a weak one hardly does.
The score is descriptive (used to rank exemplars in a collection); it is not
a decision criterion. The decision criteria are in
:mod:`workbench.compare.comparison` (element presence/absence, line-intensity
ratios against replicate intervals).

The calculation is deterministic: stable sorts, and ties in distance resolve
to the lower position.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from workbench.errors import ComparisonError, ValueRangeError

__all__ = [
    "LineOverlap",
    "Tolerance",
    "line_overlap",
    "nearest_index",
]


@dataclass(frozen=True)
class Tolerance:
    """Pairing tolerance on the peak-list axis.

    Attributes
    ----------
    fixed : float or None
        Fixed half-width in the canonical unit (nm or eV).
    resolving_power : float or None
        Resolving power R; the tolerance at position x is x / R.
    """

    fixed: float | None = None
    resolving_power: float | None = None

    def __post_init__(self) -> None:
        if (self.fixed is None) == (self.resolving_power is None):
            raise ValueRangeError(
                "give exactly one of a fixed tolerance or a resolving power",
                "use --tolerance-nm/--tolerance-eV or --resolving-power, not both",
            )
        value = self.fixed if self.fixed is not None else self.resolving_power
        if not (np.isfinite(value) and value > 0):
            raise ValueRangeError(
                f"tolerance value {value!r} must be a positive number",
                "give e.g. --tolerance-nm 0.05 or --resolving-power 5000",
            )

    def at(self, position: np.ndarray | float) -> np.ndarray:
        """Tolerance at the given position(s), in the axis unit."""
        pos = np.asarray(position, dtype=np.float64)
        if self.fixed is not None:
            return np.full_like(pos, self.fixed)
        return pos / float(self.resolving_power)  # type: ignore[arg-type]

    def to_dict(self) -> dict[str, Any]:
        """JSON form."""
        if self.fixed is not None:
            return {"kind": "fixed", "value": self.fixed}
        return {"kind": "resolving_power", "value": self.resolving_power}


def nearest_index(sorted_positions: np.ndarray, targets: np.ndarray) -> np.ndarray:
    """Index of the nearest element of ``sorted_positions`` for each target.

    Ties go to the lower position. ``sorted_positions`` must be non-empty and
    sorted ascending.
    """
    ref = np.asarray(sorted_positions, dtype=np.float64)
    t = np.asarray(targets, dtype=np.float64)
    right = np.clip(np.searchsorted(ref, t, side="left"), 0, ref.size - 1)
    left = np.clip(right - 1, 0, ref.size - 1)
    take_left = np.abs(t - ref[left]) <= np.abs(ref[right] - t)
    return np.where(take_left, left, right)


def _weights(intensity: np.ndarray) -> tuple[np.ndarray, str | None]:
    inten = np.asarray(intensity, dtype=np.float64)
    usable = np.where(np.isfinite(inten), np.clip(inten, 0.0, None), 0.0)
    total = usable.sum()
    if total <= 0:
        return np.full(inten.size, 1.0 / inten.size), "no usable intensities: equal weights"
    note = None
    if not np.all(np.isfinite(inten)):
        note = f"{int((~np.isfinite(inten)).sum())} line(s) without intensity weighted 0"
    return usable / total, note


@dataclass(frozen=True)
class LineOverlap:
    """Result of :func:`line_overlap`.

    Attributes
    ----------
    line_overlap : float
        Weighted Jaccard similarity in [0, 1] (see module docstring).
    intensity_agreement : float or None
        Pearson correlation of log10 intensities of paired lines.
    n_questioned, n_known, n_pairs : int
        Line counts.
    paired_fraction_questioned, paired_fraction_known : float
        Share of each list's lines that were paired.
    mean_offset : float or None
        Mean (known − questioned) position of paired lines, axis unit.
    notes : tuple of str
        What was decided along the way.
    """

    line_overlap: float
    intensity_agreement: float | None
    n_questioned: int
    n_known: int
    n_pairs: int
    paired_fraction_questioned: float
    paired_fraction_known: float
    mean_offset: float | None
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        """JSON form."""
        return {
            "line_overlap": self.line_overlap,
            "intensity_agreement": self.intensity_agreement,
            "n_questioned_lines": self.n_questioned,
            "n_known_lines": self.n_known,
            "n_paired_lines": self.n_pairs,
            "paired_fraction_questioned": self.paired_fraction_questioned,
            "paired_fraction_known": self.paired_fraction_known,
            "mean_offset": self.mean_offset,
            "notes": list(self.notes),
        }


def line_overlap(
    questioned_positions: np.ndarray,
    questioned_intensities: np.ndarray,
    known_positions: np.ndarray,
    known_intensities: np.ndarray,
    tolerance: Tolerance,
) -> LineOverlap:
    """Intensity-weighted line overlap of two peak lists (see module docstring).

    Parameters
    ----------
    questioned_positions, known_positions : numpy.ndarray
        Line positions in the same unit and medium (any order).
    questioned_intensities, known_intensities : numpy.ndarray
        Intensities (NaN where unknown).
    tolerance : Tolerance
        Pairing tolerance.

    Returns
    -------
    LineOverlap
        Scores and counts.
    """
    xq = np.asarray(questioned_positions, dtype=np.float64)
    xk = np.asarray(known_positions, dtype=np.float64)
    iq = np.asarray(questioned_intensities, dtype=np.float64)
    ik = np.asarray(known_intensities, dtype=np.float64)
    if xq.shape != iq.shape or xk.shape != ik.shape:
        raise ComparisonError(
            "positions and intensities differ in length", "give one intensity per line"
        )
    if xq.size == 0 or xk.size == 0:
        raise ComparisonError(
            "a peak list to compare is empty", "give peak lists with at least one line"
        )
    if not (np.all(np.isfinite(xq)) and np.all(np.isfinite(xk))):
        raise ComparisonError("a line position is NaN or infinite", "remove those lines")
    oq = np.argsort(xq, kind="stable")
    ok = np.argsort(xk, kind="stable")
    xq, iq, xk, ik = xq[oq], iq[oq], xk[ok], ik[ok]
    wq, note_q = _weights(iq)
    wk, note_k = _weights(ik)
    notes = [f"questioned: {note_q}"] if note_q else []
    if note_k:
        notes.append(f"known: {note_k}")

    nn_q = nearest_index(xk, xq)  # for each questioned line, nearest known
    nn_k = nearest_index(xq, xk)  # for each known line, nearest questioned
    q_idx = np.arange(xq.size)
    mutual = nn_k[nn_q] == q_idx
    within = np.abs(xk[nn_q] - xq) <= tolerance.at(0.5 * (xk[nn_q] + xq)) * (1 + 1e-12)
    paired_q = q_idx[mutual & within]
    paired_k = nn_q[paired_q]

    s_min = float(np.minimum(wq[paired_q], wk[paired_k]).sum())
    s_max = float(np.maximum(wq[paired_q], wk[paired_k]).sum())
    unpaired_q = float(wq.sum() - wq[paired_q].sum())
    unpaired_k = float(wk.sum() - wk[paired_k].sum())
    denom = s_max + unpaired_q + unpaired_k
    score = s_min / denom if denom > 0 else 0.0

    agreement: float | None = None
    good = (iq[paired_q] > 0) & (ik[paired_k] > 0)
    if int(good.sum()) >= 3:
        a = np.log10(iq[paired_q][good])
        b = np.log10(ik[paired_k][good])
        if np.std(a) > 0 and np.std(b) > 0:
            agreement = float(np.corrcoef(a, b)[0, 1])
        else:
            notes.append("intensity agreement undefined: paired intensities are all equal")
    else:
        notes.append("intensity agreement needs at least 3 paired lines with intensities")
    offset = float(np.mean(xk[paired_k] - xq[paired_q])) if paired_q.size else None
    return LineOverlap(
        line_overlap=score,
        intensity_agreement=agreement,
        n_questioned=int(xq.size),
        n_known=int(xk.size),
        n_pairs=int(paired_q.size),
        paired_fraction_questioned=paired_q.size / xq.size,
        paired_fraction_known=paired_k.size / xk.size,
        mean_offset=offset,
        notes=tuple(notes),
    )
