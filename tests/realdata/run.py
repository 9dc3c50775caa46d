"""Run the product on a real spectrum: its own peak finding, then its own matching."""

from __future__ import annotations

from tests.realdata.loader import RealSpectrum
from workbench.matching.analyse import analyse_spectrum
from workbench.matching.engine import MatchParameters

__all__ = ["element_classes", "extra_unexplained", "lines_shown", "run_real"]

_ORDER = {"established": 3, "probable": 2, "possible": 1, "not supported": 0}


def run_real(rs: RealSpectrum, params: MatchParameters | None = None):
    """Peak finding + matching with the product's defaults (as ``analyse_input`` does)."""
    params = params or MatchParameters(mode=rs.mode)
    return analyse_spectrum(rs.spectrum, None, params)


def element_classes(report: dict) -> dict[str, str]:
    """Best class per element over its species (ion stages)."""
    best: dict[str, int] = {}
    for sp in report["elements"]:
        el = sp["element"]
        best[el] = max(best.get(el, 0), _ORDER[sp["verdict"]])
    names = {v: k for k, v in _ORDER.items()}
    return {el: names[lv] for el, lv in best.items()}


def lines_shown(rs: RealSpectrum, tol_nm: float = 0.01) -> dict[str, list[float]]:
    """Pipeline-identified lines that only one of the lamp's elements explains, per element.

    A line identified by the spectrum's own pipeline (Goodman ``GSP_A*``, pypeit
    ``yfit``) is credited to an expected element when that element has a line
    in the shipped optical set within ``tol_nm`` (0.01 nm: the pipelines' own
    fit residuals are below this) and no other expected element has.
    """
    import numpy as np

    from workbench.matching.engine import build_index
    from workbench.refdata import load_set

    index = build_index([load_set("optical")], "wavelength", rs.spectrum.medium)
    el = np.array(index.species_element, dtype=object)[index.species]
    out: dict[str, list[float]] = {e: [] for e in rs.expected}
    for w in rs.identified_nm:
        lo, hi = np.searchsorted(index.position, [w - tol_nm, w + tol_nm])
        near = {e for e in el[lo:hi] if e in out}
        if len(near) == 1:
            out[near.pop()].append(round(float(w), 4))
    return out


def extra_unexplained(rs: RealSpectrum, outcome, species_report: dict) -> list[float]:
    """Matched peaks of a non-lamp species where no lamp element has a line of note.

    "Of note": a candidate line of a lamp element at that peak with predicted
    strength ≥ 0.05 of its species' strongest (the engine's own competitor
    threshold, ``MatchParameters.competitor_min_rel``) or of unknown strength.
    Peaks at a line the spectrum's own pipeline identified count as lamp
    lines. Two or more remaining peaks: an impurity shown present; fewer: shown absent
    (its support is the lamp's own lines), so a call at "probable" or above
    is a false call.
    """
    import numpy as np

    res = outcome.result
    ep = res.evidence
    el = np.array(res.index.species_element, dtype=object)[ep.pair_species]
    e = ep.strengths[ep.pairs.ref]
    of_note = np.isin(el, list(rs.expected)) & (~np.isfinite(e) | (e >= 0.05))
    lamp_peaks = set(ep.pairs.obs[of_note].tolist())
    # Peaks at a line the spectrum's own pipeline identified (as a lamp line,
    # including lines our optical set lacks, e.g. Ar II) are lamp lines too.
    tol = res.observed.half_window
    ident = np.sort(rs.identified_nm)
    for p in range(tol.size):
        x = res.observed.position[p]
        lo, hi = np.searchsorted(ident, [x - tol[p], x + tol[p]])
        if hi > lo:
            lamp_peaks.add(p)
    out = {
        round(m["observed_nm"], 3)
        for m in species_report["matched_lines"]
        if m["peak_index"] not in lamp_peaks
    }
    return sorted(out)
