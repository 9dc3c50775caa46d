"""Tests for workbench/findings/conclusions.py (summary rows and evidence, invented data)."""

from __future__ import annotations

from workbench.findings.conclusions import build_conclusions
from workbench.findings.decisions import effective_calls


def _line(ref, obs, rel, lid, peak, shared=False):
    return {
        "reference_nm": ref,
        "observed_nm": obs,
        "delta_nm": obs - ref,
        "expected_rel": rel,
        "observed_rel": rel,
        "line_id": lid,
        "peak_index": peak,
        "shared": shared,
    }


RESULT = {  # invented
    "input": {"unit": "nm", "medium": "air"},
    "elements": [
        {
            "species": "Fe I",
            "element": "Fe",
            "verdict": "established",
            "verdict_level": 3,
            "matched_lines": [
                _line(404.5815, 404.5820, 1.0, "fe1", 1),
                _line(404.5830, 404.5820, 0.9, "fe1b", 1),  # same peak as fe1
                _line(438.3545, 438.3550, 0.8, "fe2", 2, shared=True),
                _line(406.3594, 406.3600, 0.5, "fe3", 3),
            ],
            "missing_lines": [],
            "shared_lines": ["fe2"],
        },
        {
            "species": "Cr I",
            "element": "Cr",
            "verdict": "possible",
            "verdict_level": 1,
            "matched_lines": [_line(438.3500, 438.3550, 0.3, "cr1", 2, shared=True)],
            "missing_lines": [],
        },
        {
            "species": "Xx I",
            "element": "Xx",
            "verdict": "not supported",
            "verdict_level": 0,
            "matched_lines": [_line(406.3600, 406.3600, 0.1, "xx1", 3, shared=True)],
            "missing_lines": [],
        },
    ],
    "lines": [
        {"observed_nm": 404.5820, "intensity": 100.0, "tolerance_nm": 0.02, "candidates": []},
        {"observed_nm": 438.3550, "intensity": 80.0, "tolerance_nm": 0.02, "candidates": []},
    ],
    "warnings": [
        {
            "kind": "unresolved_overlap",
            "elements": ["Cr I", "Fe I"],
            "lines": ["fe2", "cr1"],
            "observed": 438.355,
            "settle": {"Fe I": {"found": [404.5815, 406.3594]}, "Cr I": {"found": []}},
        },
        {
            "kind": "unresolved_overlap",
            "elements": ["Fe I", "Xx I"],
            "lines": ["fe3", "xx1"],
            "observed": 406.36,
            "settle": {},
        },
    ],
}


def test_summary_and_evidence():
    out = build_conclusions(RESULT, effective_calls(RESULT), "nm", ["Cr", "Pb"])
    (fe,) = out["summary"]  # Cr only possible: not concluded, not printed
    # Clean lines first, one per observed peak: fe1 (peak 1) then fe3; fe2 is shared.
    assert fe["decisive_lines"][:2] == ["Fe I 404.5815 nm", "Fe I 406.3594 nm"]
    assert fe["interference"] == "decisive lines clear; other lines overlap Cr"
    ev = out["evidence"][0]
    assert [r["competitor"] for r in ev["interference"]] == ["Cr I"]  # supported competitor
    assert ev["interference"][0]["settled_by"] == "404.5815, 406.3594"
    assert ev["unsupported_overlaps"] == 1  # Xx I counted, not named
    assert [n["element"] for n in out["not_found"]] == ["Cr", "Pb"]
    assert out["also_possible"] == ["Cr I"] and out["not_supported_count"] == 1
    assert ev["region"]["centre"] == 404.5815 and ev["region"]["observed"][0] == [404.582, 1.0]


def test_a_class_raised_by_pooling_names_the_pooled_stages():
    # Invented: Qa I alone "possible" (one line, 0.7 dex), raised to "established"
    # by pooling with Qa II (workbench.matching.pooling). The sheet's class words say
    # so, in the words every face uses (presentation.verdict_basis).
    qa1 = {
        "species": "Qa I",
        "element": "Qa",
        "verdict": "established",
        "verdict_level": 3,
        "own_verdict": "possible",
        "own_verdict_level": 1,
        "pooled_with": ["Qa II"],
        "pooled_evidence_dex": 3.6,
        "net_evidence_dex": 0.7,
        "matched_lines": [_line(422.6728, 422.6730, 1.0, "qa1", 0)],
        "missing_lines": [],
    }
    result = {**RESULT, "elements": [qa1], "warnings": []}
    out = build_conclusions(result, effective_calls(result), "nm", [])
    (row,) = out["summary"]
    assert row["class"] == (
        "established (Qa I established [pooled with Qa II: 3.6 dex; alone possible, 0.7 dex])"
    )
