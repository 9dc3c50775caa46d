"""X-ray reference line intensities as the excitation makes them.

The shipped ``xray`` set (Elam, Ravel & Sieber 2002) gives each line's share
of its *initial level's* emission. How much each level emits depends on the
excitation: photo-ionisation of each sub-shell, Coster–Kronig transfer and
cascades, fluorescence yields. The expected pattern of an L or M family
follows these sub-shell populations, so fixed L1 : L2 : L3 weights get it
wrong (Pb Mζ, M4,5-N2,3 at 1.83 keV, came out at 0.3 % of Pb Mα, while the
physics makes it about 9 %, and an absent element was called on its peak).

:func:`line_weights` gives per table line the factor that turns its share
into detected photons, from :func:`workbench.xray.forward.line_yields`
(xraylib 4.3 ``CS_FluorLine_Kissel_Cascade`` over the tube spectrum, path
transmission, detector efficiency) for the default instrument
(:data:`workbench.xray.instrument.DEFAULT_INSTRUMENT`: Rh tube at 40 kV, air,
silicon-drift detector). The reference index is shared by every run, and
the pattern within one family changes little from tube to tube; the x-ray
source model's 0.2 dex covers the rest. A thin-film yield is used: in a
thick sample, sub-shells with different edges are excited by somewhat
different primary energies (Pb M3-N1 measured 2.4 × its thin-film share of
Pb Mα in the lead-white test case), which the 0.2 dex does not always cover.
"""

from __future__ import annotations

import hashlib

import numpy as np
import polars as pl

__all__ = ["FALLBACK_LEVEL_WEIGHT", "expand_levels", "line_weights"]

#: Fallback weights of the sub-shell families relative to L3 / M5, used only
#: for a line whose level xraylib gives no yield for (common practice, no
#: source; varies with excitation).
FALLBACK_LEVEL_WEIGHT: dict[str, float] = {
    "L1": 0.25,
    "L2": 0.5,
    "L3": 1.0,
    "M1": 0.1,
    "M2": 0.1,
    "M3": 0.2,
    "M4": 0.6,
    "M5": 1.0,
    "K": 1.0,
}


def expand_levels(spec: str) -> list[str]:
    """``"M4,5"`` → ``["M4", "M5"]``; ``"K"`` → ``["K"]``; ``"N6,7"`` → ``["N6", "N7"]``."""
    head = spec.rstrip("0123456789,")
    digits = spec[len(head) :]
    return [head + d for d in digits.split(",") if d] if digits else [spec]


def _split(name: str) -> tuple[str, str]:
    """Split an xraylib IUPAC name → (initial, final) level: ``"M5N7"`` → ``("M5", "N7")``."""
    return (name[:1], name[1:]) if name[0] == "K" else (name[:2], name[2:])


def _yields(element: str) -> dict[str, float]:
    # Precomputed for the default instrument (workbench.xray.yield_cache):
    # the same values, without two seconds of xraylib calls per process.
    from workbench.xray.yield_cache import default_yields

    return default_yields(element)


def _covered(transition: str) -> set[str]:
    """The xraylib names a table transition (``"M4,5-N2,3"``) stands for."""
    if "-" not in transition:
        return set()
    ini, fin = transition.split("-", 1)
    return {a + b for a in expand_levels(ini) for b in expand_levels(fin)}


def line_weights(
    element: np.ndarray, transition: np.ndarray, initial: np.ndarray, rel: np.ndarray
) -> np.ndarray:
    """Per X-ray line, the factor on its tabulated share that gives its detected yield.

    A line xraylib lists gets its yield (summed over the sub-lines a combined
    name such as ``M4,5-N2,3`` stands for), so ``rel × weight`` is that yield
    on one scale per element (the element's strongest line = 1). A line
    xraylib does not list keeps its tabulated share times its initial
    level's total yield, or :data:`FALLBACK_LEVEL_WEIGHT` when the level has
    none (e.g. below 800 eV, where no line is measured anyway).

    Parameters
    ----------
    element, transition, initial : numpy.ndarray of str
        Per line: element symbol, IUPAC transition (``"L3-M5"``), initial level.
    rel : numpy.ndarray
        Tabulated share of the initial level's emission.

    Returns
    -------
    numpy.ndarray
    """
    out = np.array(
        [FALLBACK_LEVEL_WEIGHT.get(str(v), 1.0) if v else 1.0 for v in initial], dtype=np.float64
    )
    element = np.asarray(element, dtype=object)
    for el in sorted({str(e) for e in element if e is not None}):
        yields = _yields(el)
        if not yields:
            continue
        top = max(yields.values())
        level_total: dict[str, float] = {}
        for name, y in yields.items():
            lev = _split(name)[0]
            level_total[lev] = level_total.get(lev, 0.0) + y
        for i in np.flatnonzero(element == el):
            tr, r = transition[i], rel[i]
            if not tr or not (np.isfinite(r) and r > 0):
                continue
            names = _covered(str(tr))
            y = sum(yields.get(n, 0.0) for n in names)
            if y > 0:
                out[i] = y / r / top
                continue
            inis = expand_levels(str(tr).split("-", 1)[0])
            lev_y = max((level_total.get(a, 0.0) for a in inis), default=0.0)
            if lev_y > 0:
                out[i] = lev_y / top
    return out


#: A line the table lacks is added when its yield is at least this part of
#: its family's strongest (Pb M3-N1 is 0.5 % of Pb Mα in a thin film, 1.2 %
#: in the lead-white test case; common practice, no source).
SUPPLEMENT_MIN_FRACTION: float = 0.002

#: ``source_id`` of the added lines (the package that computes them).
SUPPLEMENT_SOURCE: str = "xraylib"


def supplement_lines(table: pl.DataFrame) -> tuple[pl.DataFrame, dict[str, str]]:
    """Lines xraylib lists that ``table`` lacks, in the table's columns, and their provenance.

    Per element of ``table``: every xraylib line whose yield, summed with
    those of the other lines the table lacks within one detector FWHM of it
    (one peak at the detector), is at least
    :data:`SUPPLEMENT_MIN_FRACTION` of its family's strongest (K, L or M),
    that no table transition of the element covers, and that is not within
    one detector FWHM (default instrument) of a line of its family ten times
    stronger. ``rel_intensity`` is
    the line's radiative rate (its share of the initial level, as in the
    table), energies are xraylib's ``LineEnergy``, ``line_id`` is
    ``xraylib:<element>:<transition>``.

    Returns
    -------
    (polars.DataFrame, dict)
        The added lines (possibly empty) and a provenance record (``id``,
        ``version``, ``sha256`` of the added rows' text) for the result.
    """
    import xraylib

    from workbench.xray.detector import fwhm_eV
    from workbench.xray.forward import _element_lines
    from workbench.xray.instrument import DEFAULT_INSTRUMENT

    rows: list[dict[str, object]] = []
    for el in sorted(set(table["element"].drop_nulls().to_list())):
        yields = _yields(el)
        if not yields:
            continue
        energy_of = {n: e for n, _, e in _element_lines(el)}
        have: set[str] = set()
        for tr in table.filter(pl.col("element") == el)["transition"].drop_nulls().to_list():
            have |= _covered(str(tr))
        fam_top: dict[str, float] = {}
        for name, y in yields.items():
            fam_top[name[0]] = max(fam_top.get(name[0], 0.0), y)
        z = xraylib.SymbolToAtomicNumber(el)
        for name, y in sorted(yields.items()):
            if name in have:
                continue
            e_c = energy_of.get(name, np.nan)
            w_c = float(fwhm_eV(np.array([e_c]), DEFAULT_INSTRUMENT)[0])
            # The detector sees the lines the table lacks within one FWHM of
            # each other as one peak: the cut applies to their summed yield
            # (Pb L1-O3 and L1-O2, 0.15 % and 0.13 % of Pb Lα, 22 eV apart,
            # make one 0.28 % peak at 15.77 keV that Zr Kα was called on).
            blend = sum(
                v
                for n, v in yields.items()
                if n[0] == name[0] and n not in have and abs(energy_of.get(n, np.inf) - e_c) <= w_c
            )
            if blend < SUPPLEMENT_MIN_FRACTION * fam_top[name[0]]:
                continue
            # A minor line within one detector FWHM of a line of its family
            # ten times stronger makes no peak of its own (it only widens that
            # one), and listing it would chain resolvable groups together.
            if any(
                n[0] == name[0] and v >= 10.0 * y and abs(energy_of.get(n, np.inf) - e_c) <= w_c
                for n, v in yields.items()
            ):
                continue
            code = getattr(xraylib, f"{name}_LINE")
            try:
                energy = xraylib.LineEnergy(z, code) * 1000.0
                rate = xraylib.RadRate(z, code)
            except ValueError:
                continue
            ini, fin = _split(name)
            rows.append(
                {
                    "line_id": f"xraylib:{el}:{ini}-{fin}",
                    "element": el,
                    "energy_eV": round(float(energy), 1),
                    "transition": f"{ini}-{fin}",
                    "initial_level": ini,
                    "rel_intensity": float(rate),
                    "source_id": SUPPLEMENT_SOURCE,
                    "n_sources": 1,
                    "notes": "minor line computed by xraylib (not in the Elam table)",
                }
            )
    schema = {
        "line_id": pl.Utf8,
        "element": pl.Utf8,
        "energy_eV": pl.Float64,
        "transition": pl.Utf8,
        "initial_level": pl.Utf8,
        "rel_intensity": pl.Float64,
        "source_id": pl.Utf8,
        "n_sources": pl.Int32,
        "notes": pl.Utf8,
    }
    out = pl.DataFrame(rows, schema=schema)
    text = "\n".join(
        f"{r['line_id']}\t{r['energy_eV']:.1f}\t{r['rel_intensity']:.6g}" for r in rows
    )
    prov = {
        "id": "xraylib_minor_lines",
        "version": str(getattr(xraylib, "__version__", "")),
        "sha256": hashlib.sha256(text.encode("utf-8")).hexdigest(),
        "rule": f"lines of at least {SUPPLEMENT_MIN_FRACTION:g} of their family's strongest "
        "(summed over the lacking lines within one detector FWHM) that the x-ray set lacks "
        "(workbench.xray.lines)",
    }
    return out, prov
