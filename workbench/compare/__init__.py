"""Questioned-vs-known comparison, exemplar collections, and elements to materials.

* :mod:`~workbench.compare.collections` — named collections of measured known
  samples (exemplars with replicate peak lists), stored as hash-checked
  directories (model in :mod:`~workbench.compare.exemplars`, loading in
  :mod:`~workbench.compare.collection_load`).
* :mod:`~workbench.compare.similarity` — intensity-weighted line overlap and
  log-intensity agreement between two peak lists (descriptive, for ranking).
* :mod:`~workbench.compare.ratios` — chosen line-intensity ratios and the
  ±4 s (optionally floored) replicate intervals.
* :mod:`~workbench.compare.comparison` — the comparison itself: element
  presence/absence and ratios, outcome "cannot be distinguished" or
  "distinguishable", always with its caution.
* :mod:`~workbench.compare.materials` — candidate pigments/materials from
  detected elements, with anachronism flags against a claimed date.
"""

from __future__ import annotations

from workbench.compare.collections import (
    Collection,
    Exemplar,
    Replicate,
    add_exemplar,
    create_collection,
    default_store,
    list_collections,
    load_collection,
    shared_collections_root,
    store_collections_root,
)
from workbench.compare.comparison import (
    CANNOT_DISTINGUISH,
    CAUTION,
    DISTINGUISHABLE,
    NOT_EVALUATED,
    CollectionRanking,
    ComparisonReport,
    compare_peaks,
    compare_to_collection,
    compare_to_exemplar,
)
from workbench.compare.materials import (
    MATERIALS_CAUTIONS,
    Material,
    MaterialsReport,
    candidate_materials,
    load_materials,
)
from workbench.compare.ratios import (
    RatioInterval,
    RatioSpec,
    evaluate_ratio,
    parse_ratio,
    ratio_interval,
)
from workbench.compare.similarity import LineOverlap, Tolerance, line_overlap

__all__ = [
    "CANNOT_DISTINGUISH",
    "CAUTION",
    "DISTINGUISHABLE",
    "MATERIALS_CAUTIONS",
    "NOT_EVALUATED",
    "Collection",
    "CollectionRanking",
    "ComparisonReport",
    "Exemplar",
    "LineOverlap",
    "Material",
    "MaterialsReport",
    "RatioInterval",
    "RatioSpec",
    "Replicate",
    "Tolerance",
    "add_exemplar",
    "candidate_materials",
    "compare_peaks",
    "compare_to_collection",
    "compare_to_exemplar",
    "create_collection",
    "default_store",
    "evaluate_ratio",
    "line_overlap",
    "list_collections",
    "load_collection",
    "load_materials",
    "parse_ratio",
    "ratio_interval",
    "shared_collections_root",
    "store_collections_root",
]
