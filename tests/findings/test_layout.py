"""Tests for workbench/findings/layout.py: rows never split, headings never orphaned."""

from __future__ import annotations

import pytest

from tests.findings.findings_pdftext import pages_text
from workbench.findings.fonts_path import FONT_DIR
from workbench.findings.layout import FONT, Layout, nice_ticks


def _doc():
    from fpdf import FPDF

    pdf = FPDF(unit="mm", format="A4")
    pdf.add_font(FONT, "", str(FONT_DIR / "DejaVuSans.ttf"))
    pdf.add_font(FONT, "B", str(FONT_DIR / "DejaVuSans-Bold.ttf"))
    pdf.set_auto_page_break(False)
    pdf.set_margins(15, 20, 15)
    pdf.add_page()
    return pdf, Layout(pdf, pdf.h - 16)


@pytest.mark.parametrize("lead", [0, 7, 23])  # paragraphs before the table shift where it breaks
def test_rows_are_never_split_and_headings_move_with_their_table(lead):
    pdf, doc = _doc()
    for i in range(lead):
        doc.para(f"filler paragraph {i} " * 6)
    rows = [[f"row{i}", "\n".join(f"row{i}part{k}" for k in range(1 + i % 4))] for i in range(90)]
    doc.table(("key", "value"), rows, (30, 150), title="Table heading")
    pages = pages_text(bytes(pdf.output()))
    for i in range(90):
        parts = [f"row{i}part{k}" for k in range(1 + i % 4)]
        holding = [n for n, page in enumerate(pages) if f"row{i} " in page + " "]
        assert len(holding) == 1  # each row key printed once
        assert all(p in pages[holding[0]] for p in parts)  # all of its lines on that page
    start = next(n for n, page in enumerate(pages) if "Table heading" in page)
    assert "row0" in pages[start]  # the heading is not left alone
    assert sum("key value" in page for page in pages) == len(pages) - start  # header repeats


def test_lines_are_cached_and_wrap_at_width():
    pdf, doc = _doc()
    long = "word " * 60
    first = doc.lines(long, 50.0)
    assert len(first) > 3 and doc.lines(long, 50.0) == first
    assert doc.lines("short", 50.0) == ["short"]
    pdf.output()  # closes the font files


def test_nice_ticks():
    # 1-2-5 tick steps (common practice, no source); values worked by hand.
    assert nice_ticks(283.3, 500.1) == [300, 350, 400, 450, 500]
    assert nice_ticks(9751.0, 11351.0, 4) == [10000.0, 10500.0, 11000.0]
