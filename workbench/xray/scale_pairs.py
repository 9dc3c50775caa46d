"""Pairs for the energy-scale check before matching: strong peaks one confirmed family explains.

:func:`anchor_pairs` pairs each strong peak with where the blend of the one
line family that explains it peaks at the detector resolution (the family
confirmed by a second line); :func:`_consistent` keeps the largest set of
pairs that one offset-and-gain line explains. The scale is fitted to them,
and judged significant or not, by
:func:`workbench.xray.energy_scale.fit_energy_scale`;
:func:`workbench.xray.prepare.prepare_energy_peaks` applies it.

Apart from :mod:`workbench.xray.prepare` because choosing the pairs is the
energy-scale check's own concept (chance alignments guarded against before
anything is decided), as the pairs after matching are chosen in
:mod:`workbench.matching.xray_scale`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from workbench.xray.detector import blend_maxima

__all__ = [
    "anchor_pairs",
]


def anchor_pairs(
    x: np.ndarray, snr: np.ndarray, fwhm: np.ndarray, ref: Any
) -> tuple[np.ndarray, np.ndarray, np.ndarray, tuple[str, ...]]:
    """Strong peaks explained by exactly one confirmed line family.

    A family (``"Fe K"``) is a candidate for a peak with SNR ≥ 30 when one of
    its main lines (≥ 0.5 of the family's strongest) lies within half the FWHM, and
    is *confirmed* when its strongest line lying more than a FWHM away has
    an observed peak within half a FWHM (Kβ for Kα, Lβ for Lα). Each
    confirmed family gives a candidate pair: the peak's centre and where
    the blend of that family's lines peaks at this resolution;
    :func:`_consistent` keeps the pairs one scale explains.
    """
    if ref is None:
        return np.empty(0), np.empty(0), np.empty(0), ()
    r_sp, r_e, r_rel = ref
    # Relative intensities are fractions of each initial level's emission;
    # put them on a scale where each family's strongest line is 1.
    r_rel = np.nan_to_num(np.asarray(r_rel, dtype=np.float64))
    names, inv = np.unique(np.asarray(r_sp, dtype=str), return_inverse=True)
    top = np.zeros(names.size)
    np.maximum.at(top, inv, r_rel)
    r_rel = np.where(top[inv] > 0, r_rel / top[inv], 0.0)
    strong = np.flatnonzero(np.nan_to_num(snr) >= 30.0)
    confirmed_at: dict[int, list[str]] = {}
    for p in strong:
        half = 0.5 * fwhm[p]
        # M families are not anchors: their line ratios within the family
        # (sub-shell vacancies, Coster-Kronig) are too uncertain to place the
        # blend's maximum to a few eV, and below ~3 keV peaks carry
        # incomplete-charge tails (common practice, no source).
        cands = {
            sp
            for sp in r_sp[(np.abs(r_e - x[p]) <= half) & (r_rel >= 0.5)]
            if not str(sp).endswith(" M")
        }
        confirmed = []
        for sp in sorted(cands):
            mine = r_sp == sp
            far = mine & (np.abs(r_e - x[p]) > fwhm[p]) & (r_rel >= 0.1)
            if not far.any():
                continue
            e_other = r_e[far][np.argmax(r_rel[far])]
            if np.min(np.abs(x - e_other)) <= 0.5 * float(np.interp(e_other, x, fwhm)):
                confirmed.append(sp)
        confirmed_at[int(p)] = confirmed
    seen = {sp for fams in confirmed_at.values() for sp in fams}
    obs, refs, sig, names = [], [], [], []
    for p in strong:
        confirmed = confirmed_at[int(p)]
        # Unambiguous only: no line (≥ 0.1 of its family's strongest) of
        # another family confirmed in this spectrum lies under the peak
        # (Ca Kβ 4013 eV under a peak that Te Lβ1 would also explain).
        under = (np.abs(r_e - x[p]) <= fwhm[p]) & (r_rel >= 0.1)
        others = set(r_sp[under]) & seen
        if others - set(confirmed):
            continue
        sigma = fwhm[p] / 2.3548
        for fam in confirmed:
            # Where the blend of this family's lines peaks, from its main line.
            mine = (r_sp == fam) & (np.abs(r_e - x[p]) <= 2.0 * fwhm[p]) & (r_rel >= 0.01)
            main = mine & (r_rel >= 0.5) & (np.abs(r_e - x[p]) <= half)
            centroid = float(
                blend_maxima(
                    r_e[mine],
                    r_rel[mine],
                    np.zeros(int(np.sum(mine)), dtype=np.intp),
                    np.array([r_e[main][np.argmax(r_rel[main])]], dtype=np.float64),
                    np.array([sigma]),
                    10,
                )[0]
            )
            n_counts = max(float(snr[p]) ** 2, 1.0)
            obs.append(x[p])
            refs.append(centroid)
            sig.append(np.hypot(fwhm[p] / (2.355 * np.sqrt(n_counts)), 2.0))
            names.append(f"{fam} {centroid:.0f} eV")
    return _consistent(np.array(obs), np.array(refs), np.array(sig), names)


def _consistent(
    o: np.ndarray, r: np.ndarray, s: np.ndarray, names: list[str]
) -> tuple[np.ndarray, np.ndarray, np.ndarray, tuple[str, ...]]:
    """The largest set of pairs that one offset-and-gain line explains.

    Every pair of candidate pairs (and every single pair, for an offset only)
    proposes a scale; the proposal explaining the most pairs within
    max(3σ, 20 eV; unresolved blends shift centroids by 10–20 eV) wins
    (ties: the smaller summed residual), if it explains at least two more
    peaks than the unchanged scale. Only its inliers
    are kept, one per observed peak, and only when they are at least three
    on at least two different peaks: a single coincidence must not move the
    whole spectrum.
    """
    n = o.size
    if n < 3:
        return np.empty(0), np.empty(0), np.empty(0), ()
    tol = np.maximum(3.0 * s, 20.0)
    best: tuple[int, float, np.ndarray] | None = None
    models = [(0.0, 1.0)] + [(float(r[i] - o[i]), 1.0) for i in range(n)]
    for i in range(n):
        for j in range(i + 1, n):
            if abs(o[i] - o[j]) >= 1000.0:
                g = (r[i] - r[j]) / (o[i] - o[j])
                if 0.98 <= g <= 1.02:
                    models.append((float(r[i] - g * o[i]), float(g)))
    null: tuple[int, float, np.ndarray] | None = None
    for off, g in models:
        res = np.abs(r - (off + g * o))
        inl = res <= tol
        key = (int(np.unique(o[inl]).size), -float(np.sum(res[inl])))
        if null is None:
            null = (key[0], key[1], inl)  # the calibrated scale (offset 0, gain 1)
        if best is None or key > (best[0], best[1]):
            best = (key[0], key[1], inl)
    assert best is not None and null is not None
    # Occam: the instrument's own calibration stands unless another scale
    # explains at least two more peaks (chance alignments explain one).
    inl = best[2] if best[0] >= null[0] + 2 else null[2]
    # One pair per observed peak: the one closest to the winning line.
    keep = []
    for peak in np.unique(o[inl]):
        cand = np.flatnonzero(inl & (o == peak))
        keep.append(int(cand[0]))
    keep_a = np.array(keep, dtype=int)
    if keep_a.size < 3:
        return np.empty(0), np.empty(0), np.empty(0), ()
    return o[keep_a], r[keep_a], s[keep_a], tuple(names[k] for k in keep_a)
