"""Line assignment and interference warnings.

Assignment
    Each observed peak goes to the plausible species (verdict "possible" or
    better) that best explains it: highest verdict, then the largest
    predicted intensity at that peak (the species' intensity scale × its
    expected strength there), then the smallest offset. When a second
    plausible species is predicted at ≥ ``share_ratio`` of the best (or
    intensities are unknown), the peak is marked *shared*. Peaks that no
    plausible species explains are *unassigned*; their candidates, if any,
    are still listed.

Warnings (kind)
    ``unresolved_overlap``
        an observed peak has candidate lines of two or more plausible species
        (X-ray: or the main line of a species that a better one accounts for
        on amplitudes, so that the analyst still sees the overlap).
    ``reference_overlap``
        a strong line of a species called "probable" or better lies within the
        window of a line of another plausible species ("possible" or better),
        even where no peak was seen there; one warning per pair of species,
        naming the closest pair of lines and counting the others.
    ``overlap_ruled_out`` (X-ray only)
        as the X-ray case of ``unresolved_overlap`` above, for a family whose
        own lines already refute it clearly (net evidence ≤
        −:data:`REFUTED_DEX`): no longer an open question, so faces show
        these together as one note (the peak it would share and its strong
        lines that are missing) rather than as interferences.
    Each names both lines, their separation, the resolving power λ/Δλ
    needed to separate them, and for each species the interference-free
    lines that settle the question (found ones support it; strong ones
    missing speak against it).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from workbench.matching.evidence import EvidencePass, ObservedLines
from workbench.matching.reference import ReferenceIndex
from workbench.matching.scoring import PROBABLE_DEX, SpeciesEvidence

__all__ = ["REFUTED_DEX", "PeakAssignment", "assign_peaks", "interference_warnings"]

#: X-ray: a family whose main line a better family accounts for is *clearly
#: refuted*, and its overlap is no longer an open question worth a warning of
#: its own, when its net evidence is at most −REFUTED_DEX: the evidence
#: against it (its strong interference-free lines missing) is at least as
#: strong as the evidence the engine asks for a "probable" call for it
#: (:data:`workbench.matching.scoring.PROBABLE_DEX`, odds ≈ 30:1). The same
#: standard both ways, so no new constant is tuned. Such overlaps are
#: recorded as ``overlap_ruled_out`` and shown as one note.
REFUTED_DEX: float = PROBABLE_DEX


@dataclass(frozen=True)
class PeakAssignment:
    """Assignment of one observed peak (never changed once made)."""

    status: str  # "assigned" | "shared" | "unassigned"
    species: list[int]  # species codes explaining the peak (best first)


# Every peak starts unassigned; one shared instance, since an assignment is
# replaced, never changed: 10,000 fresh ones cost some 7 ms of the full
# engine's ~190 ms on 10,000 random peaks (benchmarks/bench_match.py).
_UNASSIGNED = PeakAssignment("unassigned", [])


def _zero_nan(v):
    """NaN (unknown strength) as 0, for scalars or arrays (cheaper than nan_to_num)."""
    return (
        np.where(np.isfinite(v), v, 0.0)
        if isinstance(v, np.ndarray)
        else (float(v) if v == v else 0.0)
    )


def _predicted_at_peaks(
    ev_pass: EvidencePass, n_obs: int, wanted: set[int] | dict[int, object]
) -> dict[int, np.ndarray]:
    """Sum of expected strength per (species, peak), as dense arrays for the ``wanted`` species."""
    out: dict[int, np.ndarray] = {}
    raw = ev_pass.strengths[ev_pass.pairs.ref]
    known = np.isfinite(raw)
    e = np.where(known, raw, 0.0)
    # One pass over pairs sorted by species instead of one mask per species.
    order = np.argsort(ev_pass.pair_species, kind="stable")
    sp = ev_pass.pair_species[order]
    codes, starts = np.unique(sp, return_index=True)
    ends = np.append(starts[1:], sp.size) if starts.size else starts
    for code, a, b in zip(codes.tolist(), starts.tolist(), ends.tolist(), strict=True):
        if code not in wanted:
            continue
        sel = order[a:b]
        obs_i = ev_pass.pairs.obs[sel]
        total = np.bincount(obs_i, weights=e[sel], minlength=n_obs)
        n_known = np.bincount(obs_i, weights=known[sel], minlength=n_obs)
        n_any = np.bincount(obs_i, minlength=n_obs)
        # Only lines of unknown strength at a peak: the prediction is unknown
        # (NaN), so the species may share the peak; it is never ruled out as 0.
        out[code] = np.where((n_any > 0) & (n_known == 0), np.nan, total)
    return out


def assign_peaks(
    obs: ObservedLines, ev_pass: EvidencePass, share_ratio: float = 0.2
) -> list[PeakAssignment]:
    """Assign every observed peak (see module docstring)."""
    n_obs = obs.position.size
    plausible = {c: ev for c, ev in ev_pass.evidence.items() if ev.level >= 1}
    out = [_UNASSIGNED] * n_obs
    sp = ev_pass.pair_species
    if not plausible or sp.size == 0:
        return out
    # The plausible species with a candidate at each peak, as sorted (peak, species) keys.
    codes = np.fromiter(sorted(plausible), dtype=np.int64, count=len(plausible))
    m = np.isin(sp, codes)
    n_sp = int(sp.max()) + 1
    keys = np.unique(ev_pass.pairs.obs[m].astype(np.int64) * n_sp + sp[m])
    peak_of = (keys // n_sp).tolist()
    code_of = (keys % n_sp).tolist()
    starts = np.flatnonzero(np.diff(keys // n_sp, prepend=-1) != 0).tolist()
    ends = [*starts[1:], len(keys)]
    sums = _predicted_at_peaks(ev_pass, n_obs, plausible)

    def predicted(c: int, p: int) -> float:
        ev = plausible[c]
        e = float(sums[c][p]) if c in sums else float("nan")
        return e * ev.scale if ev.scale is not None else float("nan")

    for a, b in zip(starts, ends, strict=True):
        p = peak_of[a]
        if b - a == 1:
            # One plausible candidate: nothing to rank or share.
            out[p] = PeakAssignment("assigned", [code_of[a]])
            continue

        def key(c: int, p: int = p) -> tuple:
            pred = predicted(c, p)
            return (
                -plausible[c].level,
                -(pred if np.isfinite(pred) else 0.0),
                -plausible[c].score,
                plausible[c].label,
            )

        ranked = sorted(code_of[a:b], key=key)
        best = ranked[0]
        sharing = [best]
        pb = predicted(best, p)
        for c in ranked[1:]:
            pc = predicted(c, p)
            if not (np.isfinite(pb) and np.isfinite(pc)) or pc >= share_ratio * pb:
                sharing.append(c)
        out[p] = PeakAssignment("shared" if len(sharing) > 1 else "assigned", sharing)
    return out


def _settling_lines(
    ev: SpeciesEvidence, index: ReferenceIndex, strengths: np.ndarray, limit: int = 3
) -> dict[str, list[float]]:
    unique = np.asarray(ev.unique_lines, dtype=np.int64)
    order = np.argsort(-_zero_nan(strengths[unique]), kind="stable")
    found = unique[order[:limit]].tolist()
    missing = ev.missing_lines[:limit]
    return {
        "found": [round(float(index.position[i]), 5) for i in found],
        "missing": [round(float(index.position[i]), 5) for i in missing],
    }


def _describe(ev: SpeciesEvidence, settle: dict[str, list[float]], unit: str) -> str:
    parts = []
    if settle["found"]:
        parts.append("found clean " + ", ".join(f"{v:.4f}" for v in settle["found"]) + f" {unit}")
    if settle["missing"]:
        parts.append(
            "strong but missing " + ", ".join(f"{v:.4f}" for v in settle["missing"]) + f" {unit}"
        )
    return f"{ev.label}: " + ("; ".join(parts) if parts else "no interference-free line in range")


class _Settle:
    """Settling lines and their description per species, computed once per warning run.

    A species takes part in many warnings (hundreds in a dense spectrum); its
    settling lines depend only on its evidence, so they are worked out once.
    Each warning gets its own copy of the lists.
    """

    def __init__(self, index: ReferenceIndex, strengths: np.ndarray, unit: str) -> None:
        self.index, self.strengths, self.unit = index, strengths, unit
        self._cache: dict[int, tuple[dict[str, list[float]], str]] = {}

    def __call__(self, ev: SpeciesEvidence) -> tuple[dict[str, list[float]], str]:
        hit = self._cache.get(ev.code)
        if hit is None:
            settle = _settling_lines(ev, self.index, self.strengths)
            hit = self._cache[ev.code] = (settle, _describe(ev, settle, self.unit))
        settle, text = hit
        return {"found": list(settle["found"]), "missing": list(settle["missing"])}, text


def interference_warnings(
    obs: ObservedLines,
    index: ReferenceIndex,
    ev_pass: EvidencePass,
    assignments: list[PeakAssignment],
    *,
    strong_fraction: float,
) -> list[dict[str, object]]:
    """Build the interference warnings (see module docstring)."""
    unit = "nm" if index.axis == "wavelength" else "eV"
    ev_all = ev_pass.evidence
    e = ev_pass.strengths
    pairs = ev_pass.pairs
    warnings: list[dict[str, object]] = []
    seen: set[tuple] = set()
    settle = _Settle(index, e, unit)
    # Pairs of each peak, in pair order (a stable sort; pairs come sorted by
    # peak already, so this is usually the identity).
    by_peak = np.argsort(pairs.obs, kind="stable")
    bounds = np.searchsorted(pairs.obs[by_peak], np.arange(obs.position.size + 1), side="left")
    # 1. Peaks with candidates of two or more plausible species.
    for p, asg in enumerate(assignments):
        if asg.status != "shared":
            continue
        sel = by_peak[bounds[p] : bounds[p + 1]]
        if sel.size == 0:
            continue
        # The strongest candidate line of each sharing species at this peak
        # (the first of equals; unknown strength counts as 0).
        best_line: dict[int, int] = {}
        best_e: dict[int, float] = {}
        refs = pairs.ref[sel]
        for s, r, v in zip(
            ev_pass.pair_species[sel].tolist(), refs.tolist(), e[refs].tolist(), strict=True
        ):
            if s not in asg.species:
                continue
            v = _zero_nan(v)
            if s not in best_line or v > best_e[s]:
                best_line[s], best_e[s] = r, v
        codes = [s for s in asg.species if s in best_line]
        for i, a in enumerate(codes):
            for b in codes[i + 1 :]:
                ra, rb = best_line[a], best_line[b]
                key = ("peak", p, min(a, b), max(a, b))
                if key in seen:
                    continue
                seen.add(key)
                warnings.append(
                    _overlap_warning(
                        "unresolved_overlap",
                        index,
                        ev_all[a],
                        ev_all[b],
                        ra,
                        rb,
                        unit,
                        settle,
                        observed=float(obs.position[p]),
                        peak=p,
                    )
                )
    # 1b. X-ray: a species whose main line a better one accounts for on
    #     amplitudes (workbench.matching.joint) is not plausible, but the
    #     analyst still sees the overlap and the lines that settle it, unless
    #     its own lines already refute it clearly (REFUTED_DEX): then the
    #     same record is an ``overlap_ruled_out`` note, not an interference.
    for b_code, ev_b in sorted(ev_all.items()):
        g_b = ev_b.groups
        if ev_b.level >= 1 or not ev_b.xray or not ev_b.explained_by or "line" not in g_b:
            continue
        main = int(np.argmax(np.where(g_b["known"], g_b["predicted"], -np.inf)))
        p = int(g_b["peak"][main])
        if p < 0 or not g_b["explained"][main] or not assignments[p].species:
            continue
        a_code = assignments[p].species[0]
        g_a = ev_all[a_code].groups
        at_p = np.flatnonzero(g_a["found"] & (g_a["peak"] == p))
        if at_p.size == 0:
            continue
        key = ("peak", p, min(a_code, b_code), max(a_code, b_code))
        if key in seen:
            continue
        seen.add(key)
        w = _overlap_warning(
            "unresolved_overlap",
            index,
            ev_all[a_code],
            ev_b,
            int(g_a["line"][at_p[0]]),
            int(g_b["line"][main]),
            unit,
            settle,
            observed=float(obs.position[p]),
            peak=p,
        )
        if ev_b.net_evidence_dex <= -REFUTED_DEX:
            _rule_out(w, ev_b, settle(ev_b)[0]["missing"], ev_all[a_code].label, unit)
        warnings.append(w)
    # 2. Strong lines of identified species overlapping lines of other plausible
    #    candidates; one warning per species pair (the closest pair of lines),
    #    with the number of overlapping pairs.
    candidates = [c for c, ev in ev_all.items() if ev.level >= 1]
    cand_mask = np.isin(index.species, np.array(candidates, dtype=np.int64))
    usable = ev_pass.usable & cand_mask & (np.nan_to_num(e) >= 0.05)
    other_idx = np.flatnonzero(usable)
    other_pos = index.position[other_idx]
    reported = {tuple(sorted(w["elements"])) for w in warnings}
    by_pair: dict[tuple[int, int], tuple[int, int, int]] = {}
    for code, ev in sorted(ev_all.items()):
        if ev.level < 2:
            continue
        lines = np.asarray(ev.found_lines + ev.missing_lines, dtype=np.int64)
        e_l = e[lines]
        strong = lines[np.where(np.isnan(e_l), 0.0, e_l) >= strong_fraction]
        if strong.size == 0:
            continue
        # Every (strong line, other line within its window) pair at once.
        x = index.position[strong]
        tol = (
            np.interp(x, obs.position, obs.half_window)
            if obs.position.size
            else np.zeros(strong.size)
        )
        lo = np.searchsorted(other_pos, x - tol)
        hi = np.searchsorted(other_pos, x + tol + 1e-12)
        counts = np.maximum(hi - lo, 0)
        n = int(counts.sum())
        if n == 0:
            continue
        k = np.repeat(np.arange(strong.size), counts)
        j = other_idx[
            np.repeat(lo, counts) + np.arange(n) - np.repeat(np.cumsum(counts) - counts, counts)
        ]
        s_j = index.species[j]
        keep = s_j != code
        k, j, s_j = k[keep], j[keep], s_j[keep]
        d = np.abs(x[k] - index.position[j])
        i_line = strong[k]
        # Per other species: the number of pairs and the closest pair (the
        # smallest (separation, line, other line), as min() of the tuples).
        order = np.lexsort((j, i_line, d, s_j))
        s_o = s_j[order]
        first = np.flatnonzero(np.diff(s_o, prepend=-1) != 0)
        n_pairs = np.diff(np.append(first, s_o.size))
        for f, cnt in zip(first.tolist(), n_pairs.tolist(), strict=True):
            o = order[f]
            by_pair[(code, int(s_o[f]))] = (cnt, int(i_line[o]), int(j[o]))
    for (code, s), (n_found, i, j) in sorted(by_pair.items()):
        labels = tuple(sorted([ev_all[code].label, ev_all[s].label]))
        if labels in reported:
            continue
        reported.add(labels)
        w = _overlap_warning(
            "reference_overlap",
            index,
            ev_all[code],
            ev_all[s],
            i,
            j,
            unit,
            settle,
            observed=None,
            peak=None,
        )
        if n_found > 1:
            w["message"] += f" ({n_found} overlapping line pairs in all.)"
        w["n_pairs"] = n_found
        warnings.append(w)
    return warnings


def _overlap_warning(
    kind: str,
    index: ReferenceIndex,
    ev_a: SpeciesEvidence,
    ev_b: SpeciesEvidence,
    line_a: int,
    line_b: int,
    unit: str,
    settle: _Settle,
    *,
    observed: float | None,
    peak: int | None,
) -> dict[str, object]:
    xa, xb = float(index.position[line_a]), float(index.position[line_b])
    sep = abs(xa - xb)
    mean = 0.5 * (xa + xb)
    needed = mean / sep if sep > 0 else float("inf")
    settle_a, describe_a = settle(ev_a)
    settle_b, describe_b = settle(ev_b)
    where = f"observed line at {observed:.4f} {unit}: " if observed is not None else ""
    needed_txt = f"R ≥ {needed:,.0f}" if math.isfinite(needed) else "not separable (same position)"
    message = (
        f"{where}{ev_a.label} {xa:.4f} and {ev_b.label} {xb:.4f} {unit} are within the match "
        f"window (separation {sep:.4f} {unit}; separating them needs {needed_txt}). "
        f"Settle with other lines — {describe_a}; {describe_b}."
    )
    # Elements sorted, and lines and positions in the same order, so that
    # each position belongs to the element beside it (they were in the
    # pair's own order, which the sort could swap).
    pair = sorted([(ev_a.label, line_a, xa), (ev_b.label, line_b, xb)], key=lambda t: t[0])
    return {
        "kind": kind,
        "message": message,
        "elements": [label for label, _, _ in pair],
        "lines": [str(index.line_id[line]) for _, line, _ in pair],
        "positions": [round(x, 6) for _, _, x in pair],
        "separation": round(sep, 6),
        "resolving_power_needed": round(needed, 1) if math.isfinite(needed) else None,
        "observed": round(observed, 6) if observed is not None else None,
        "peak_index": peak,
        "settle": {ev_a.label: settle_a, ev_b.label: settle_b},
    }


def _rule_out(
    w: dict[str, object], ev: SpeciesEvidence, missing: list[float], under: str, unit: str
) -> None:
    """Turn a section-1b warning into an ``overlap_ruled_out`` note (X-ray; in place).

    The record keeps every field of the overlap warning (lines, positions,
    separation, settling lines) so the spectrum fit's decision still joins it
    (:func:`workbench.matching.xray_overlap.annotate_warnings`); the message
    says why the question is closed.
    """

    def energy(v: float) -> str:
        return f"{math.floor(v + 0.5)}"  # 1 eV, half up, as tables print

    at = float(w["observed"])  # type: ignore[arg-type]
    many = len(missing) > 1
    why = (
        ("its strong lines at " if many else "its strong line at ")
        + ", ".join(energy(v) for v in missing)
        + (f" {unit} are missing" if many else f" {unit} is missing")
        if missing
        else "its other lines do not fit the spectrum"
    )
    w["kind"] = "overlap_ruled_out"
    w["ruled_out"] = ev.label
    w["net_evidence_dex"] = round(float(ev.net_evidence_dex), 4)
    w["message"] = (
        f"{ev.label} ruled out on its own lines: one of its lines falls on the {under} peak at "
        f"{energy(at)} {unit}, but {why} (evidence against it "
        f"{-ev.net_evidence_dex:.1f} decades, at least {REFUTED_DEX:g} needed)."
    )
