"""Tests for workbench/findings/sheet.py (PDF rendering)."""

from __future__ import annotations

import copy
import re
import shutil
import subprocess

import pytest

from tests.findings.findings_data import RESULT, make_content_kwargs
from tests.findings.findings_pdftext import pages_text, squash
from workbench.errors import InputError
from workbench.findings.content import CAUTIONS, build_sheet_content
from workbench.findings.sheet import FONT_DIR, nice_ticks, render_pdf


@pytest.fixture(scope="module")
def content():
    return build_sheet_content(**make_content_kwargs())


@pytest.fixture(scope="module")
def pdf(content):
    return render_pdf(content)


@pytest.fixture(scope="module")
def text(pdf):
    return squash(" ".join(pages_text(pdf)))


def test_pdf_header_and_determinism(content, pdf):
    assert pdf.startswith(b"%PDF-")  # PDF file header, ISO 32000-1 section 7.5.2
    assert pdf.rstrip().endswith(b"%%EOF")  # end-of-file marker, ISO 32000-1 section 7.5.5
    again = render_pdf(build_sheet_content(**make_content_kwargs()))
    assert again == pdf  # byte-identical
    # The creation date is the issue time (PDF date format, ISO 32000-1 section 7.9.4).
    assert b"D:20260314093000Z" in pdf


def test_different_issue_time_changes_bytes(pdf):
    other = render_pdf(build_sheet_content(**make_content_kwargs(issued_at="2026-03-14T09:30:01Z")))
    assert other != pdf


def test_fonts_are_embedded(pdf):
    # /FontFile2 holds an embedded TrueType program (ISO 32000-1 section 9.9).
    assert b"/FontFile2" in pdf
    assert re.search(rb"/BaseFont /[A-Z]{6}\+DejaVuSans", pdf)  # subset tag, ISO 32000-1 9.6.4
    assert (FONT_DIR / "LICENSE-DejaVu.txt").read_text().count("Bitstream") > 3


def _grouped(fp: str) -> str:
    # The PDF prints a fingerprint in groups of eight hex digits (the JSON keeps it whole).
    digits = fp.split(":", 1)[1]
    return "SHA256: " + " ".join(digits[i : i + 8] for i in range(0, 64, 8))


def test_text_contents(text, content):
    for caution in CAUTIONS:
        assert squash(caution) in text
    assert _grouped(content["analyst"]["fingerprint"]) in text
    for s in ("Zoë Ångström", "Bjørn Łukasz", "λ 250–600 nm", "Harbourside Forensic"):
        assert s in text  # non-ASCII names from the invented fixture
    assert "HFC-2026-0042" in text
    assert "405.7821" in text and "405.7807" in text and "+0.0014" in text  # fixture values
    assert "Pb I" in text and "Ba II" in text
    assert "within tolerance of a weak Ti line" in text
    assert "cdcdcdcd" in text  # reference-set SHA-256 from the fixture
    assert "workbench findings verify SHEET.pdf" in text
    assert "openssl pkeyutl -verify" in text
    assert "Single spot; no replicate." in text


def test_user_markup_is_literal(text):
    # Notes from the fixture contain markdown, HTML and fpdf2's page alias: all shown as typed.
    assert "**bench log** <b>p. 4</b> {nb} {x}." in text


def test_page_numbers_and_repeated_header(pdf):
    pages = pages_text(pdf)
    n = len(pages)
    for i, page in enumerate(pages, start=1):
        assert f"page {i} of {n}" in page
        assert page.startswith("Harbourside Forensic Chemistry Unit Findings sheet")


def test_no_unmapped_glyphs(text):
    assert "\ufffd" not in text


def _many_findings(n_elements: int = 16, n_lines: int = 12) -> dict:
    res = copy.deepcopy(RESULT)
    symbols = ["Fe", "Cu", "Zn", "Sn", "Sb", "Ti", "Cr", "Mn", "Ni", "Co", "V", "W", "Mo", "Nb"]
    res["elements"] = []
    for k in range(n_elements):
        base = 250.0 + 11.0 * k
        res["elements"].append(
            {
                "element": symbols[k % len(symbols)],
                "ion": 1,
                "verdict": "established" if k % 3 == 0 else "probable",
                "verdict_level": 3 - (k % 3 > 0),
                "score": 0.5 + k / 100,
                "matched_lines": [
                    {
                        "observed_nm": base + j * 0.7 + 0.001,
                        "reference_nm": base + j * 0.7,
                        "delta_nm": 0.001,
                        "expected_rel": 1.0 / (j + 1),
                        "observed_rel": 1.0 / (j + 1.2),
                        "line_id": f"L{k}-{j}",
                    }
                    for j in range(n_lines)
                ],
                "missing_lines": [],
                "shared_lines": [],
            }
        )
    return res


def test_multipage_with_many_findings():
    kwargs = make_content_kwargs()
    kwargs["analysis"]["result"] = _many_findings(14)
    pdf = render_pdf(build_sheet_content(**kwargs))
    pages = pages_text(pdf)
    assert len(pages) >= 4  # 14 evidence blocks of ≥ 40 mm each cannot fit on fewer A4 pages
    for i, page in enumerate(pages, start=1):
        assert f"page {i} of {len(pages)}" in page
    everything = squash(" ".join(pages))
    # First and last element's strongest lines (fixture bases 250.0 and 250 + 11 × 13 nm).
    assert "250.0000" in everything and "393.0000" in everything
    assert "7 further matched lines are in the stored result" in everything  # 12 − 5 shown


def test_energy_axis_sheet():
    res = copy.deepcopy(RESULT)
    res["input"].update(unit="eV", medium=None, kind="peak_list")
    res["lines"] = [{"index": 0, "observed_eV": 10551.0, "intensity": 10.0}]
    res["elements"] = [
        {
            "element": "Pb",
            "ion": None,
            "family": "L",
            "verdict": "established",
            "verdict_level": 3,
            "score": 0.9,
            "matched_lines": [
                {
                    "observed_eV": 10551.0,
                    "reference_eV": 10551.4,
                    "delta_eV": -0.4,
                    "expected_rel": 1.0,
                    "observed_rel": 1.0,
                    "line_id": "xray:Pb:L3-M5",
                    "transition": "L3-M5",
                }
            ],
        }
    ]
    kwargs = make_content_kwargs()
    kwargs["analysis"]["result"] = res
    text = squash(" ".join(pages_text(render_pdf(build_sheet_content(**kwargs)))))
    # X-ray wording: energies to 1 eV, family label, no temperature or LTE section.
    assert "Decisive lines (eV)" in text and "Pb L3-M5 10551 eV" in text
    assert "Pb L" in text and "10551.0" not in text
    assert "temperature" not in text.lower() and "equilibrium" not in text


def test_nice_ticks():
    # 1-2-5 tick steps (common practice, no source); values worked by hand.
    assert nice_ticks(283.3, 500.1) == [300, 350, 400, 450, 500]
    assert nice_ticks(0.0, 1.0, 5) == [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]


def test_render_refuses_content_without_time(content):
    bad = dict(content)
    bad["issued_at"] = "2026-03-14"
    with pytest.raises(InputError, match="issued_at"):
        render_pdf(bad)


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="pdftotext (poppler-utils) absent")
def test_pdftotext_agrees(tmp_path, pdf, content):
    # Independent oracle: poppler's text extraction of the same file.
    (tmp_path / "s.pdf").write_bytes(pdf)
    out = subprocess.run(
        ["pdftotext", "-enc", "UTF-8", str(tmp_path / "s.pdf"), "-"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    flat = squash(out)
    assert _grouped(content["analyst"]["fingerprint"]) in flat
    assert "Zoë Ångström" in flat and "Bjørn Łukasz" in flat
    assert "**bench log** <b>p. 4</b> {nb} {x}." in flat
    assert squash(CAUTIONS[1]) in flat


def test_only_concluded_elements_get_evidence(text):
    # Pb "present" (level 3) and Ba "possible" (level 2) in the fixture: both concluded.
    assert "Pb: present" in text and "Ba: possible" in text
    kwargs = make_content_kwargs()
    kwargs["analysis"]["result"]["elements"][1]["verdict_level"] = 0  # Ba: not supported
    other = squash(" ".join(pages_text(render_pdf(build_sheet_content(**kwargs)))))
    assert "Pb: present" in other and "Ba:" not in other
    assert "1 further species had candidate lines" in other  # counted, not named


def test_huge_cell_and_many_species_render():
    # A measurement setting with a very long value (e.g. a pasted instrument log) and
    # 120 species "not supported": the sheet still renders, the cell is shortened and
    # the unsupported species appear only as a count.
    kwargs = make_content_kwargs()
    kwargs["measurement"]["settings"] = {"log": "x" * 20000}
    res = kwargs["analysis"]["result"]
    for i in range(120):
        res["elements"].append(
            {
                "species": f"Q{i} I",
                "element": f"Q{i}",
                "ion": 1,
                "verdict": "not supported",
                "verdict_level": 0,
                "score": 0.0,
                "matched_lines": [],
                "missing_lines": [],
            }
        )
    text = squash(" ".join(pages_text(render_pdf(build_sheet_content(**kwargs), compress=False))))
    assert "shortened; full value in the JSON" in text
    assert "120 further species had candidate lines" in text and "Q119" not in text
