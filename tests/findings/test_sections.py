"""Tests for workbench/findings/sections.py (plain words, custody rows, decisions)."""

from __future__ import annotations

import pytest

from workbench.findings.sections import custody_rows, decision_rows, limits, plain


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (None, "not set"),
        (True, "yes"),
        (False, "no"),
        ([], "none"),
        ({}, "none"),
        (["Tc", "Pm"], "Tc, Pm"),
        ({"kind": "auto", "value": 0.5}, "kind auto; value 0.5"),
        (10000.0, "10000"),
    ],
)
def test_plain_never_prints_a_repr(value, text):
    assert plain(value) == text


def test_custody_rows_shorten_digests_and_say_who():
    digest = "ab" * 32  # invented
    rows = custody_rows(
        [
            {
                "seq": 1,
                "kind": "received",
                "at": "2026-11-20T10:00:00.000000Z",
                "actor": "A",
                "from_party": "B",
                "to_party": "A",
                "seal_number": "S-1",
            },
            {
                "seq": 2,
                "kind": "note",
                "at": "2026-11-21T10:00:00.000000Z",
                "actor": "A",
                "note": f"file SHA-256 {digest}",
            },
        ]
    )
    assert rows[0]["details"] == "from B; seal S-1" and rows[0]["holder"] == "A"
    assert rows[1]["details"] == f"file SHA-256 {digest[:12]}…"


def test_decision_rows_mark_reversals():
    rows = decision_rows(
        [
            {
                "seq": 1,
                "action": "reject_element",
                "target": "Mg",
                "reason": "r",
                "analyst": "A",
                "decided_at": "2026-11-22T09:00:00.000000Z",
                "lines": [],
                "reverses": None,
            },
            {
                "seq": 2,
                "action": "reverse",
                "target": "decision 1",
                "reason": "s",
                "analyst": "A",
                "decided_at": "2026-11-22T09:05:00.000000Z",
                "lines": [],
                "reverses": 1,
            },
        ]
    )
    assert [r["status"] for r in rows] == ["reversed by decision 2", "in force"]
    assert rows[0]["what"] == "rejected the call"


def test_limits_by_axis():
    optical = {
        "input": {"peak_finding": {"min_snr": 5.0}},
        "lines": [{"tolerance_nm": 0.02}],
        "temperature": {"working_temperature_K": 10000.0},
    }
    text = " ".join(limits(optical, "wavelength", "nm"))
    assert "5 times the noise" in text and "0.020 nm" in text and "10,000 K" in text
    xray = {"lines": [{"tolerance_eV": 104.3}]}
    text = " ".join(limits(xray, "energy", "eV"))
    assert "104 eV" in text and "matrix effects" in text and "temperature" not in text


def test_the_method_paragraph_words_the_evidence_model_not_a_line_count():
    # The class is decided by net evidence (chance corrected for every species
    # tried, closeness, missing-line likelihood; docs/evidence-model.md), not by
    # how many strong lines were found, which the paragraph said until stop 32.
    from workbench.findings.sections import method_paragraph

    text = method_paragraph(
        {"technique": "LIBS", "instrument": "Bench LIBS #2"},
        {"reference_sets": [{"id": "optical", "version": "2026.12.7"}]},
        {"input": {"name": "q.csv", "kind": "spectrum", "medium": "air"}},
        "wavelength",
        "nm",
    )
    assert "coincidence" in text and "every element tried" in text
    assert "should have been seen" in text and "pooled" in text
    assert "how many of its expected strong lines" not in text


@pytest.mark.parametrize(
    ("notes", "words"),
    [
        (["medium not stated; assumed air"], "(air, assumed: the file does not state the medium)"),
        (["medium air (header 'wavelength air (nm)')"], "(air)"),
    ],
)
def test_the_method_paragraph_says_when_the_medium_was_assumed(notes, words):
    # An assumed medium moves every wavelength by 0.1–0.3 nm (air vs vacuum);
    # the sheet must not word the reader's assumption as the file's statement.
    from workbench.findings.sections import method_paragraph

    result = {"input": {"name": "q.csv", "kind": "spectrum", "medium": "air", "notes": notes}}
    text = method_paragraph({}, {}, result, "wavelength", "nm")
    assert f"on a scale of wavelengths in nm {words}" in text
