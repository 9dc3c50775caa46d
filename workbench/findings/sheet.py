"""Render a findings sheet's content as a PDF report (fpdf2, embedded DejaVu Sans).

The report is laid out for a reader who may be a lawyer as much as a
scientist:

1. **Summary** (page 1): laboratory, case, item with its custody status in
   words, the question, the method in one paragraph, a table of the elements
   concluded present (class, decisive lines, interference bearing on each),
   elements asked about and not found, and the limits that apply.
2. **Evidence** per element on the sheet: matched lines, missing lines, the
   overlaps and the lines that settle them, and a stick figure of the region
   around its strongest decisive line.
3. **The analyst's decisions** with reasons, the **cautions**, and the
   **signatures** (analyst and technical reviewer).
4. **Appendix**: input file and its SHA-256, software version, reference
   data, parameters, and the custody events as a table.

The PDF is a deterministic function of the content: the creation date is the
sheet's ``issued_at``, the producer string is fixed, the file identifier is a
digest of the document itself, and the embedded font subsets come from the
shipped TTF files. Two renders of the same content are byte-identical; the
last few renders are cached by the SHA-256 of the content's canonical JSON,
so signing a sheet that was just previewed does not lay it out again.
"""

from __future__ import annotations

import hashlib
from collections import OrderedDict
from collections.abc import Mapping
from datetime import datetime
from typing import Any

from workbench.errors import InputError
from workbench.findings.fonts_path import FONT_DIR
from workbench.findings.layout import FONT, Layout, clean, nice_ticks

__all__ = ["FONT_DIR", "nice_ticks", "render_pdf"]

_PRODUCER = "workbench findings sheet (fpdf2)"
_TOP, _SIDE, _BOTTOM = 22.0, 15.0, 16.0
_CACHE: OrderedDict[tuple[str, bool], bytes] = OrderedDict()
_CACHE_SIZE = 8


def _g(mapping: Any, *keys: str, default: str = "") -> str:
    cur = mapping
    for k in keys:
        cur = cur.get(k) if isinstance(cur, Mapping) else None
    return default if cur in (None, "") else clean(cur)


def _grouped(fingerprint: str) -> str:
    """A key fingerprint in groups of eight hex digits, so that it wraps and reads well."""
    head, sep, digits = fingerprint.partition(":")
    if not sep:
        return fingerprint
    return f"{head}: " + " ".join(digits[i : i + 8] for i in range(0, len(digits), 8))


class _Sheet:
    """One rendering pass; ``total_pages`` is known on the second pass."""

    def __init__(self, content: Mapping[str, Any], total_pages: int | None, compress: bool):
        from fpdf import FPDF

        self.c = content
        self.total = total_pages
        axis = content.get("axis") or {}
        self.kind = axis.get("kind", "wavelength")
        self.unit = axis.get("unit", "nm")
        self.medium = axis.get("medium") or ""
        sheet = self

        class _PDF(FPDF):
            def header(self) -> None:
                sheet._header()

            def footer(self) -> None:
                sheet._footer()

        pdf = _PDF(orientation="P", unit="mm", format="A4")
        pdf.alias_nb_pages("")  # no alias: user text must never be substituted
        pdf.set_compression(compress)
        pdf.add_font(FONT, "", str(FONT_DIR / "DejaVuSans.ttf"))
        pdf.add_font(FONT, "B", str(FONT_DIR / "DejaVuSans-Bold.ttf"))
        pdf.set_margins(_SIDE, _TOP, _SIDE)
        pdf.set_auto_page_break(False)  # Layout takes every break itself
        issued = str(content.get("issued_at", ""))
        pdf.set_creation_date(datetime.fromisoformat(issued.replace("Z", "+00:00")))
        pdf.set_producer(_PRODUCER)
        pdf.set_creator(_PRODUCER)
        pdf.set_title(clean(f"Findings sheet, analysis {_g(content, 'analysis', 'id')}"))
        pdf.set_author(_g(content, "analyst", "name"))
        pdf.set_subject("Element identification by line matching")
        pdf.set_lang("en")
        self.pdf = pdf
        self.doc = Layout(pdf, pdf.h - _BOTTOM)

    # -- page furniture -------------------------------------------------
    def _header(self) -> None:
        pdf = self.pdf
        pdf.set_y(8)
        pdf.set_font(FONT, "B", 9)
        pdf.cell(125, 4.5, _g(self.c, "lab", "name")[:90], new_x="RIGHT", new_y="TOP")
        pdf.cell(0, 4.5, "Findings sheet", align="R", new_x="LMARGIN", new_y="NEXT")
        pdf.set_font(FONT, "", 7.5)
        line = (
            f"Case {_g(self.c, 'case', 'reference')}  ·  Item {_g(self.c, 'item', 'reference')}"
            f"  ·  Analysis {_g(self.c, 'analysis', 'id')}  ·  Issued "
            f"{str(self.c.get('issued_at', '')).replace('T', ' ').replace('Z', ' UTC')}"
        )
        pdf.cell(0, 4, line[:170], new_x="LMARGIN", new_y="NEXT")
        pdf.set_draw_color(120, 120, 120)
        pdf.set_line_width(0.3)
        pdf.line(_SIDE, pdf.get_y() + 1, pdf.w - _SIDE, pdf.get_y() + 1)
        pdf.set_draw_color(0, 0, 0)
        pdf.set_y(_TOP)

    def _footer(self) -> None:
        pdf = self.pdf
        pdf.set_y(-12)
        pdf.set_font(FONT, "", 7)
        who = _g(self.c, "analyst", "name")
        pdf.cell(140, 4, f"Signed by {who}, key {_g(self.c, 'analyst', 'fingerprint')[:23]}…")
        total = self.total if self.total is not None else 999
        pdf.cell(0, 4, f"page {pdf.page_no()} of {total}", align="R")

    def _pos_unit(self) -> str:
        if self.kind == "wavelength":
            return f"nm, {self.medium}" if self.medium else "nm"
        return "eV"

    # -- page 1: summary ----------------------------------------------------
    def summary(self) -> None:
        pdf, doc, c = self.pdf, self.doc, self.c
        pdf.set_font(FONT, "B", 15)
        pdf.cell(
            0, 8, "Findings sheet: chemical elements identified", new_x="LMARGIN", new_y="NEXT"
        )
        lab = c.get("lab") or {}
        extra = [clean(lab[k]) for k in ("unit", "address", "accreditation") if lab.get(k)]
        doc.para(" · ".join([_g(c, "lab", "name"), *extra]), size=8, gap=1.5)
        item = c.get("item") or {}
        facts = [
            ["Case", f"{_g(c, 'case', 'reference')}: {_g(c, 'case', 'title')}"],
            ["Requested by", _g(c, "case", "requesting_party", default="not recorded")],
            ["Item examined", f"{_g(item, 'reference')}: {_g(item, 'description')}"],
            ["Custody", _g(item, "status")],
            ["Question", _g(c, "question", default="not stated on the request")],
            ["Examined by", self._person("analyst")],
        ]
        if c.get("reviewer"):
            facts.append(["Reviewed by", self._person("reviewer")])
        doc.table(None, facts, (32, 148), size=8.5, first_col_bold=True)
        doc.heading("Method", keep=10)
        doc.para(_g(c, "method"), size=8.5)
        rows = [
            [
                f"{r['element']}\n{r['species']}" if r.get("species") else r["element"],
                r["class"]
                + (
                    f" (decision {', '.join(map(str, r['decisions']))})"
                    if r.get("decisions")
                    else ""
                ),
                "\n".join(r.get("decisive_lines") or []) or "none found",
                r["interference"],
            ]
            for r in c.get("summary") or []
        ]
        if rows:
            doc.table(
                ("Element", "Class", f"Decisive lines ({self._pos_unit()})", "Interference"),
                rows,
                (24, 44, 58, 54),
                size=8,
                title="Findings",
                first_col_bold=True,
            )
        else:
            doc.heading("Findings", keep=8)
            doc.para("No element is concluded present.", size=9)
        for nf in c.get("not_found") or []:
            doc.para(f"Looked for and not found: {nf['element']} ({nf['why']}).", size=8.5)
        also = c.get("also_possible") or []
        if also:
            doc.para(
                "Also called possible by the program but not concluded present ("
                f"{len(also)}): {', '.join(also)}.",
                size=7.5,
            )
        doc.heading("Limits", keep=8)
        for text in c.get("limits") or []:
            doc.para(f"• {text}", size=8, indent=0)

    def _person(self, role: str) -> str:
        p = self.c.get(role) or {}
        bits = [_g(p, "name")]
        if p.get("role"):
            bits.append(_g(p, "role"))
        return ", ".join(bits)

    # -- evidence ---------------------------------------------------------------
    def evidence(self) -> None:
        blocks = self.c.get("evidence") or []
        if not blocks:
            return
        pdf, doc = self.pdf, self.doc
        if doc.room() < 90:
            pdf.add_page()
        doc.heading("Evidence for each element", keep=50, size=12)
        doc.para(
            "Lines are listed strongest expected first, one per observed peak (at most five; "
            "the stored result keeps all). "
            "Δ is observed minus reference. In each figure, observed peaks rise above the "
            "axis; the element's reference lines (blue) and other species' lines (grey) hang "
            "below it.",
            size=7.5,
        )
        xray = self.kind == "energy"
        for b in blocks:
            head = ["Species", "Reference", "Observed", "Δ", "Exp.", "Obs.", "Note"]
            widths = [17, 19, 19, 14, 10, 10, 29]
            if xray:
                head = ["Family", "Line", "Reference", "Observed", "Δ", "Exp.", "Obs.", "Note"]
                widths = [12, 15, 19, 19, 9, 9, 9, 26]
            rows = []
            for ln in b.get("lines") or []:
                row = [ln["species"]]
                if xray:
                    row.append(ln.get("line", ""))
                row += [ln["reference"], ln["observed"], ln["delta"]]
                row += [ln["expected_rel"], ln["observed_rel"], ln["note"]]
                rows.append(row)
            fig_w, fig_h = 58.0, 24.0
            table_h = sum(doc.row_height(r, widths, 7.5)[0] for r in rows) + 6
            doc.heading(f"{b['element']}: {b['class']}", keep=max(table_h, fig_h + 8), size=10)
            top = pdf.get_y()
            fig_x = pdf.w - _SIDE - fig_w
            if b.get("region"):
                unit = "eV" if xray else "nm"
                fmt = (lambda t: f"{t:.0f}") if xray else None
                doc.stick_figure(fig_x, top + 1.0, fig_w, fig_h, b["region"], unit, fmt)
            if rows:
                lead = ("L", "L") if xray else ("L",)
                aligns = lead + ("R",) * (len(widths) - len(lead) - 1) + ("L",)
                doc.table(head, rows, widths, aligns, size=7.5)
            below = max(pdf.get_y(), top + fig_h + 7.0)
            pdf.set_y(below)
            notes = []
            if b.get("more_lines"):
                notes.append(f"{b['more_lines']} further matched lines are in the stored result.")
            missing = b.get("missing") or []
            if missing:
                more = f" and {b['more_missing']} weaker" if b.get("more_missing") else ""
                notes.append("Expected but not observed: " + "; ".join(missing) + more + ".")
            else:
                notes.append("No expected line in the measured range is missing.")
            doc.para(" ".join(notes), size=7.5)
            inter = b.get("interference") or []
            if inter:
                doc.table(
                    (
                        f"{b['element']} overlaps",
                        f"Near ({self._pos_unit()})",
                        f"Settled by clean {b['element']} lines at",
                        "Competitor's clean lines",
                    ),
                    [
                        [r["competitor"], r["at"], r["settled_by"], r["competitor_clean"]]
                        for r in inter
                    ],
                    (22, 54, 54, 50),
                    size=7,
                )
            tail = []
            if b.get("more_interference"):
                tail.append(f"{b['more_interference']} further overlaps are in the stored result.")
            if b.get("unsupported_overlaps"):
                n = b["unsupported_overlaps"]
                tail.append(
                    f"{n} overlap{'s' if n != 1 else ''} with species that the evidence does not "
                    "support were set aside."
                )
            if tail:
                doc.para(" ".join(tail), size=7.5)

    # -- X-ray artefact peaks ------------------------------------------------------
    def artefacts(self) -> None:
        art = self.c.get("artefacts") or {}
        rows, hidden = art.get("peaks") or [], art.get("without_peak") or []
        if self.kind != "energy" or not (rows or hidden):
            return
        doc = self.doc
        doc.heading("Peaks made by the instrument", keep=30, size=12)
        doc.para(
            "These peaks come from the instrument, not the object: tube lines scattered by the "
            "sample (Rayleigh, Compton), detector escape and pile-up sum peaks, and argon of the "
            "air path. They were labelled before the element lines were matched and are not "
            "evidence for any element; where a peak is stronger than predicted, only the excess "
            "was kept. Scatter and argon peaks depend on the object and the air path, so their "
            "height is not predicted.",
            size=7.5,
        )
        if rows:
            doc.table(
                ("Energy (eV)", "Kind", "Origin", "Observed height", "Predicted",
                 "Used as evidence"),
                [
                    [r["energy_eV"], r["kind"], r["origin"], r["observed"], r["predicted"],
                     r["evidence"]]
                    for r in rows
                ],
                (15, 25, 72, 20, 26, 22),
                ("R", "L", "L", "R", "L", "L"),
                size=7,
            )  # fmt: skip
        if hidden:
            doc.para(
                "Also predicted, with no separate peak (under a neighbouring peak or too weak "
                "to separate; listed in the stored result): " + "; ".join(hidden) + ".",
                size=7.5,
            )

    # -- decisions, cautions, signatures -----------------------------------------
    def decisions(self) -> None:
        doc = self.doc
        rows = [
            [
                str(d["seq"]),
                d["when"],
                d["by"],
                f"{d['target']}: {d['what']}",
                d["reason"],
                d["status"],
            ]
            for d in self.c.get("decisions") or []
        ]
        if not rows:
            doc.heading("The analyst's decisions", keep=8)
            doc.para("No decision was recorded: the program's calls stand as printed.", size=8.5)
            return
        doc.table(
            ("No.", "When (UTC)", "By", "Decision", "Reason", "Status"),
            rows,
            (9, 24, 28, 47, 47, 25),
            size=7.5,
            title="The analyst's decisions",
        )

    def free_text(self) -> None:
        doc, c = self.doc, self.c
        if c.get("notes"):
            doc.heading("Analyst's notes", keep=8)
            doc.para(c["notes"], size=8.5)
        if c.get("limitations"):
            doc.heading("Limitations of this examination", keep=8)
            doc.para(c["limitations"], size=8.5)
        sups = c.get("supplements") or []
        if sups:
            doc.heading("Comparisons and material candidates", keep=14)
            for sup in sups:
                doc.para(_g(sup, "title"), size=9, style="B", keep=6)
                doc.para(_g(sup, "text"), size=8)
        doc.heading("Cautions", keep=10)
        for text in c.get("cautions") or []:
            doc.para(f"• {text}", size=8)
        for note in c.get("warnings") or []:
            doc.para(f"• The program noted: {note}", size=7.5)

    def signatures(self) -> None:
        doc, c = self.doc, self.c
        rows = [
            [
                "Analyst",
                self._person("analyst"),
                _grouped(_g(c, "analyst", "fingerprint")),
                "signs this PDF and its JSON (SHEET.sig.json, SHEET.sig)",
            ]
        ]
        if c.get("reviewer"):
            rows.append(
                [
                    "Technical reviewer",
                    self._person("reviewer"),
                    _grouped(_g(c, "reviewer", "fingerprint")),
                    "countersigns the same bytes after review (SHEET.review.sig.json, "
                    "SHEET.review.sig)",
                ]
            )
        else:
            rows.append(
                [
                    "Technical reviewer",
                    "a second registered analyst",
                    "named in the review record",
                    "countersigns the same bytes after review (SHEET.review.sig.json, "
                    "SHEET.review.sig)",
                ]
            )
        doc.table(
            ("Role", "Name", "Key fingerprint", "Signature"),
            rows,
            (26, 40, 58, 56),
            size=7.5,
            title="Signatures",
        )
        doc.para(
            "Ed25519 signatures over the exact bytes of this PDF and of its JSON, kept in "
            "separate files; any change to the PDF, however small, makes verification fail. "
            "Check both with: workbench findings verify SHEET.pdf. Check the PDF alone with "
            "OpenSSL 3: openssl pkeyutl -verify -pubin -inkey ANALYST.pub.pem -rawin -in "
            "SHEET.pdf -sigfile SHEET.sig (and REVIEWER.pub.pem with SHEET.review.sig).",
            size=7.5,
        )

    # -- appendix ----------------------------------------------------------------------
    def appendix(self) -> None:
        doc, c = self.doc, self.c
        doc.heading("Appendix: data, parameters and custody", keep=40, size=12)
        a = c.get("analysis") or {}
        inp = a.get("input") or {}
        m = c.get("measurement") or {}
        size = inp.get("size_bytes")
        facts = [
            ["Input file", f"{_g(inp, 'name')}" + (f" ({size:,} bytes)" if size else "")],
            ["Input SHA-256", _g(inp, "sha256")],
            [
                "Measurement",
                f"{_g(m, 'technique')}, {_g(m, 'instrument')}; "
                f"{_g(m, 'settings')}; by {_g(m, 'operator')}",
            ],
            [
                "Analysis",
                f"no. {_g(a, 'id')}, run {_g(a, 'created_at')[:19].replace('T', ' ')}"
                f" by {_g(a, 'analysed_by', default='not recorded')}",
            ],
            ["Result SHA-256", _g(a, "result_sha256", default="not recorded")],
            ["Analysis record", _g(a, "record_hash", default="not recorded")],
            [
                "Software",
                f"workbench {_g(a, 'software_version')}, result schema {_g(a, 'schema_version')}",
            ],
        ]
        if a.get("calibration"):
            facts.append(["Scale check", _g(a, "calibration")])
        if a.get("temperature"):
            facts.append(["Temperature", _g(a, "temperature")])
        n_ns = c.get("not_supported_count")
        if isinstance(n_ns, int):
            facts.append(
                [
                    "Not supported",
                    f"{n_ns} further species had candidate lines but the evidence "
                    "did not support them; they are listed in the stored result.",
                ]
            )
        doc.table(None, facts, (32, 148), size=7.5, first_col_bold=True)
        refs = a.get("reference_sets") or []
        if refs:
            doc.table(
                ("Reference data", "Version", "SHA-256"),
                [[r["id"], r["version"], r["sha256"]] for r in refs],
                (30, 28, 122),
                size=7.5,
            )
        params = a.get("parameters") or []
        if params:
            half = (len(params) + 1) // 2
            left, right = params[:half], params[half:]
            rows = [[*left[i], *(right[i] if i < len(right) else ["", ""])] for i in range(half)]
            doc.table(
                ("Parameter", "Value", "Parameter", "Value"),
                rows,
                (36, 54, 36, 54),
                size=7,
                title="Matching parameters",
            )
        custody = c.get("custody") or []
        if custody:
            doc.table(
                ("Item", "Date and time (UTC)", "Action", "Holder", "Details"),
                [[e["item"], e["when"], e["action"], e["holder"], e["details"]] for e in custody],
                (14, 27, 20, 36, 83),
                size=7,
                title="Chain of custody of the item",
            )

    def render(self, output: bool = True) -> tuple[bytes, int]:
        self.pdf.add_page()
        self.summary()
        self.evidence()
        self.artefacts()
        self.decisions()
        self.free_text()
        self.signatures()
        self.appendix()
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
    from workbench.findings.content import canonical_json

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
    key = (hashlib.sha256(canonical_json(content)).hexdigest(), compress)
    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    # First pass only counts pages; the footer's text does not change the flow,
    # so the second pass, which prints "page i of n", has the same pages.
    _, total = _Sheet(content, None, compress).render(output=False)
    while True:
        data, pages = _Sheet(content, total, compress).render()
        if pages == total:
            break
        total = pages  # pragma: no cover - only if the layout depended on the total
    _CACHE[key] = data
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)
    return data
