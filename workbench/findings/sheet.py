"""Render a findings sheet's content as a PDF (fpdf2, embedded DejaVu Sans).

The PDF is a deterministic function of the content: the creation date is
the sheet's ``issued_at``, the producer string is fixed, the file identifier
is a digest of the document itself, and the embedded font subsets are built
from the shipped TTF files in ``workbench/findings/fonts`` (so no system
fonts are consulted). Two renders of the same content are byte-identical.

User text is placed with plain ``cell``/``multi_cell``/table calls with
markdown off and no page-number alias, so characters such as ``**``, ``<b>``
or ``{nb}`` appear exactly as typed. The page total ("page i of n") is found
by rendering twice.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from datetime import datetime
from pathlib import Path
from typing import Any

from workbench.errors import InputError

__all__ = ["FONT_DIR", "nice_ticks", "render_pdf"]

#: Folder holding the embedded fonts and their licence.
FONT_DIR: Path = Path(__file__).resolve().parent / "fonts"
_FONT = "DejaVu"
_PRODUCER = "workbench findings sheet (fpdf2)"

# Distinct colours for up to eight reported elements in the figure (RGB).
_PALETTE: tuple[tuple[int, int, int], ...] = (
    (200, 30, 45),
    (20, 90, 200),
    (0, 140, 70),
    (200, 110, 0),
    (130, 50, 170),
    (0, 150, 160),
    (160, 120, 30),
    (220, 60, 150),
)
_CUSTODY_HIDDEN = (
    "id",
    "seq",
    "hash",
    "prev_hash",
    "case_number",
    "item_number",
    "ref_kind",
    "ref_key",
    "ref_hash",
    "corrects_seq",
)
_ROMAN = ("I", "II", "III", "IV", "V", "VI", "VII", "VIII", "IX", "X")

#: Matched, missing and shared lines printed per species; the JSON has all.
_MAX_LINE_ROWS = 25


def _clean(text: Any) -> str:
    """Return text safe to place: control characters other than newline removed."""
    if text is None:
        return ""
    if not isinstance(text, str):
        text = json.dumps(text, sort_keys=True, ensure_ascii=False, separators=(", ", ": "))
    text = text.replace("\t", "    ")
    return "".join(ch for ch in text if ch == "\n" or (ch >= " " and ch != "\x7f"))


#: Longest text placed in one table cell: a row must fit on a page (fpdf2
#: refuses taller rows); the full value stays in the signed JSON.
_MAX_CELL_CHARS = 600


def _cell_text(value: Any) -> str:
    text = _clean(value)
    if len(text) > _MAX_CELL_CHARS:
        return text[: _MAX_CELL_CHARS - 40].rstrip() + " … (shortened; full value in the JSON)"
    return text


def _species(finding: Mapping[str, Any]) -> str:
    if isinstance(finding.get("species"), str) and finding["species"]:
        return _clean(finding["species"])
    el = str(finding.get("element", "?"))
    ion = finding.get("ion")
    if isinstance(ion, int) and 1 <= ion <= len(_ROMAN):
        return f"{el} {_ROMAN[ion - 1]}"
    return el


def _fmt(x: Any, kind: str, unit: str) -> str:
    if not isinstance(x, int | float) or isinstance(x, bool):
        return "–" if x is None else _clean(x)
    if kind == "pos":
        if unit == "nm":
            return f"{x:.4f}"
        return f"{x:.1f}" if abs(x) >= 100 else f"{x:.3f}"
    if kind == "delta":
        if unit == "nm":
            return f"{x:+.4f}"
        return f"{x:+.2f}" if abs(x) >= 0.01 or x == 0 else f"{x:+.2e}"
    return f"{x:.2f}"


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


class _Sheet:
    """One rendering pass; ``total_pages`` is known on the second pass."""

    def __init__(self, content: Mapping[str, Any], total_pages: int | None, compress: bool):
        from fpdf import FPDF

        self.c = content
        self.total = total_pages
        self.kind = (content.get("axis") or {}).get("kind", "wavelength")
        self.unit = (content.get("axis") or {}).get("unit", "nm")
        self.medium = (content.get("axis") or {}).get("medium")
        sheet = self

        class _PDF(FPDF):
            def header(self) -> None:
                sheet._header()

            def footer(self) -> None:
                sheet._footer()

        pdf = _PDF(orientation="P", unit="mm", format="A4")
        pdf.alias_nb_pages("")  # no alias: user text must never be substituted
        pdf.set_compression(compress)
        pdf.add_font(_FONT, "", str(FONT_DIR / "DejaVuSans.ttf"))
        pdf.add_font(_FONT, "B", str(FONT_DIR / "DejaVuSans-Bold.ttf"))
        pdf.set_margins(15, 24, 15)
        pdf.set_auto_page_break(True, margin=18)
        issued = str(content.get("issued_at", ""))
        pdf.set_creation_date(datetime.fromisoformat(issued.replace("Z", "+00:00")))
        pdf.set_producer(_PRODUCER)
        pdf.set_creator(_PRODUCER)
        pdf.set_title(_clean(f"Findings sheet, analysis {self._analysis_id()}"))
        pdf.set_author(_clean((content.get("analyst") or {}).get("name", "")))
        pdf.set_subject("Element identification by line matching")
        pdf.set_lang("en")
        self.pdf = pdf

    # -- page furniture -------------------------------------------------
    def _analysis_id(self) -> str:
        return _clean((self.c.get("analysis") or {}).get("id", ""))

    def _case_ref(self) -> str:
        case = self.c.get("case") or {}
        for k in ("reference", "case_number", "number", "id", "case_id", "name"):
            if case.get(k) not in (None, ""):
                return _clean(case[k])
        return ""

    def _item_ref(self) -> str:
        item = self.c.get("item") or {}
        for k in ("reference", "label", "item_number", "id", "item_id"):
            if item.get(k) not in (None, ""):
                return _clean(item[k])
        return ""

    def _header(self) -> None:
        pdf = self.pdf
        pdf.set_y(8)
        pdf.set_font(_FONT, "B", 10)
        lab = _clean((self.c.get("lab") or {}).get("name", ""))
        pdf.cell(120, 5, lab[:90], new_x="RIGHT", new_y="TOP")
        pdf.cell(0, 5, "Findings sheet", align="R", new_x="LMARGIN", new_y="NEXT")
        pdf.set_font(_FONT, "", 8)
        line = (
            f"Case {self._case_ref()}  ·  Item {self._item_ref()}  ·  "
            f"Analysis {self._analysis_id()}  ·  Issued {self.c.get('issued_at', '')}"
        )
        pdf.cell(0, 4, line[:160], new_x="LMARGIN", new_y="NEXT")
        pdf.set_draw_color(120, 120, 120)
        pdf.set_line_width(0.3)
        pdf.line(15, pdf.get_y() + 1, 195, pdf.get_y() + 1)
        pdf.set_draw_color(0, 0, 0)
        pdf.set_y(24)

    def _footer(self) -> None:
        pdf = self.pdf
        pdf.set_y(-13)
        pdf.set_font(_FONT, "", 7)
        fp = _clean((self.c.get("analyst") or {}).get("fingerprint", ""))
        pdf.cell(140, 4, f"Signed by key {fp}", new_x="RIGHT", new_y="TOP")
        total = self.total if self.total is not None else 999
        pdf.cell(0, 4, f"page {pdf.page_no()} of {total}", align="R")

    # -- building blocks ------------------------------------------------
    def heading(self, text: str) -> None:
        pdf = self.pdf
        if pdf.get_y() > pdf.h - 40:
            pdf.add_page()
        pdf.ln(3)
        pdf.set_font(_FONT, "B", 11)
        pdf.cell(0, 6, text, new_x="LMARGIN", new_y="NEXT")
        pdf.set_font(_FONT, "", 9)

    def para(self, text: str, size: float = 9, bold: bool = False) -> None:
        pdf = self.pdf
        pdf.set_font(_FONT, "B" if bold else "", size)
        pdf.multi_cell(0, size * 0.5, _clean(text), align="L", new_x="LMARGIN", new_y="NEXT")

    def table(
        self,
        head: Sequence[str],
        rows: Sequence[Sequence[str]],
        widths: Sequence[float],
        aligns: Sequence[str] | None = None,
        size: float = 8,
        headings: bool = True,
    ) -> None:
        from fpdf.fonts import FontFace

        pdf = self.pdf
        pdf.set_font(_FONT, "", size)
        style = FontFace(emphasis="BOLD", fill_color=(225, 228, 235))
        with pdf.table(
            col_widths=tuple(widths),
            width=sum(widths),
            align="LEFT",
            text_align=tuple(aligns) if aligns else "LEFT",
            headings_style=style,
            line_height=size * 0.5,
            markdown=False,
            padding=0.8,
            first_row_as_headings=headings,
        ) as tbl:
            if headings:
                r = tbl.row()
                for h in head:
                    r.cell(_clean(h))
            for row in rows:
                r = tbl.row()
                for v in row:
                    r.cell(_cell_text(v))
        pdf.ln(1)

    def key_values(self, data: Mapping[str, Any], preferred: Sequence[str] = ()) -> None:
        keys = [k for k in preferred if k in data] + sorted(k for k in data if k not in preferred)
        rows = [(k.replace("_", " "), _clean(data[k])) for k in keys if data[k] not in (None, "")]
        if not rows:
            self.para("(none recorded)")
            return
        self.table(("field", "value"), rows, (45, 135))

    # -- sections -------------------------------------------------------
    def title_block(self) -> None:
        pdf = self.pdf
        pdf.set_font(_FONT, "B", 15)
        pdf.cell(0, 8, "Findings sheet: element identification by line matching")
        pdf.ln(9)
        lab = self.c.get("lab") or {}
        self.para(_clean(lab.get("name", "")), 10, bold=True)
        for k in ("unit", "address", "accreditation", "contact"):
            if lab.get(k):
                self.para(f"{k.capitalize()}: {_clean(lab[k])}")
        others = {
            k: v
            for k, v in lab.items()
            if k not in ("name", "unit", "address", "accreditation", "contact")
        }
        for k in sorted(others):
            self.para(f"{k.replace('_', ' ').capitalize()}: {_clean(others[k])}")
        self.para(f"Issued (UTC): {self.c.get('issued_at', '')}")

    def case_item(self) -> None:
        self.heading("Case")
        self.key_values(
            self.c.get("case") or {}, ("reference", "case_number", "title", "agency", "opened_at")
        )
        self.heading("Item")
        self.key_values(
            self.c.get("item") or {}, ("reference", "label", "description", "received_at")
        )

    def custody(self) -> None:
        self.heading("Chain of custody")
        events = self.c.get("custody") or []
        if not events:
            self.para("(no custody events recorded)")
            return

        def get(e: Mapping[str, Any], *names: str) -> str:
            for n in names:
                if e.get(n) not in (None, ""):
                    return _clean(e[n])
            return ""

        used = {"at", "timestamp", "time", "occurred_at", "recorded_at", "event", "kind"}
        used |= {"action", "type", "actor", "by", "person", "analyst"}
        # Chain bookkeeping stays in the JSON; the printed table shows what happened.
        used |= set(_CUSTODY_HIDDEN)
        rows = []
        for e in events:
            rest = {k: v for k, v in e.items() if k not in used and v not in (None, "")}
            details = "; ".join(f"{k.replace('_', ' ')}: {_clean(rest[k])}" for k in sorted(rest))
            rows.append(
                (
                    get(e, "at", "timestamp", "time", "occurred_at", "recorded_at"),
                    get(e, "event", "kind", "action", "type"),
                    get(e, "actor", "by", "person", "analyst"),
                    details,
                )
            )
        self.table(("time (UTC)", "event", "by", "details"), rows, (36, 28, 34, 82), size=7.5)

    def method(self) -> None:
        self.heading("Method")
        meas = dict(self.c.get("measurement") or {})
        self.key_values(meas, ("technique", "instrument", "settings", "measured_at"))
        a = self.c.get("analysis") or {}
        inp = a.get("input") or {}
        axis = f"{self.kind} in {self.unit}"
        if self.kind == "wavelength":
            axis += f", {self.medium or 'medium not stated'}"
        self.para(
            f"Input: {_clean(inp.get('name', ''))} ({_clean(inp.get('kind', ''))}), "
            f"SHA-256 {_clean(inp.get('sha256', ''))}; axis: {axis}. "
            f"Software version: {_clean(a.get('software_version', ''))}.",
            8,
        )
        run = [f"Analysis {self._analysis_id()}"]
        if a.get("analysed_by"):
            run.append(f"run by {_clean(a['analysed_by'])}")
        if a.get("created_at"):
            run.append(f"at {_clean(a['created_at'])}")
        if a.get("record_hash"):
            run.append(f"(record hash {_clean(a['record_hash'])})")
        if len(run) > 1:
            self.para(" ".join(run) + ".", 8)
        self.heading("Reference sets")
        refs = a.get("reference_sets") or []
        if refs:
            self.table(
                ("id", "version", "SHA-256"),
                [(r.get("id", ""), r.get("version", ""), r.get("sha256", "")) for r in refs],
                (40, 25, 115),
                size=7.5,
            )
        else:
            self.para("(none recorded)")
        self.heading("Matching parameters")
        self.key_values(a.get("parameters") or {})
        for label, key in (("Calibration", "calibration"), ("Temperature estimate", "temperature")):
            if a.get(key):
                self.para(f"{label}: {_clean(a[key])}", 8)

    def findings(self) -> None:
        u = self.unit
        sym = "λ" if self.kind == "wavelength" else "E"
        findings = self.c.get("findings") or []
        self.heading("Element findings")
        if not findings:
            self.para("No element was reported by the matching.")
            return
        rows = [
            (
                _species(f),
                _clean(f.get("verdict", "")),
                _clean(f.get("verdict_level", "")),
                _fmt(f.get("score"), "rel", u),
                str(len(f.get("matched_lines") or [])),
                str(len(f.get("missing_lines") or [])),
            )
            for f in findings
        ]
        self.table(
            ("species", "verdict", "level", "score", "lines matched", "lines missing"),
            rows,
            (25, 70, 15, 20, 25, 25),
        )
        obs, ref, dlt = f"observed_{u}", f"reference_{u}", f"delta_{u}"
        # Supporting-line detail for the species that were called (level ≥ 1);
        # those not supported are named in one line. The JSON beside the PDF
        # keeps every line of every species.
        rejected = [f for f in findings if (f.get("verdict_level") or 0) < 1]
        if rejected:
            self.para(
                "Considered and not supported (details in the JSON): "
                + ", ".join(_species(f) for f in rejected),
                7.5,
            )
        for f in findings:
            if (f.get("verdict_level") or 0) < 1:
                continue
            matched = sorted(
                f.get("matched_lines") or [], key=lambda m: -(m.get("expected_rel") or 0.0)
            )
            n_more = max(len(matched) - _MAX_LINE_ROWS, 0)
            matched = sorted(matched[:_MAX_LINE_ROWS], key=lambda m: m.get(ref) or 0.0)
            if not matched and not f.get("missing_lines"):
                continue
            self.heading(f"Supporting lines: {_species(f)} ({_clean(f.get('verdict', ''))})")
            if matched:
                self.table(
                    (
                        f"observed {sym} ({u})",
                        f"reference {sym} ({u})",
                        f"Δ{sym} ({u})",
                        "expected rel.",
                        "observed rel.",
                        "line",
                        "flags",
                    ),
                    [
                        (
                            _fmt(m.get(obs), "pos", u),
                            _fmt(m.get(ref), "pos", u),
                            _fmt(m.get(dlt), "delta", u),
                            _fmt(m.get("expected_rel"), "rel", u),
                            _fmt(m.get("observed_rel"), "rel", u),
                            _clean(m.get("line_id", "")),
                            ", ".join(k for k in ("shared", "saturated") if m.get(k) is True),
                        )
                        for m in matched
                    ],
                    (27, 27, 22, 21, 21, 40, 22),
                    aligns=("RIGHT", "RIGHT", "RIGHT", "RIGHT", "RIGHT", "LEFT", "LEFT"),
                    size=7.5,
                )
                if n_more:
                    self.para(f"(+{n_more} weaker matched lines in the JSON.)", 7.5)
            missing = (f.get("missing_lines") or [])[:_MAX_LINE_ROWS]
            if missing:
                shown = ", ".join(
                    f"{_fmt(m.get(ref), 'pos', u)} {u} "
                    f"(rel. {_fmt(m.get('expected_rel'), 'rel', u)})"
                    for m in missing
                )
                self.para(f"Expected but not observed: {shown}", 7.5)
            shared = f.get("shared_lines") or []
            if shared:
                more = (
                    f" (+{len(shared) - _MAX_LINE_ROWS} more)"
                    if len(shared) > _MAX_LINE_ROWS
                    else ""
                )
                self.para(
                    "Lines shared with other elements: "
                    + ", ".join(_clean(x) for x in shared[:_MAX_LINE_ROWS])
                    + more,
                    7.5,
                )

    def warnings(self) -> None:
        self.heading("Interference and other warnings")
        ws = self.c.get("warnings") or []
        if not ws:
            self.para("The matching raised no warnings.")
            return
        for w in ws:
            extra = []
            if w.get("elements"):
                extra.append("elements " + ", ".join(_clean(e) for e in w["elements"]))
            if w.get("lines"):
                extra.append("lines " + ", ".join(_clean(x) for x in w["lines"]))
            tail = f" ({'; '.join(extra)})" if extra else ""
            self.para(f"• [{_clean(w.get('kind', ''))}] {_clean(w.get('message', ''))}{tail}", 8)

    def figure(self) -> None:
        u = self.unit
        obs_key, ref_key = f"observed_{u}", f"reference_{u}"
        findings = [f for f in self.c.get("findings") or [] if f.get("matched_lines")]
        # Draw the reported elements: those with a positive verdict level when levels are
        # given (level 0 means the evidence did not support the element).
        if any(isinstance(f.get("verdict_level"), int) for f in findings):
            findings = [f for f in findings if (f.get("verdict_level") or 0) > 0]
        observed: list[tuple[float, float]] = []
        for ln in self.c.get("observed_lines") or []:
            if isinstance(ln.get("position"), int | float):
                inten = ln.get("intensity")
                observed.append((ln["position"], inten if isinstance(inten, int | float) else 1.0))
        if not observed:
            for f in findings:
                for m in f["matched_lines"]:
                    if isinstance(m.get(obs_key), int | float):
                        rel = m.get("observed_rel")
                        observed.append((m[obs_key], rel if isinstance(rel, int | float) else 1.0))
        refs: list[tuple[int, float, float]] = []
        for i, f in enumerate(findings[: len(_PALETTE)]):
            for m in [*(f.get("matched_lines") or []), *(f.get("missing_lines") or [])]:
                if isinstance(m.get(ref_key), int | float):
                    rel = m.get("expected_rel")
                    refs.append((i, m[ref_key], rel if isinstance(rel, int | float) else 1.0))
        xs = [p for p, _ in observed] + [p for _, p, _ in refs]
        self.heading("Stick spectrum")
        if not xs:
            self.para("(no lines to draw)")
            return
        pdf = self.pdf
        height = 70.0
        if pdf.get_y() + height + 12 > pdf.h - 18:
            pdf.add_page()
            self.heading("Stick spectrum")
        lo, hi = min(xs), max(xs)
        span = hi - lo if hi > lo else max(abs(hi) * 0.01, 1.0)
        lo, hi = lo - 0.04 * span, hi + 0.04 * span
        x0, x1 = 32.0, 192.0
        top = pdf.get_y() + 4
        y_axis = top + height / 2
        half = height / 2 - 4

        def xpos(v: float) -> float:
            return x0 + (v - lo) / (hi - lo) * (x1 - x0)

        omax = max((abs(i) for _, i in observed), default=1.0) or 1.0
        rmax = max((abs(r) for _, _, r in refs), default=1.0) or 1.0
        pdf.set_line_width(0.3)
        pdf.set_draw_color(0, 0, 0)
        for p, inten in observed:
            pdf.line(xpos(p), y_axis, xpos(p), y_axis - half * max(0.0, inten) / omax)
        for i, p, rel in refs:
            pdf.set_draw_color(*_PALETTE[i])
            pdf.line(xpos(p), y_axis, xpos(p), y_axis + half * max(0.0, rel) / rmax)
        pdf.set_draw_color(0, 0, 0)
        pdf.set_line_width(0.2)
        pdf.line(x0, y_axis, x1, y_axis)
        pdf.line(x0, top, x0, top + height)
        ticks = nice_ticks(lo, hi)
        pdf.set_font(_FONT, "", 6.5)
        for t in ticks:
            xt = xpos(t)
            pdf.line(xt, y_axis, xt, y_axis + 1.2)
            label = _tick_label(t, ticks)
            w = pdf.get_string_width(label)
            pdf.text(xt - w / 2, top + height + 3, label)
        pdf.set_font(_FONT, "", 7)
        pdf.text(15, top + 6, "observed")
        pdf.text(15, top + height - 4, "reference")
        for yy, lab in ((y_axis - half, "1"), (y_axis, "0"), (y_axis + half, "1")):
            pdf.line(x0 - 1.2, yy, x0, yy)
            pdf.text(x0 - 2.5 - pdf.get_string_width(lab), yy + 1.0, lab)
        what = "wavelength" if self.kind == "wavelength" else "photon energy"
        medium = f", {self.medium}" if self.kind == "wavelength" and self.medium else ""
        label = f"{what} ({u}{medium})"
        pdf.text((x0 + x1) / 2 - pdf.get_string_width(label) / 2, top + height + 7, label)
        pdf.set_y(top + height + 9)
        pdf.set_font(_FONT, "", 7.5)
        pdf.multi_cell(
            0,
            3.6,
            "Observed lines (black, scaled to the strongest) above the axis; reference lines "
            "of the reported elements below it (scaled to the strongest expected line).",
            new_x="LMARGIN",
            new_y="NEXT",
        )
        legend_x = 15.0
        y = pdf.get_y() + 1
        for i, f in enumerate(findings[: len(_PALETTE)]):
            name = _species(f)
            pdf.set_fill_color(*_PALETTE[i])
            pdf.rect(legend_x, y, 3, 3, style="F")
            pdf.text(legend_x + 4, y + 2.6, name)
            legend_x += 8 + pdf.get_string_width(name)
            if legend_x > 180:
                legend_x, y = 15.0, y + 4.5
        pdf.set_fill_color(255, 255, 255)
        pdf.set_y(y + 5)
        if len(findings) > len(_PALETTE):
            self.para(f"({len(findings) - len(_PALETTE)} further elements not drawn.)", 7)

    def supplements(self) -> None:
        sups = self.c.get("supplements") or []
        if not sups:
            return
        self.heading("Comparisons and material candidates")
        for sup in sups:
            self.para(sup.get("title", ""), 9.5, bold=True)
            self.para(sup.get("text", ""), 8.5)

    def free_text(self) -> None:
        self.heading("Analyst's notes")
        self.para(self.c.get("notes") or "(none)")
        self.heading("Limitations")
        self.para(self.c.get("limitations") or "(none stated)")
        self.heading("Cautions")
        for text in self.c.get("cautions") or []:
            self.para(f"• {text}", 8.5)

    def signature(self) -> None:
        pdf = self.pdf
        if pdf.get_y() > pdf.h - 62:
            pdf.add_page()
        self.heading("Signature")
        an = self.c.get("analyst") or {}
        rows = [
            ("analyst", _clean(an.get("name", ""))),
            ("role", _clean(an.get("role", ""))),
            ("key fingerprint", _clean(an.get("fingerprint", ""))),
            ("signed (UTC)", _clean(self.c.get("issued_at", ""))),
            ("algorithm", "Ed25519, over the exact bytes of this PDF and of its JSON"),
        ]
        self.table((), rows, (35, 145), headings=False)
        self.para(
            "Verify with: workbench findings verify SHEET.pdf --json-file SHEET.json "
            "--sig SHEET.sig.json --pubkey ANALYST.pub.pem   (or, for the PDF alone: "
            "openssl pkeyutl -verify -pubin -inkey ANALYST.pub.pem -rawin -in SHEET.pdf "
            "-sigfile SHEET.sig)",
            7.5,
        )
        self.para(
            "The signature is kept in separate files; any change to this PDF, however small, "
            "makes verification fail.",
            7.5,
        )

    def render(self, output: bool = True) -> tuple[bytes, int]:
        self.pdf.add_page()
        self.title_block()
        self.case_item()
        self.custody()
        self.method()
        self.findings()
        self.warnings()
        self.figure()
        self.supplements()
        self.free_text()
        self.signature()
        pages = self.pdf.pages_count
        if output:
            return bytes(self.pdf.output()), pages
        # output() is what closes the font files; a counting pass closes them itself.
        for font in self.pdf.fonts.values():
            close = getattr(font, "close", None)
            if callable(close):
                close()
        return b"", pages


def render_pdf(content: Mapping[str, Any], *, compress: bool = True) -> bytes:
    """Render sheet content (from :func:`~workbench.findings.content.build_sheet_content`).

    Parameters
    ----------
    content : mapping
        Sheet content.
    compress : bool
        Compress page content streams (off only for inspecting the output).

    Returns
    -------
    bytes
        The PDF; identical content gives identical bytes.

    Raises
    ------
    InputError
        If the content has no ``issued_at`` time or the fonts are missing.
    """
    issued = content.get("issued_at") if isinstance(content, Mapping) else None
    if not isinstance(issued, str) or not issued.endswith("Z"):
        raise InputError(
            "sheet content has no UTC issued_at time", "build it with build_sheet_content()"
        )
    for name in ("DejaVuSans.ttf", "DejaVuSans-Bold.ttf"):
        if not (FONT_DIR / name).is_file():
            raise InputError(
                f"embedded font {FONT_DIR / name} is missing",
                "reinstall the workbench package (the fonts ship with it)",
            )
    # First pass only counts pages; the footer's width does not change the flow,
    # so the second pass, which prints "page i of n", has the same pages.
    _, total = _Sheet(content, None, compress).render(output=False)
    while True:
        data, pages = _Sheet(content, total, compress).render()
        if pages == total:
            return data
        total = pages  # pragma: no cover - only if the layout depended on the total
