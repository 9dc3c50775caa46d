"""The result record as text for the terminal (``workbench match``, ``analyse``, ``demo``).

A face, like the app's pages: it reads a result record (schema 2,
:mod:`workbench.matching.report`) and words it with the shared display
helpers of :mod:`workbench.matching.presentation` (the pooled-class note,
overlaps grouped by observed line) and :mod:`workbench.matching.xrf_view`
(X-ray peaks and artefacts); it decides nothing.
"""

from __future__ import annotations

from typing import Any

from workbench.matching.presentation import observed_interference_lines, verdict_basis

__all__ = ["summary_text"]


def summary_text(report: dict[str, Any], max_rejected: int = 5) -> str:
    """Readable summary for the terminal: verdict table, warnings, unassigned lines."""
    u = report["input"]["unit"]
    inp = report["input"]
    out = [
        f"input     {inp['name']}  sha256 {inp['sha256']}",
        f"axis      {inp['axis']} ({u}, medium {inp['medium'] or 'n/a'}), {inp['mode']}, "
        f"{inp['n_peaks']} lines",
        "reference " + ", ".join(f"{s['id']} {s['version']}" for s in report["reference_sets"]),
    ]
    # What the reader decided (columns, assumed medium, rows left out) is part
    # of the statement: an assumed medium moves every wavelength.
    for i, note in enumerate(inp.get("notes") or ()):
        out.insert(1 + i, f"{'read' if i == 0 else '':<9} {note}")
    xray = report.get("xray")
    if xray:
        from workbench.xray.wording import instrument_line

        out.append(instrument_line(xray))
    else:
        t = report["temperature"]
        est = t.get("estimate") or {}
        t_line = f"temperature {t['working_temperature_K']:.0f} K"
        if est.get("temperature_K"):
            t_line += (
                f" (Boltzmann plot of {est['species']}: {est['temperature_K']:.0f} ± "
                f"{est['uncertainty_K']:.0f} K, R² {est['r_squared']:.3f})"
            )
        elif t.get("given_K"):
            t_line += " (given)"
        out.append(t_line)
    em = report.get("evidence_model") or {}
    sm = em.get("source_model") or {}
    if sm:
        out.append(
            f"source model {sm.get('name')} (σ {sm.get('sigma_dex')} dex; {sm.get('chosen_by')}); "
            f"abundance prior {em.get('abundance_prior')}; "
            f"{em.get('n_species_tried')} species tried"
        )
    cal = report.get("calibration") or {}
    if cal.get("applied"):
        out.append(f"scale corrected: {cal.get('message')}")
    out.append("")
    out.append(
        f"{'species':<10} {'verdict':<14} {'E/dex':>6} {'groups':>7} {'uniq':>4} "
        f"{'miss':>4}  best lines ({u})"
    )
    rejected = [el for el in report["elements"] if el["verdict_level"] == 0]
    shown_rejected = 0
    raised: list[str] = []
    for el in report["elements"]:
        if el["verdict_level"] == 0:
            shown_rejected += 1
            if shown_rejected > max_rejected:
                continue
        best = sorted(el["matched_lines"], key=lambda m: -(m["expected_rel"] or 0))[:3]
        fmt = ".0f" if u == "eV" else ".3f"  # X-ray energies to 1 eV
        lines = ", ".join(f"{m[f'reference_{u}']:{fmt}}" for m in best)
        basis = verdict_basis(el)
        verdict = el["verdict"]
        if basis:
            # Its class comes from the element's pooled stages (footnote below).
            verdict += "*"
            raised.append(f"  * {el['species']}: {basis}")
        out.append(
            f"{el['species']:<10} {verdict:<14} {el['net_evidence_dex']:>6.1f} "
            f"{el['n_groups_found']:>3}/{el['n_groups_expected']:<3} "
            f"{el['n_unique_found']:>4} {el['n_missing_strong']:>4}  {lines}"
        )
    if len(rejected) > max_rejected:
        out.append(f"(+{len(rejected) - max_rejected} more species not supported; see the JSON)")
    if raised:
        out.append("class from the element's ion stages pooled (E/dex above is the stage alone):")
        out.extend(raised)
    grouped: list[str] = []
    if xray:
        from workbench.matching.xrf_view import interference_lines

        grouped = interference_lines(report)
    else:
        grouped = observed_interference_lines(report)
    if report["warnings"]:
        out.append("")
        out.append("warnings:")
        for w in report["warnings"]:
            if w["kind"] == "overlap_ruled_out":  # X-ray: listed together below
                continue
            if grouped and w["kind"] == "unresolved_overlap" and w.get("observed") is not None:
                continue  # grouped by peak or line below (the JSON keeps each message)
            out.append(f"  [{w['kind']}] {w['message']}")
    if grouped:
        out.append("")
        if xray:
            out.append(
                "interferences, by peak (families whose lines this detector cannot separate):"
            )
        else:
            out.append(
                "interferences, by observed line (species with a line in its window, the "
                "best-supported first; R: the resolving power that separates each from it; "
                "each pair's settling lines are in the JSON):"
            )
        out.extend(f"  {line}" for line in grouped)
    if any(w["kind"] == "overlap_ruled_out" for w in report["warnings"]):
        from workbench.matching.xrf_view import ruled_out_lines

        out.append("")
        out.append(
            "ruled out on their own lines (a line falls on a peak of an element found, "
            "but the family's other lines speak against it):"
        )
        out.extend(f"  {line}" for line in ruled_out_lines(report["warnings"]))
    if xray and (xray.get("artefact_peaks") or xray.get("artefacts_without_peak")):
        from workbench.matching.xrf_view import artefact_text_lines

        out.append("")
        out.extend(artefact_text_lines(xray))
    un = [ln for ln in report["lines"] if ln["status"] == "unassigned"]
    if un:
        out.append("")
        pos_fmt = ".0f" if u == "eV" else ".4f"
        shown = ", ".join(f"{ln[f'observed_{u}']:{pos_fmt}}" for ln in un[:20])
        more = f" (+{len(un) - 20} more)" if len(un) > 20 else ""
        out.append(f"unassigned lines ({u}): {shown}{more}")
    s = report["summary"]
    out.append("")
    out.append(
        f"{s['n_assigned']} assigned, {s['n_shared']} shared, {s['n_unassigned']} "
        "unassigned. Results need review by a qualified examiner."
    )
    return "\n".join(out)
