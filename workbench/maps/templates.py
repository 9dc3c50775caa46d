"""Spectral templates for the per-pixel fit: line families, artefacts, background.

A *family* is one element's lines from one initial shell (K, L or M), as the
engine names its X-ray species (``"Pb L"``). Its template is the sum of the
family's lines from the shipped ``xray`` reference set, each weighted by its
relative intensity within its initial level times a sub-shell weight (L3 : L2
: L1 = 1 : 0.5 : 0.25, M5 … M1 = 1, 0.6, 0.2, 0.1, 0.1; common practice, no
source — it varies with excitation), broadened by the detector response and
with its Si escape peaks added (:mod:`workbench.maps.detector`). Templates
are scaled so that a coefficient is the number of counts in the family's
lines. The background is a non-negative combination of cubic B-splines with
knots every ~2 keV: smooth enough not to absorb a line (FWHM 120–250 eV),
flexible enough for a bremsstrahlung hump.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from workbench.errors import InputError
from workbench.maps.detector import SI_ESCAPE_EV, SI_K_EDGE_EV, Instrument, gaussian_response

__all__ = ["SUBSHELL_WEIGHT", "FamilyLines", "TemplateSet", "build_templates", "family_lines"]

#: Relative weights of initial sub-shells within one family (common practice, no source).
SUBSHELL_WEIGHT: dict[str, float] = {
    "K": 1.0,
    "L1": 0.25,
    "L2": 0.5,
    "L3": 1.0,
    "M1": 0.1,
    "M2": 0.1,
    "M3": 0.2,
    "M4": 0.6,
    "M5": 1.0,
}


@dataclass(frozen=True)
class FamilyLines:
    """Lines of one family: energies (eV) and weights (strongest = 1)."""

    species: str
    element: str
    family: str
    energy_eV: np.ndarray
    weight: np.ndarray

    @property
    def main_eV(self) -> float:
        """Energy of the strongest line (eV)."""
        return float(self.energy_eV[int(np.argmax(self.weight))])


@lru_cache(maxsize=2)
def _xray_lines() -> dict[str, FamilyLines]:
    from workbench.refdata import load_set

    ref = load_set("xray")
    t = ref.table.select("element", "energy_eV", "initial_level", "rel_intensity").drop_nulls()
    el = t["element"].to_list()
    e = t["energy_eV"].to_numpy().astype(float)
    lvl = t["initial_level"].to_list()
    rel = t["rel_intensity"].to_numpy().astype(float)
    groups: dict[str, list[int]] = {}
    for i, (element, level) in enumerate(zip(el, lvl, strict=True)):
        if not level or rel[i] <= 0:
            continue
        groups.setdefault(f"{element} {level[0]}", []).append(i)
    out: dict[str, FamilyLines] = {}
    for species, idx in groups.items():
        ix = np.array(idx)
        w = rel[ix] * np.array([SUBSHELL_WEIGHT.get(lvl[i], 1.0) for i in ix])
        w = w / w.max()
        order = np.argsort(e[ix])
        element, fam = species.split(" ")
        out[species] = FamilyLines(species, element, fam, e[ix][order], w[order])
    return out


def family_lines(species: str) -> FamilyLines:
    """Lines of one family such as ``"Pb L"`` (InputError for an unknown one)."""
    lines = _xray_lines()
    if species not in lines:
        raise InputError(
            f"no X-ray lines for {species!r} in the xray reference set",
            "name a family as element and shell, e.g. 'Pb L', 'Fe K'",
        )
    return lines[species]


def families_of(element: str) -> list[str]:
    """All families of ``element`` known to the xray set (e.g. Pb → Pb L, Pb M)."""
    return sorted(s for s in _xray_lines() if s.split(" ")[0] == element)


@dataclass(frozen=True)
class TemplateSet:
    """Design matrix of the per-pixel fit.

    Attributes
    ----------
    matrix : numpy.ndarray
        Shape ``(n_channels, n_templates)``; families first, then background.
    names : list of str
        Template names (a family's species label, or ``"background k"``).
    n_families : int
        How many leading columns are line families.
    roi_windows : list of tuple of int
        For each family, the channel slice ``(lo, hi)`` of ±1 FWHM about its
        strongest line (the ROI preview).
    main_eV : list of float
        Strongest-line energy of each family.
    """

    matrix: np.ndarray
    names: list[str]
    n_families: int
    roi_windows: list[tuple[int, int]]
    main_eV: list[float]

    @property
    def families(self) -> list[str]:
        """Species labels of the family templates."""
        return self.names[: self.n_families]


def _background_basis(energy_eV: np.ndarray, knot_spacing_eV: float) -> np.ndarray:
    from scipy.interpolate import BSpline

    lo, hi = float(energy_eV[0]), float(energy_eV[-1])
    n_int = max(round((hi - lo) / knot_spacing_eV), 1)
    inner = np.linspace(lo, hi, n_int + 1)
    k = 3
    t = np.concatenate([[lo] * k, inner, [hi] * k])
    x = np.clip(energy_eV, lo, hi)
    basis = BSpline.design_matrix(x, t, k).toarray()
    return basis[:, basis.sum(axis=0) > 0]


def build_templates(
    energy_eV: np.ndarray,
    species: Sequence[str],
    instrument: Instrument,
    *,
    knot_spacing_eV: float = 2000.0,
) -> TemplateSet:
    """Build the fit's design matrix on the cube's energy axis.

    Parameters
    ----------
    energy_eV : numpy.ndarray
        Channel centres (eV), increasing.
    species : sequence of str
        Families to map (``"Pb L"``, ``"Fe K"``, …); families whose lines all
        fall outside the axis are skipped.
    instrument : Instrument
        Detector response and escape fraction.
    knot_spacing_eV : float
        Background B-spline knot spacing.

    Returns
    -------
    TemplateSet
    """
    e = np.asarray(energy_eV, dtype=float)
    lo, hi = float(e[0]), float(e[-1])
    cols: list[np.ndarray] = []
    names: list[str] = []
    windows: list[tuple[int, int]] = []
    mains: list[float] = []
    for sp in sorted(set(species)):
        fam = family_lines(sp)
        inside = (fam.energy_eV >= lo) & (fam.energy_eV <= hi) & (fam.weight >= 1e-3)
        if not inside.any():
            continue
        le, w = fam.energy_eV[inside], fam.weight[inside]
        w = w / w.sum()
        col = gaussian_response(e, le, instrument.fwhm(le)) @ w
        esc = le > SI_K_EDGE_EV
        if instrument.escape_fraction > 0 and esc.any():
            le2 = le[esc] - SI_ESCAPE_EV
            col = col + instrument.escape_fraction * (
                gaussian_response(e, le2, instrument.fwhm(le2)) @ w[esc]
            )
        main = float(le[int(np.argmax(w))])
        half = float(instrument.fwhm(main))
        i0 = int(np.searchsorted(e, main - half))
        i1 = int(np.searchsorted(e, main + half))
        cols.append(col)
        names.append(sp)
        windows.append((i0, max(i1, i0 + 1)))
        mains.append(main)
    n_fam = len(cols)
    bg = _background_basis(e, knot_spacing_eV)
    # Scale each background column to the height of a typical family column so
    # the solver's step sizes are comparable (it is scale-invariant in theory).
    bg = bg / bg.sum(axis=0, keepdims=True)
    matrix = np.column_stack([*cols, bg]) if cols else bg
    names += [f"background {k}" for k in range(bg.shape[1])]
    return TemplateSet(matrix, names, n_fam, windows, mains)
