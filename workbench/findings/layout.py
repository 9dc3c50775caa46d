"""Page layout for the findings sheet: paragraphs, headings, tables and a stick figure.

fpdf2 places text; this module decides where. Page breaks are taken here,
never by fpdf2's automatic break, so that

* a table row is never split across pages (its height is measured first,
  and the header row is repeated on the new page);
* a heading is never left alone at the foot of a page (it moves with the
  first lines or the first row of what follows it);
* long paragraphs break between lines.

Line breaking is the costly step; :func:`Layout.lines` caches the lines of
every (font, size, width, text) it has split, and the cache is shared by the
two rendering passes (the first counts the pages for "page i of n") and by
later renders of the same text.

User text is placed with markdown off and no page-number alias, so ``**``,
``<b>`` or ``{nb}`` appear exactly as typed.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from functools import lru_cache
from typing import Any

__all__ = ["FONT", "Layout", "clean", "nice_ticks"]

FONT = "DejaVu"
#: Colour of an element's reference lines in its figure, and of competitors (RGB).
_REF_RGB = (20, 70, 160)
_COMPETITOR_RGB = (150, 150, 150)
_HEAD_FILL = (228, 231, 237)
_RULE_RGB = (150, 150, 150)


def clean(text: Any) -> str:
    """Return text safe to place: tabs expanded, control characters other than newline removed."""
    if text is None:
        return ""
    text = str(text).replace("\t", "    ")
    return "".join(ch for ch in text if ch == "\n" or (ch >= " " and ch != "\x7f"))


def nice_ticks(lo: float, hi: float, target: int = 6) -> list[float]:
    """Return round tick positions covering ``[lo, hi]``.

    Parameters
    ----------
    lo, hi : float
        Axis range (``lo < hi``).
    target : int
        About how many ticks are wanted.

    Returns
    -------
    list of float
        Ticks at multiples of 1, 2 or 5 × 10^k that lie within the range.
    """
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return [lo]
    raw = (hi - lo) / max(1, target)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
    first = math.ceil(lo / step) * step
    ticks = []
    t = first
    while t <= hi + step * 1e-9:
        ticks.append(round(t, 12))
        t += step
    return ticks


def _tick_label(t: float, ticks: Sequence[float]) -> str:
    step = ticks[1] - ticks[0] if len(ticks) > 1 else 1.0
    decimals = max(0, -math.floor(math.log10(step))) if step > 0 else 0
    return f"{t:.{decimals}f}"


#: Longest text placed in one table cell: a row must fit on a page; the full
#: value stays in the signed JSON.
MAX_CELL_CHARS = 600


def _cell(value: Any) -> str:
    text = clean(value)
    if len(text) > MAX_CELL_CHARS:
        return text[: MAX_CELL_CHARS - 40].rstrip() + " … (shortened; full value in the JSON)"
    return text


class Layout:
    """A document in progress: an fpdf2 ``FPDF`` plus the break rules above.

    Parameters
    ----------
    pdf : FPDF
        With the fonts added, margins set and automatic page breaks off.
    bottom : float
        Lowest y (mm) that content may reach.
    """

    def __init__(self, pdf: Any, bottom: float) -> None:
        self.pdf = pdf
        self.bottom = bottom

    # -- measuring -------------------------------------------------------
    def lines(self, text: str, width: float, style: str = "", size: float = 8.5) -> list[str]:
        """Split ``text`` into the lines it takes in a column ``width`` mm wide."""
        return list(_split(clean(text), round(width, 3), style, size))

    def ensure(self, height: float) -> None:
        """Start a new page unless ``height`` mm still fit on this one."""
        if self.pdf.get_y() + height > self.bottom:
            self.pdf.add_page()

    def room(self) -> float:
        """Height left on the page (mm)."""
        return self.bottom - self.pdf.get_y()

    # -- text --------------------------------------------------------------
    def para(
        self,
        text: str,
        size: float = 8.5,
        style: str = "",
        indent: float = 0.0,
        keep: float = 0.0,
        gap: float = 1.2,
    ) -> None:
        """Place a paragraph, breaking only between lines.

        ``keep`` asks for that much room below the first line (to keep a
        short paragraph whole, or with what follows it).
        """
        pdf = self.pdf
        lh = size * 0.45
        width = pdf.epw - indent
        rows = []
        for part in clean(text).split("\n"):
            rows.extend(self.lines(part, width, style, size) or [""])
        self.ensure(min(lh * len(rows), 40.0) + keep)
        pdf.set_font(FONT, style, size)
        for row in rows:
            self.ensure(lh)
            pdf.set_x(pdf.l_margin + indent)
            pdf.cell(width, lh, row, new_x="LMARGIN", new_y="NEXT")
        pdf.ln(gap)

    def heading(self, text: str, keep: float = 12.0, size: float = 11.0) -> None:
        """Place a heading with ``keep`` mm of room guaranteed below it."""
        pdf = self.pdf
        self.ensure(3 + size * 0.55 + keep)
        pdf.ln(2.5)
        pdf.set_font(FONT, "B", size)
        pdf.cell(0, size * 0.55, clean(text), new_x="LMARGIN", new_y="NEXT")
        pdf.ln(0.8)

    # -- tables ------------------------------------------------------------
    def row_height(
        self, cells: Sequence[str], widths: Sequence[float], size: float, style: str = ""
    ) -> tuple[float, list[list[str]]]:
        """Height of one table row and the lines of each of its cells."""
        lh = size * 0.45
        split = [
            self.lines(c, w - 2.0, style, size) or [""] for c, w in zip(cells, widths, strict=True)
        ]
        return max(len(s) for s in split) * lh + 1.6, split

    def table(
        self,
        head: Sequence[str] | None,
        rows: Sequence[Sequence[str]],
        widths: Sequence[float],
        aligns: Sequence[str] | None = None,
        size: float = 8.0,
        title: str | None = None,
        x: float | None = None,
        first_col_bold: bool = False,
    ) -> float:
        """Place a table; rows are never split and the header repeats after a break.

        Returns
        -------
        float
            The y (mm) below the table.
        """
        pdf = self.pdf
        x0 = pdf.l_margin if x is None else x
        aligns = list(aligns or ["L"] * len(widths))
        measured = []
        head_h, head_lines = (0.0, [])
        if head:
            head_h, head_lines = self.row_height(head, widths, size, "B")
        for r in rows:
            measured.append(self.row_height([_cell(c) for c in r], widths, size))
        first = measured[0][0] if measured else 0.0
        if title:
            self.heading(title, keep=head_h + first)
        else:
            self.ensure(head_h + first)
        if head:
            self._row(x0, head_lines, widths, aligns, size, head_h, "B", fill=True)
        for h, lines in measured:
            if pdf.get_y() + h > self.bottom:
                pdf.add_page()
                if head:
                    self._row(x0, head_lines, widths, aligns, size, head_h, "B", fill=True)
            bold = "B" if first_col_bold else ""
            self._row(x0, lines, widths, aligns, size, h, "", bold_first=bold)
        pdf.ln(1.5)
        return pdf.get_y()

    def _row(
        self,
        x0: float,
        lines: Sequence[Sequence[str]],
        widths: Sequence[float],
        aligns: Sequence[str],
        size: float,
        height: float,
        style: str,
        fill: bool = False,
        bold_first: str = "",
    ) -> None:
        pdf = self.pdf
        y = pdf.get_y()
        lh = size * 0.45
        if fill:
            pdf.set_fill_color(*_HEAD_FILL)
            pdf.rect(x0, y, sum(widths), height, style="F")
        pdf.set_draw_color(*_RULE_RGB)
        pdf.set_line_width(0.15)
        pdf.line(x0, y + height, x0 + sum(widths), y + height)
        x = x0
        for j, (cell_lines, w) in enumerate(zip(lines, widths, strict=True)):
            pdf.set_font(FONT, bold_first if (j == 0 and bold_first) else style, size)
            for k, text in enumerate(cell_lines):
                pdf.set_xy(x + 1.0, y + 0.8 + k * lh)
                pdf.cell(w - 2.0, lh, text, align=aligns[j])
            x += w
        pdf.set_xy(pdf.l_margin, y + height)
        pdf.set_draw_color(0, 0, 0)

    # -- figure --------------------------------------------------------
    def stick_figure(
        self,
        x: float,
        y: float,
        w: float,
        h: float,
        region: dict[str, Any],
        axis_label: str,
        tick_format: Callable[[float], str] | None = None,
    ) -> None:
        """Draw observed lines above an axis and reference lines below it.

        ``region`` holds ``from``, ``to``, ``observed`` ([position, relative
        height]), ``reference`` (the element's lines) and ``competitors``
        (other species' candidate lines), heights 0–1.
        """
        pdf = self.pdf
        lo, hi = float(region["from"]), float(region["to"])
        inner_x0, inner_x1 = x + 2.0, x + w - 2.0
        axis_y = y + h * 0.55
        up, down = h * 0.5, h * 0.38

        def xp(v: float) -> float:
            return inner_x0 + (v - lo) / (hi - lo) * (inner_x1 - inner_x0)

        pdf.set_draw_color(*_RULE_RGB)
        pdf.set_line_width(0.15)
        pdf.rect(x, y - 1.0, w, h + 6.5)
        pdf.set_line_width(0.35)
        pdf.set_draw_color(*_COMPETITOR_RGB)
        peak_c = max((r for _, r in region.get("competitors") or []), default=1.0) or 1.0
        for p, r in region.get("competitors") or []:
            pdf.line(xp(p), axis_y, xp(p), axis_y + down * 0.6 * max(0.08, r / peak_c))
        pdf.set_draw_color(*_REF_RGB)
        peak_r = max((r for _, r in region.get("reference") or []), default=1.0) or 1.0
        for p, r in region.get("reference") or []:
            pdf.line(xp(p), axis_y, xp(p), axis_y + down * max(0.08, r / peak_r))
        pdf.set_draw_color(0, 0, 0)
        for p, r in region.get("observed") or []:
            pdf.line(xp(p), axis_y, xp(p), axis_y - (up - 2.0) * max(0.04, r))
        pdf.set_line_width(0.2)
        pdf.line(inner_x0, axis_y, inner_x1, axis_y)
        ticks = nice_ticks(lo, hi, 4)
        pdf.set_font(FONT, "", 6)
        for t in ticks:
            label = tick_format(t) if tick_format else _tick_label(t, ticks)
            tw = pdf.get_string_width(label)
            pdf.line(xp(t), y + h, xp(t), y + h + 0.8)
            pdf.text(xp(t) - tw / 2, y + h + 3.2, label)
        pdf.set_font(FONT, "", 6)
        pdf.text(x + 1.5, y + 2.0, "observed")
        pdf.set_text_color(*_REF_RGB)
        pdf.text(x + 1.5, y + h - 0.8, "reference")
        pdf.set_text_color(*_COMPETITOR_RGB)
        pdf.text(x + 14.0, y + h - 0.8, "other species")
        pdf.set_text_color(0, 0, 0)
        tw = pdf.get_string_width(axis_label)
        pdf.text(x + w - tw - 1.5, y + 2.0, axis_label)
        pdf.set_draw_color(0, 0, 0)


@lru_cache(maxsize=1)
def _measurer() -> Any:
    """A private FPDF with the shipped fonts, used only to measure text.

    Measuring on the document itself would write font changes into its page
    stream, so a render with a warm cache would differ from a cold one.
    """
    from fpdf import FPDF

    from workbench.findings.fonts_path import FONT_DIR

    pdf = FPDF(unit="mm", format="A4")
    pdf.add_font(FONT, "", str(FONT_DIR / "DejaVuSans.ttf"))
    pdf.add_font(FONT, "B", str(FONT_DIR / "DejaVuSans-Bold.ttf"))
    pdf.set_auto_page_break(False)
    pdf.add_page()
    return pdf


@lru_cache(maxsize=16384)
def _split(text: str, width: float, style: str, size: float) -> tuple[str, ...]:
    """Lines of ``text`` in a column ``width`` mm wide (cached: the costly step)."""
    if not text:
        return ()
    pdf = _measurer()
    pdf.set_font(FONT, style, size)
    if "\n" not in text and pdf.get_string_width(text) <= width:
        return (text,)
    return tuple(pdf.multi_cell(width, size * 0.45, text, dry_run=True, output="LINES"))
