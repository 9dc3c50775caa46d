"""Optional abundance priors: how likely an element is to be there before the spectrum is seen.

The analyst chooses ``none`` (the default: every element starts equal),
``crustal`` (continental crust: soils, glass, ceramics, pigments, minerals)
or ``solar`` (the solar photosphere: sunlight, stellar spectra). The prior
adds prior log-odds to a species' net evidence
(:mod:`workbench.matching.scoring`)::

    prior_dex = clip(0.5 · (log10 A − median log10 A), −2, +2)

with A the abundance of the species' element and the median taken over the
elements of the table: half a decade of odds per decade of abundance,
limited to ±2 decades so that the prior can tip a close call but never make
or break one on its own (a species still needs its lines). Since +2 dex
alone exceeds the "probable" threshold (1.5), a positive prior lifts an
optical species above "possible" only when its data alone are significant
as one pre-specified test, chance probability p ≤ 0.05
(:func:`workbench.matching.prior_test.prior_capped`): under ``solar`` the ASTM
G173 sunlight otherwise gave Si I, Cr I, Ni I and Ne I "probable" at
p = 0.35–0.89. Elements missing
from the table get the lower limit. The report records which prior was
used and each species' term.

Tables (values rounded, from memory of the standard compilations; they
enter only through the clipped, halved logarithm above, so errors of a few
tens of percent change no call):

* ``crustal``: mass fractions in ppm of the continental crust after the
  CRC Handbook's table "Abundance of elements in the Earth's crust".
* ``solar``: photospheric log ε (log10 N/N_H + 12) after Asplund et al.
  (2009, ARA&A 47, 481); noble gases and elements without photospheric
  values from the same paper's indirect/meteoritic estimates.

*Worked example*: under ``solar``, Ca (log ε 6.34; table median ≈ 2.2) gets
clip(0.5·4.1, −2, 2) = +2.0 dex; Dy (1.10) gets −0.55 dex. A Ca II net
evidence of 0.9 dex becomes 2.9 (probable); Dy II at 2.0 becomes 1.45
(possible).
"""

from __future__ import annotations

import numpy as np

from workbench.errors import ValueRangeError

__all__ = ["ABUNDANCE_PRIORS", "prior_dex"]

_CRUSTAL_PPM: dict[str, float] = {
    "O": 461000, "Si": 282000, "Al": 82300, "Fe": 56300, "Ca": 41500, "Na": 23600,
    "Mg": 23300, "K": 20900, "Ti": 5650, "H": 1400, "P": 1050, "Mn": 950, "F": 585,
    "Ba": 425, "Sr": 370, "S": 350, "C": 200, "Zr": 165, "Cl": 145, "V": 120, "Cr": 102,
    "Rb": 90, "Ni": 84, "Zn": 70, "Ce": 66, "Cu": 60, "Nd": 41.5, "La": 39, "Y": 33,
    "Co": 25, "Sc": 22, "Li": 20, "Nb": 20, "N": 19, "Ga": 19, "Pb": 14, "B": 10,
    "Th": 9.6, "Pr": 9.2, "Sm": 7.05, "Gd": 6.2, "Dy": 5.2, "Er": 3.5, "Ar": 3.5,
    "Yb": 3.2, "Hf": 3.0, "Cs": 3.0, "Be": 2.8, "U": 2.7, "Br": 2.4, "Sn": 2.3,
    "Ta": 2.0, "Eu": 2.0, "As": 1.8, "Ge": 1.5, "Ho": 1.3, "W": 1.25, "Mo": 1.2,
    "Tb": 1.2, "Tl": 0.85, "Lu": 0.8, "Tm": 0.52, "I": 0.45, "In": 0.25, "Sb": 0.2,
    "Cd": 0.15, "Hg": 0.085, "Ag": 0.075, "Se": 0.05, "Pd": 0.015, "Bi": 0.0085,
    "He": 0.008, "Ne": 0.005, "Pt": 0.005, "Au": 0.004, "Os": 0.0015, "Ir": 0.001,
    "Ru": 0.001, "Rh": 0.001, "Te": 0.001, "Re": 0.0007, "Kr": 0.0001, "Xe": 0.00003,
}  # fmt: skip

_SOLAR_LOG_EPS: dict[str, float] = {
    "H": 12.00, "He": 10.93, "Li": 1.05, "Be": 1.38, "B": 2.70, "C": 8.43, "N": 7.83,
    "O": 8.69, "F": 4.56, "Ne": 7.93, "Na": 6.24, "Mg": 7.60, "Al": 6.45, "Si": 7.51,
    "P": 5.41, "S": 7.12, "Cl": 5.50, "Ar": 6.40, "K": 5.03, "Ca": 6.34, "Sc": 3.15,
    "Ti": 4.95, "V": 3.93, "Cr": 5.64, "Mn": 5.43, "Fe": 7.50, "Co": 4.99, "Ni": 6.22,
    "Cu": 4.19, "Zn": 4.56, "Ga": 3.04, "Ge": 3.65, "As": 2.30, "Se": 3.34, "Br": 2.54,
    "Kr": 3.25, "Rb": 2.52, "Sr": 2.87, "Y": 2.21, "Zr": 2.58, "Nb": 1.46, "Mo": 1.88,
    "Ru": 1.75, "Rh": 0.91, "Pd": 1.57, "Ag": 0.94, "Cd": 1.71, "In": 0.80, "Sn": 2.04,
    "Sb": 1.01, "Te": 2.18, "I": 1.55, "Xe": 2.24, "Cs": 1.08, "Ba": 2.18, "La": 1.10,
    "Ce": 1.58, "Pr": 0.72, "Nd": 1.42, "Sm": 0.96, "Eu": 0.52, "Gd": 1.07, "Tb": 0.30,
    "Dy": 1.10, "Ho": 0.48, "Er": 0.92, "Tm": 0.10, "Yb": 0.84, "Lu": 0.10, "Hf": 0.85,
    "Ta": -0.12, "W": 0.85, "Re": 0.26, "Os": 1.40, "Ir": 1.38, "Pt": 1.62, "Au": 0.92,
    "Hg": 1.17, "Tl": 0.90, "Pb": 1.75, "Bi": 0.65, "Th": 0.02, "U": -0.54,
}  # fmt: skip

#: Available priors: name → log10 abundance per element (``none`` has no table).
ABUNDANCE_PRIORS: dict[str, dict[str, float] | None] = {
    "none": None,
    "crustal": {el: float(np.log10(v)) for el, v in _CRUSTAL_PPM.items()},
    "solar": dict(_SOLAR_LOG_EPS),
}

_WEIGHT = 0.5
_LIMIT = 2.0


def prior_dex(name: str, element: str) -> float:
    """Prior log-odds (decades) of ``element`` under the prior ``name`` (0 for ``none``)."""
    if name not in ABUNDANCE_PRIORS:
        raise ValueRangeError(f"unknown abundance prior {name!r}", "use none, crustal or solar")
    table = ABUNDANCE_PRIORS[name]
    if table is None:
        return 0.0
    median = float(np.median(list(table.values())))
    value = table.get(element)
    if value is None:
        return -_LIMIT
    return float(np.clip(_WEIGHT * (value - median), -_LIMIT, _LIMIT))
