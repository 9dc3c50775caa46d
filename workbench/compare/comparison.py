"""Questioned-vs-known comparison against one exemplar or a whole collection.

Two decision criteria, in the manner of forensic glass comparison practice,
and one descriptive score:

1. **Element presence/absence.** Elements present in the questioned item
   (from an identification-engine result, verdict level ≥ 2, or a plain set
   of symbols) are set against those recorded for the known exemplar. An
   element reported in one and not the other makes the items
   *distinguishable* on that element. A missing element can also mean a
   concentration near the detection limit, so such a difference should be
   checked in the raw spectra.
2. **Line-intensity ratios.** For each ratio the user chose
   (:mod:`workbench.compare.ratios`), the known replicates give an interval
   (mean ± k·s, or the floored variant); the mean questioned ratio inside the
   interval *cannot be distinguished*, outside it is *distinguishable*.
3. **Line-list similarity** (:mod:`workbench.compare.similarity`) between
   every questioned and every known replicate; reported and used to rank
   exemplars, never to decide.

The overall outcome is "distinguishable" if any criterion distinguishes,
"cannot be distinguished" if at least one criterion was evaluated and none
distinguishes, and "not evaluated" if neither criterion could be applied.
Every result carries :data:`CAUTION`. The output never uses the words of an
identity claim: an indistinguishable result does not establish a common
origin.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from workbench.compare._common import canonical_json, jsonable, present_elements
from workbench.compare.collections import Collection
from workbench.compare.ratios import (
    DEFAULT_FLOOR_RSD,
    DEFAULT_K,
    RatioSpec,
    Rule,
    evaluate_ratio,
    line_intensity,
)
from workbench.compare.similarity import Tolerance, line_overlap
from workbench.errors import ComparisonError

__all__ = [
    "CANNOT_DISTINGUISH",
    "CAUTION",
    "DISTINGUISHABLE",
    "NOT_EVALUATED",
    "CollectionRanking",
    "ComparisonReport",
    "compare_peaks",
    "compare_to_collection",
    "compare_to_exemplar",
]

CANNOT_DISTINGUISH = "cannot be distinguished"
DISTINGUISHABLE = "distinguishable"
NOT_EVALUATED = "not evaluated"

#: Caution carried by every comparison result.
CAUTION = (
    "'Cannot be distinguished' means only that no difference was found with the criteria, "
    "lines and data used here; it does not mean that the questioned and known items have a "
    "common origin, since other items may give indistinguishable results. 'Distinguishable' "
    "applies to the criteria listed. The result must be interpreted by a qualified examiner "
    "under the laboratory's procedures."
)


def _positions(peaks, axis: str, medium: str | None) -> np.ndarray:
    """Peak positions on the given axis, converted to ``medium`` if needed."""
    if peaks.axis != axis:
        name = peaks.source.name if peaks.source else "a peak list"
        raise ComparisonError(
            f"{name} is on the {peaks.axis} axis, the questioned data on the {axis} axis",
            "compare measurements made on the same kind of axis (wavelength or energy)",
        )
    pos = peaks.positions
    if axis == "energy" or peaks.medium == medium:
        return pos
    from workbench.physics.airvac import air_to_vacuum_nm, vacuum_to_air_nm

    return air_to_vacuum_nm(pos) if peaks.medium == "air" else vacuum_to_air_nm(pos)


def _name(peaks, fallback: str) -> str:
    return peaks.source.name if peaks.source is not None else fallback


def _source(peaks, fallback: str) -> dict[str, Any]:
    if peaks.source is None:
        return {"name": fallback, "sha256": None}
    return {"name": peaks.source.name, "sha256": peaks.source.sha256}


def _ratio_values(replicates: Sequence, spec: RatioSpec, tol: Tolerance, who: str) -> list[float]:
    values = []
    for i, peaks in enumerate(replicates):
        name = _name(peaks, f"replicate {i + 1}")
        found = []
        for line in (spec.numerator, spec.denominator):
            hit = line_intensity(peaks, line, tol)
            if hit is None:
                raise ComparisonError(
                    f"ratio {spec.label}: no peak within tolerance of {line.label} in {who} "
                    f"replicate {name!r}",
                    "choose lines present in every replicate, or widen the tolerance",
                )
            found.append(hit[1])
        num, den = found
        if not (np.isfinite(num) and np.isfinite(den)) or den <= 0 or num < 0:
            raise ComparisonError(
                f"ratio {spec.label}: intensities in {who} replicate {name!r} are missing, "
                f"negative or zero ({num!r}/{den!r})",
                "use peak lists with positive intensities for the chosen lines",
            )
        values.append(num / den)
    return values


def _element_comparison(questioned: set[str] | None, known: set[str] | None) -> dict[str, Any]:
    if questioned is None or known is None:
        missing = "questioned" if questioned is None else "known"
        return {
            "evaluated": False,
            "reason": f"no element results for the {missing} item",
            "outcome": NOT_EVALUATED,
            "per_element": [],
        }
    rows = []
    for el in sorted(questioned | known):
        q, k = el in questioned, el in known
        rows.append(
            {
                "element": el,
                "questioned": "present" if q else "not detected",
                "known": "present" if k else "not detected",
                "outcome": CANNOT_DISTINGUISH if q == k else DISTINGUISHABLE,
            }
        )
    differ = [r["element"] for r in rows if r["outcome"] == DISTINGUISHABLE]
    return {
        "evaluated": True,
        "questioned_present": sorted(questioned),
        "known_present": sorted(known),
        "per_element": rows,
        "differing_elements": differ,
        "outcome": DISTINGUISHABLE if differ else CANNOT_DISTINGUISH,
        "note": "an element reported in one item only may lie near the detection limit in "
        "the other; check the raw spectra before relying on it",
    }


@dataclass(frozen=True)
class ComparisonReport:
    """Questioned item against one known exemplar.

    Attributes
    ----------
    data : dict
        The full result (see :meth:`to_dict`).
    """

    data: dict[str, Any] = field(default_factory=dict)

    @property
    def outcome(self) -> str:
        """Overall outcome string."""
        return self.data["overall"]["outcome"]

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly dictionary (floats rounded to 6 significant figures)."""
        return jsonable(self.data)

    def to_json(self) -> str:
        """Deterministic JSON text."""
        return canonical_json(self.data)

    def to_text(self) -> str:
        """Plain-text summary for the terminal."""
        d = self.to_dict()
        lines = [
            f"Questioned: {', '.join(s['name'] for s in d['questioned']['sources'])}",
            f"Known: {d['known']['exemplar']} ({d['known']['material'] or 'material not given'}) "
            f"in collection {d['known']['collection']} v{d['known']['collection_version']}",
            f"Overall: {d['overall']['outcome'].upper()}",
        ]
        for reason in d["overall"]["distinguishing"]:
            lines.append(f"  - {reason}")
        el = d["elements"]
        if el["evaluated"]:
            lines.append(f"Elements: {el['outcome']}")
            for row in el["per_element"]:
                lines.append(
                    f"  {row['element']:<3} questioned {row['questioned']:<12} "
                    f"known {row['known']:<12} {row['outcome']}"
                )
        else:
            lines.append(f"Elements: not evaluated ({el['reason']})")
        for r in d["ratios"]:
            lines.append(
                f"Ratio {r['label']}: questioned {r['questioned_mean']:.4g}, known "
                f"{r['known_mean']:.4g} ± {r['k']:g}·{r['s_used']:.3g} "
                f"[{r['interval_low']:.4g}, {r['interval_high']:.4g}] (n={r['n_known']}, "
                f"{r['rule']}): {r['outcome']}"
            )
        sim = d["line_similarity"]
        agree = sim["mean_intensity_agreement"]
        lines.append(
            f"Line similarity (descriptive): overlap {sim['mean_line_overlap']:.3f} "
            f"(range {sim['min_line_overlap']:.3f}-{sim['max_line_overlap']:.3f}), "
            f"log-intensity correlation {'n/a' if agree is None else f'{agree:.3f}'}"
        )
        lines.append(f"Caution: {d['caution']}")
        return "\n".join(lines) + "\n"


def compare_peaks(
    questioned: Sequence,
    known: Sequence,
    *,
    tolerance: Tolerance,
    ratios: Sequence[RatioSpec] = (),
    rule: Rule = "4s",
    k: float = DEFAULT_K,
    floor_rsd: float = DEFAULT_FLOOR_RSD,
    questioned_elements: Mapping[str, Any] | Iterable[str] | None = None,
    known_elements: Mapping[str, Any] | Iterable[str] | None = None,
    known_info: Mapping[str, Any] | None = None,
) -> ComparisonReport:
    """Compare questioned replicates with known replicates.

    Parameters
    ----------
    questioned, known : sequence of PeakList
        Replicate peak lists (at least one questioned; the known count must
        satisfy the rule when ratios are given).
    tolerance : Tolerance
        Line pairing and search tolerance.
    ratios : sequence of RatioSpec
        Intensity ratios to compare.
    rule, k, floor_rsd
        Interval rule (:func:`workbench.compare.ratios.ratio_interval`).
    questioned_elements, known_elements : engine result or set of str, optional
        Elements present in each item.
    known_info : mapping, optional
        Descriptive fields of the known (collection, exemplar, material ...).

    Returns
    -------
    ComparisonReport
        The result.
    """
    if not questioned:
        raise ComparisonError("no questioned measurement given", "give at least one peak list")
    if not known:
        raise ComparisonError("the known exemplar has no replicates", "add replicates to it")
    axis = questioned[0].axis
    medium = questioned[0].medium
    q_pos = [_positions(p, axis, medium) for p in questioned]
    k_pos = [_positions(p, axis, medium) for p in known]

    sims = []
    for i, qp in enumerate(questioned):
        for j, kp in enumerate(known):
            res = line_overlap(q_pos[i], qp.intensities, k_pos[j], kp.intensities, tolerance)
            entry = res.to_dict()
            entry["questioned"] = _name(qp, f"questioned {i + 1}")
            entry["known"] = _name(kp, f"known {j + 1}")
            sims.append(entry)
    overlaps = np.array([s["line_overlap"] for s in sims])
    agreements = [s["intensity_agreement"] for s in sims if s["intensity_agreement"] is not None]

    ratio_rows = []
    for spec in ratios:
        kv = _ratio_values(known, spec, tolerance, "known")
        qv = _ratio_values(questioned, spec, tolerance, "questioned")
        row = evaluate_ratio(np.array(kv), np.array(qv), rule, k, floor_rsd, spec.label)
        row["label"] = spec.label
        row["lines"] = spec.to_dict()
        row["known_values"] = kv
        ratio_rows.append(row)

    q_el = (
        present_elements(questioned_elements, "questioned elements")
        if questioned_elements is not None
        else None
    )
    k_el = (
        present_elements(known_elements, "known elements") if known_elements is not None else None
    )
    elements = _element_comparison(q_el, k_el)

    distinguishing = [
        f"element {r['element']}: questioned {r['questioned']}, known {r['known']}"
        for r in elements["per_element"]
        if r["outcome"] == DISTINGUISHABLE
    ]
    distinguishing += [
        f"ratio {r['label']}: questioned mean {r['questioned_mean']:.4g} outside "
        f"[{r['interval_low']:.4g}, {r['interval_high']:.4g}]"
        for r in ratio_rows
        if r["outcome"] == DISTINGUISHABLE
    ]
    n_criteria = int(elements["evaluated"]) + len(ratio_rows)
    if n_criteria == 0:
        overall = NOT_EVALUATED
    elif distinguishing:
        overall = DISTINGUISHABLE
    else:
        overall = CANNOT_DISTINGUISH
    info = dict(known_info or {})
    data = {
        "kind": "questioned-vs-known comparison",
        "questioned": {
            "sources": [_source(p, f"questioned {i + 1}") for i, p in enumerate(questioned)],
            "n_replicates": len(questioned),
            "axis": axis,
            "medium": medium,
        },
        "known": {
            "collection": info.get("collection"),
            "collection_version": info.get("collection_version"),
            "exemplar": info.get("exemplar"),
            "material": info.get("material", ""),
            "origin": info.get("origin", ""),
            "sources": [_source(p, f"known {j + 1}") for j, p in enumerate(known)],
            "n_replicates": len(known),
        },
        "parameters": {
            "tolerance": tolerance.to_dict(),
            "tolerance_unit": "nm" if axis == "wavelength" else "eV",
            "rule": rule,
            "k": k,
            "floor_rsd": floor_rsd if rule == "4s-floor" else None,
        },
        "line_similarity": {
            "per_replicate_pair": sims,
            "mean_line_overlap": float(overlaps.mean()),
            "min_line_overlap": float(overlaps.min()),
            "max_line_overlap": float(overlaps.max()),
            "mean_intensity_agreement": float(np.mean(agreements)) if agreements else None,
            "role": "descriptive only; used for ranking, not as a criterion",
        },
        "elements": elements,
        "ratios": ratio_rows,
        "overall": {
            "outcome": overall,
            "criteria_evaluated": n_criteria,
            "distinguishing": distinguishing,
        },
        "caution": CAUTION,
    }
    return ComparisonReport(data)


def compare_to_exemplar(
    questioned: Sequence,
    collection: Collection,
    exemplar_id: str,
    *,
    tolerance: Tolerance,
    ratios: Sequence[RatioSpec] = (),
    rule: Rule = "4s",
    k: float = DEFAULT_K,
    floor_rsd: float = DEFAULT_FLOOR_RSD,
    questioned_elements: Mapping[str, Any] | Iterable[str] | None = None,
) -> ComparisonReport:
    """Compare questioned replicates with one exemplar of a loaded collection.

    Parameters
    ----------
    questioned : sequence of PeakList
        Questioned replicates.
    collection : Collection
        A collection from :func:`~workbench.compare.collections.load_collection`.
    exemplar_id : str
        The known exemplar.
    tolerance, ratios, rule, k, floor_rsd, questioned_elements
        As for :func:`compare_peaks`.

    Returns
    -------
    ComparisonReport
        The result.
    """
    ex = collection.exemplar(exemplar_id)
    known = collection.read_replicates(exemplar_id)
    return compare_peaks(
        questioned,
        known,
        tolerance=tolerance,
        ratios=ratios,
        rule=rule,
        k=k,
        floor_rsd=floor_rsd,
        questioned_elements=questioned_elements,
        known_elements=list(ex.elements) if ex.elements else None,
        known_info={
            "collection": collection.id,
            "collection_version": collection.version,
            "exemplar": ex.id,
            "material": ex.material,
            "origin": ex.origin,
        },
    )


@dataclass(frozen=True)
class CollectionRanking:
    """Questioned item against every exemplar of a collection.

    Attributes
    ----------
    data : dict
        ``{"collection", "entries": [...], "caution"}``; entries ranked by
        mean line overlap (descending), then exemplar id.
    reports : tuple of ComparisonReport
        The per-exemplar reports, in ranked order.
    """

    data: dict[str, Any]
    reports: tuple[ComparisonReport, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly dictionary."""
        return jsonable(self.data)

    def to_json(self) -> str:
        """Deterministic JSON text."""
        return canonical_json(self.data)

    def to_text(self) -> str:
        """Plain-text ranking table."""
        d = self.to_dict()
        lines = [
            f"Collection {d['collection']} v{d['collection_version']}: "
            f"{len(d['entries'])} exemplar(s), ranked by line overlap (descriptive)",
        ]
        for e in d["entries"]:
            if e["compared"]:
                lines.append(
                    f"  {e['rank']:>2}. {e['exemplar']:<20} overlap {e['mean_line_overlap']:.3f}  "
                    f"{e['outcome']}"
                    + (f" ({'; '.join(e['distinguishing'])})" if e["distinguishing"] else "")
                )
            else:
                lines.append(f"   -  {e['exemplar']:<20} not compared: {e['reason']}")
        lines.append(f"Caution: {d['caution']}")
        return "\n".join(lines) + "\n"


def compare_to_collection(
    questioned: Sequence,
    collection: Collection,
    *,
    tolerance: Tolerance,
    ratios: Sequence[RatioSpec] = (),
    rule: Rule = "4s",
    k: float = DEFAULT_K,
    floor_rsd: float = DEFAULT_FLOOR_RSD,
    questioned_elements: Mapping[str, Any] | Iterable[str] | None = None,
) -> CollectionRanking:
    """Compare questioned replicates with every exemplar and rank them.

    An exemplar that cannot be compared as asked (too few replicates for the
    rule, a chosen line missing, another axis) is listed with the reason
    instead of stopping the whole ranking.

    Parameters
    ----------
    questioned : sequence of PeakList
        Questioned replicates.
    collection : Collection
        The loaded collection.
    tolerance, ratios, rule, k, floor_rsd, questioned_elements
        As for :func:`compare_peaks`.

    Returns
    -------
    CollectionRanking
        Ranked entries and the per-exemplar reports.
    """
    if not collection.exemplars:
        raise ComparisonError(
            f"collection {collection.id!r} has no exemplars",
            "add exemplars with 'workbench collection add'",
        )
    done: list[tuple[float, str, ComparisonReport]] = []
    skipped: list[dict[str, Any]] = []
    for ex in collection.exemplars:
        try:
            rep = compare_to_exemplar(
                questioned,
                collection,
                ex.id,
                tolerance=tolerance,
                ratios=ratios,
                rule=rule,
                k=k,
                floor_rsd=floor_rsd,
                questioned_elements=questioned_elements,
            )
        except ComparisonError as exc:
            skipped.append({"exemplar": ex.id, "compared": False, "reason": str(exc)})
            continue
        done.append((rep.data["line_similarity"]["mean_line_overlap"], ex.id, rep))
    done.sort(key=lambda t: (-round(t[0], 12), t[1]))
    entries = []
    for rank, (score, ex_id, rep) in enumerate(done, start=1):
        entries.append(
            {
                "rank": rank,
                "exemplar": ex_id,
                "material": rep.data["known"]["material"],
                "compared": True,
                "mean_line_overlap": score,
                "outcome": rep.outcome,
                "distinguishing": rep.data["overall"]["distinguishing"],
            }
        )
    entries.extend(sorted(skipped, key=lambda e: e["exemplar"]))
    data = {
        "kind": "questioned-vs-collection comparison",
        "collection": collection.id,
        "collection_version": collection.version,
        "entries": entries,
        "reports": {rep.data["known"]["exemplar"]: rep.data for _, _, rep in done},
        "caution": CAUTION,
    }
    return CollectionRanking(data=data, reports=tuple(r for _, _, r in done))
