"""Comparison and materials results carried on a findings sheet."""

from __future__ import annotations

import json

import pytest

from tests.findings.findings_data import make_content_kwargs
from tests.findings.findings_pdftext import pages_text, squash
from workbench.compare import candidate_materials
from workbench.errors import InputError
from workbench.findings.content import build_sheet_content, canonical_json
from workbench.findings.sheet import render_pdf


def _materials_supplement():
    # Ti and Pb and Zn on a work claimed to date from 1850 (invented demo question):
    # titanium white post-dates 1850 (materials table, dates from memory).
    report = candidate_materials({"Ti", "Pb", "Zn"}, claimed_year=1850)
    return {
        "kind": "materials",
        "title": "Candidate materials (claimed date 1850)",
        "text": report.to_text(),
        "data": report.to_dict(),
    }


def test_supplement_is_in_json_and_pdf():
    content = build_sheet_content(**make_content_kwargs(), supplements=[_materials_supplement()])
    data = json.loads(canonical_json(content))
    assert data["supplements"][0]["kind"] == "materials"
    text = squash(" ".join(pages_text(render_pdf(content, compress=False))))
    assert "Comparisons and material candidates" in text
    assert "itanium" in text  # titanium white is named among the candidates


def test_supplement_needs_kind_title_text():
    with pytest.raises(InputError, match="lacks"):
        build_sheet_content(**make_content_kwargs(), supplements=[{"kind": "materials"}])


def test_no_supplements_no_section():
    content = build_sheet_content(**make_content_kwargs())
    assert "supplements" not in content
