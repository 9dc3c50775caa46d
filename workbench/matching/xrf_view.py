"""X-ray fluorescence results for display: artefact peaks and overlaps in detector terms.

One shaping of a result's ``xray`` record (see docs/result-schema.md) for
every face: the CLI text report (:func:`artefact_text_lines`), the app's
table and plot marks (:func:`artefact_table`, :func:`artefact_marks`) and
the findings sheet (:func:`artefact_table`). Nothing is decided here: which
peak is an artefact, what it is predicted to be and whether its excess is
kept as evidence are the engine's (:mod:`workbench.xray`); this module only
selects, orders and words them.

Wording follows XRF practice: energies to 1 eV (a silicon-drift detector
resolves 120–200 eV; tabulated line energies are good to about 1 eV), kinds
named as an analyst names them (escape, sum, Rayleigh, Compton, Ar K), and
overlaps stated in eV against the detector's FWHM at that energy as
"resolved / unresolved at this detector".
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any, TypedDict

from workbench.xray.wording import artefact_kind_label

__all__ = [
    "ArtefactMark",
    "ArtefactRow",
    "artefact_kind",
    "artefact_marks",
    "artefact_rows",
    "artefact_table",
    "artefact_text_lines",
    "artefact_top",
    "decision_text",
    "detector_overlap_text",
    "interference_lines",
    "ruled_out_lines",
    "ruled_out_summary",
]


class ArtefactRow(TypedDict):
    """One artefact, with or without a peak of its own (plain values, unformatted)."""

    energy_eV: float
    energy_range_eV: tuple[float, float] | None
    kind: str
    origin: str
    separated: bool
    observed_height: float | None
    predicted_height: float | None
    expected_counts: float | None
    evidence: str


class ArtefactMark(TypedDict):
    """One artefact as a mark on the stick plot."""

    position: float
    height: float | None
    separated: bool
    text: str


def artefact_kind(kinds: str) -> str:
    """Kind label of a comma list, for one table cell.

    The words are :data:`workbench.xray.wording.ARTEFACT_KIND_WORDS`:
    ``"compton,sum"`` → ``"tube scatter (Compton) + sum (pile-up) peak"``.
    """
    return artefact_kind_label(kinds, sep=" + ")


def _num(v: Any) -> float | None:
    return float(v) if isinstance(v, int | float) and math.isfinite(v) else None


def _energy(v: float | None) -> str:
    # Half-up to 1 eV (4466.5 → 4467), as tables print.
    return "–" if v is None else f"{math.floor(v + 0.5)}"


def artefact_rows(xray: Mapping[str, Any] | None) -> list[ArtefactRow]:
    """Every artefact of a result's ``xray`` record, by energy.

    Parameters
    ----------
    xray : mapping or None
        ``report["xray"]`` (``None`` or empty off the energy axis).

    Returns
    -------
    list of ArtefactRow
        Labelled peaks (``separated`` true) and predicted artefacts without a
        separate peak (``separated`` false), sorted by energy. ``evidence``
        says what the engine did with the peak: ``"none"`` (taken out),
        ``"excess only"`` (stronger than predicted; the excess stays as
        evidence for elements), ``"no peak"`` or ``"faint"`` (predicted
        below the peak finder's acceptance; it may still add to a weak
        line there). ``energy_range_eV`` is set for merged predictions.
    """
    if not xray:
        return []
    out: list[ArtefactRow] = []
    for a in xray.get("artefact_peaks") or []:
        out.append(
            {
                "energy_eV": float(a["observed_eV"]),
                "energy_range_eV": None,
                "kind": artefact_kind(a.get("kinds", "")),
                "origin": str(a.get("origin", "")),
                "separated": True,
                "observed_height": _num(a.get("intensity")),
                "predicted_height": _num(a.get("predicted_intensity")),
                "expected_counts": None,
                "evidence": "none" if a.get("explained") else "excess only",
            }
        )
    for a in xray.get("artefacts_without_peak") or []:
        rng = a.get("energy_range_eV")
        out.append(
            {
                "energy_eV": float(a["energy_eV"]),
                "energy_range_eV": (
                    (float(rng[0]), float(rng[1]))
                    if rng and float(rng[1]) - float(rng[0]) >= 1.0
                    else None
                ),
                "kind": artefact_kind(a.get("kinds", "")),
                "origin": str(a.get("origin", "")),
                "separated": False,
                "observed_height": None,
                "predicted_height": None,
                "expected_counts": _num(a.get("expected_counts")),
                "evidence": "faint" if a.get("faint") else "no peak",
            }
        )
    out.sort(key=lambda r: (r["energy_eV"], not r["separated"]))
    return out


def _predicted_words(r: ArtefactRow) -> str:
    # Scatter and argon peaks depend on the sample and the path: no prediction.
    if r["separated"]:
        if r["predicted_height"] is None:
            return "not predicted"
        return f"height {r['predicted_height']:,.0f}"
    if r["expected_counts"] is None:
        return "not predicted"
    return f"about {r['expected_counts']:,.0f} counts"


_EVIDENCE_WORDS = {
    "none": "no (artefact)",
    "excess only": "only the excess over the prediction",
    "no peak": "– (no separate peak)",
    "faint": "– (below the detection limit; may add to a weak line here)",
}


def _energy_text(r: ArtefactRow) -> str:
    # A merged prediction is shown as its range (a sum peak beside a broad
    # Compton peak), one energy otherwise.
    rng = r["energy_range_eV"]
    return f"{_energy(rng[0])}–{_energy(rng[1])}" if rng else _energy(r["energy_eV"])


def artefact_table(xray: Mapping[str, Any] | None) -> list[dict[str, str]]:
    """Artefacts as table rows with human headers (energies to 1 eV, units in headers).

    Columns: ``Energy (eV)``, ``Kind``, ``Origin``, ``Observed peak height``
    (``"no separate peak"`` for a predicted artefact merged with a neighbour
    or too weak to separate), ``Predicted`` (peak height for a labelled
    peak, expected counts in the peak for one without; scatter and argon
    depend on the sample and are not predicted), ``Used as evidence``.
    """
    return [
        {
            "Energy (eV)": _energy_text(r),
            "Kind": r["kind"],
            "Origin": r["origin"],
            "Observed peak height": (
                f"{r['observed_height']:,.0f}"
                if r["observed_height"] is not None
                else ("no separate peak" if not r["separated"] else "–")
            ),
            "Predicted": _predicted_words(r),
            "Used as evidence": _EVIDENCE_WORDS[r["evidence"]],
        }
        for r in artefact_rows(xray)
    ]


def artefact_text_lines(xray: Mapping[str, Any] | None) -> list[str]:
    """The artefact list for a plain-text report (empty when there is none)."""
    rows = artefact_rows(xray)
    if not rows:
        return []
    peaks = [r for r in rows if r["separated"]]
    hidden = [r for r in rows if not r["separated"]]
    out: list[str] = []
    if peaks:
        out.append("artefact peaks (instrument, not sample; not evidence for any element):")
        for r in peaks:
            note = (
                "  — stronger than predicted: the excess is kept as evidence for elements"
                if r["evidence"] == "excess only"
                else ""
            )
            out.append(f"  {_energy(r['energy_eV']):>6} eV  {r['kind']}: {r['origin']}{note}")
    if hidden:
        out.append("predicted artefacts with no separate peak (merged with a neighbour or weak):")
        for r in hidden:
            n = r["expected_counts"]
            counts = f" (about {n:,.0f} counts expected)" if n is not None else ""
            faint = ", below the detection limit" if r["evidence"] == "faint" else ""
            out.append(f"  {_energy_text(r):>6} eV  {r['kind']}: {r['origin']}{counts}{faint}")
    return out


def artefact_marks(report: Mapping[str, Any]) -> list[ArtefactMark]:
    """Artefacts as plot marks, heights on the scale of the observed sticks.

    Heights are peak heights over the tallest of the report's evidence lines
    and labelled artefact peaks (the same top as
    :func:`workbench.matching.presentation.observed_sticks` on an energy
    axis); ``None`` for an artefact without a separate peak (drawn as a
    mark at the axis).
    """
    xray = report.get("xray")
    rows = artefact_rows(xray)
    if not rows:
        return []
    top = artefact_top(report)
    out: list[ArtefactMark] = []
    for r in rows:
        h = r["observed_height"]
        height = abs(h) / top if (h is not None and top > 0) else (1.0 if r["separated"] else None)
        pred = _predicted_words(r)
        out.append(
            {
                "position": r["energy_eV"],
                "height": height,
                "separated": r["separated"],
                "text": f"{r['kind']} {_energy_text(r)} eV: {r['origin']}"
                + ("" if r["separated"] else " (no separate peak)")
                + f"; predicted {pred}",
            }
        )
    return out


def artefact_top(report: Mapping[str, Any]) -> float:
    """The tallest peak height among the evidence lines and the labelled artefact peaks."""
    heights = [_num(ln.get("intensity")) for ln in report.get("lines") or []]
    xray = report.get("xray") or {}
    heights += [_num(a.get("intensity")) for a in xray.get("artefact_peaks") or []]
    finite = [abs(v) for v in heights if v is not None]
    return max(finite) if finite else 0.0


def detector_overlap_text(separation_eV: float, at_eV: float, xray: Mapping[str, Any]) -> str:
    """Separation in eV against the detector FWHM at that energy, as resolved / unresolved.

    Parameters
    ----------
    separation_eV : float
        Distance between the two lines.
    at_eV : float
        Energy at which the detector's FWHM is taken (the lines' mean).
    xray : mapping
        ``report["xray"]``: its ``instrument`` gives the FWHM model.
    """
    from workbench.xray import Instrument
    from workbench.xray.detector import fwhm_eV
    from workbench.xray.wording import overlap_text

    inst = Instrument.from_dict(dict(xray["instrument"]))
    return overlap_text(float(separation_eV), float(fwhm_eV(float(at_eV), inst)))


def decision_text(decision: Mapping[str, Any] | None) -> str:
    """The spectrum fit's decision on an overlap, in words (empty when there is none).

    ``{"Ba L": {"needed": False, ...}, "Ti K": {"needed": True,
    "settling_lines_eV": [4505.0, 4510.9, 4931.8]}}`` →
    ``"settled on the spectrum: Ti K needed (on 4,505, 4,511, 4,932 eV); Ba L not needed"``
    (energies as the app's tables print them).
    """
    if not isinstance(decision, Mapping) or not decision:
        return ""
    parts = []
    for fam in sorted(decision, key=lambda f: (not decision[f].get("needed"), f)):
        r = decision[fam]
        lines: Sequence[Any] = r.get("settling_lines_eV") or []
        on = (
            " (on " + ", ".join(f"{math.floor(float(e) + 0.5):,}" for e in lines[:4]) + " eV)"
            if lines and r.get("needed")
            else ""
        )
        parts.append(f"{fam} {'needed' if r.get('needed') else 'not needed'}{on}")
    return "settled on the spectrum: " + "; ".join(parts)


def _ruled_out(warnings: Sequence[Mapping[str, Any]]) -> list[Mapping[str, Any]]:
    rows = [w for w in warnings if w.get("kind") == "overlap_ruled_out"]
    return sorted(rows, key=lambda w: (float(w.get("observed") or 0.0), str(w.get("ruled_out"))))


def ruled_out_lines(warnings: Sequence[Mapping[str, Any]]) -> list[str]:
    """One short line per ``overlap_ruled_out`` note, by energy (empty when none).

    ``"Ba L: a line under the Ti K peak at 4508 eV; its strong lines at
    5154, 5531 eV are missing"``.
    """
    out = []
    for w in _ruled_out(warnings):
        fam = str(w.get("ruled_out") or "")
        others = [str(e) for e in w.get("elements") or [] if str(e) != fam]
        under = others[0] if others else "another family"
        settle = (w.get("settle") or {}).get(fam) or {}
        missing = [float(v) for v in settle.get("missing") or []]
        why = (
            ("its strong lines at " if len(missing) > 1 else "its strong line at ")
            + ", ".join(_energy(v) for v in missing)
            + (" eV are missing" if len(missing) > 1 else " eV is missing")
            if missing
            else "its other lines do not fit the spectrum"
        )
        at = _num(w.get("observed"))
        out.append(f"{fam}: a line under the {under} peak at {_energy(at)} eV; {why}")
    return out


def ruled_out_summary(warnings: Sequence[Mapping[str, Any]]) -> str:
    """The ``overlap_ruled_out`` notes as one sentence (empty when none), for a report or sheet."""
    lines = ruled_out_lines(warnings)
    if not lines:
        return ""
    return (
        "Ruled out on their own lines, although one of their lines falls on a peak of an "
        "element found: " + "; ".join(lines) + "."
    )


def interference_lines(report: Mapping[str, Any]) -> list[str]:
    """Open X-ray interferences grouped by observed peak, one short line each (CLI text).

    Each ``unresolved_overlap`` warning of the report is one pair of families
    in one peak; a reader wants the peak once, the family the peak was given
    to first (best verdict), the others with their distance in eV against
    the detector's FWHM there, and how the spectrum fit decided. Families the
    fit did not decide are named with the lines that would settle them.
    Empty off the energy axis.
    """
    xray = report.get("xray")
    if not xray:
        return []
    from workbench.xray import Instrument
    from workbench.xray.detector import fwhm_eV

    inst = Instrument.from_dict(dict(xray["instrument"]))
    levels = {str(e["species"]): int(e["verdict_level"]) for e in report.get("elements") or []}
    groups: dict[float, list[Mapping[str, Any]]] = {}
    for w in report.get("warnings") or []:
        obs = _num(w.get("observed"))
        if w.get("kind") == "unresolved_overlap" and obs is not None:
            groups.setdefault(round(obs, 6), []).append(w)
    out = []
    for obs in sorted(groups):
        ws = groups[obs]
        names = sorted(
            {str(s) for w in ws for s in w.get("elements") or []},
            key=lambda s: (-levels.get(s, 0), s),
        )
        first = names[0]
        fwhm = float(fwhm_eV(obs, inst))
        apart: dict[str, float] = {}
        needed: dict[str, bool] = {}
        for w in ws:
            sep = _num(w.get("separation"))
            for s in w.get("elements") or []:
                if s != first and sep is not None:
                    apart[str(s)] = min(apart.get(str(s), sep), sep)
            for fam, r in (w.get("decision") or {}).items():
                needed[str(fam)] = needed.get(str(fam), False) or bool(r.get("needed"))
        others = ", ".join(
            f"{s} ({apart[s]:.0f} eV apart" + (")" if apart[s] < fwhm else ", resolved)")
            for s in names[1:]
            if s in apart
        )
        text = (
            f"{_energy(obs):>6} eV  {first}, with lines of {others} "
            f"in one peak at this detector (FWHM {fwhm:.0f} eV here)"
        )
        fitted = [s for s in names if s in needed]
        if fitted:
            yes = [s for s in fitted if needed[s]]
            no = [s for s in fitted if not needed[s]]
            text += "; the spectrum fit needs " + (", ".join(yes) or "none of them")
            text += f", not {', '.join(no)}" if no else ""
        for s in names:
            if s in needed or s == first:
                continue
            settle = _settles(ws).get(s) or {}
            clean = ", ".join(_energy(float(v)) for v in settle.get("found") or [])
            missing = ", ".join(_energy(float(v)) for v in settle.get("missing") or [])
            how = "; ".join(
                p
                for p in (
                    f"clean lines at {clean} eV" if clean else "",
                    f"strong lines missing at {missing} eV" if missing else "",
                )
                if p
            )
            text += f"; {s} not fitted: settle on its other lines ({how or 'none in range'})"
        out.append(text)
    return out


def _settles(ws: Sequence[Mapping[str, Any]]) -> dict[str, Any]:
    merged: dict[str, Any] = {}
    for w in ws:
        merged.update(w.get("settle") or {})
    return merged
