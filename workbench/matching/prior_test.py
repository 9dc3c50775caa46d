"""The data's own test of a species an abundance prior favours (optical).

An abundance prior (:mod:`workbench.matching.priors`) may tip a call, not
make one: above "possible" a species with a positive prior needs its data
alone to pass one pre-specified test at p ≤ :data:`PRIOR_DATA_P`
(:func:`prior_capped`). Emission uses the species' own chance probability;
absorption uses :func:`absorption_prior_test`, the binomial tail with the
usable dip density Fisher-combined with the closeness of the dips to each
unresolved blend's forward-modelled position
(:mod:`workbench.matching.absorption`, where the reasoning is written). There
a species may be "probable" on one resolvable feature, its predicted
strongest, found, unique and counted (:func:`main_feature_counted`). Used by
:func:`workbench.matching.scoring.decide_verdict` and by the pooling of ion
stages (:mod:`workbench.matching.pooling`).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import special

from workbench.matching.absorption import feature_test
from workbench.matching.chance import closeness_probability, fisher_combined

__all__ = ["PRIOR_DATA_P", "absorption_prior_test", "main_feature_counted", "prior_capped"]

#: A positive abundance prior may tip a call, never make one: above "possible"
#: an optical species with a prior in its favour needs its data alone to be
#: significant as one pre-specified test, chance probability p ≤ 0.05 (the
#: conventional single-test level; common practice, no source). Without it
#: the solar prior (+2 dex) made Si I, Cr I, Ni I and Ne I "probable" in the
#: ASTM G173 sunlight at p = 0.35–0.89 (Ne I has no photospheric absorption).
PRIOR_DATA_P: float = 0.05


#: Group keys of the absorption blend terms (workbench.matching.absorption).
_BLEND_KEYS = ("blend_u", "blend_ref_u", "blend_unit", "blend_rho_tol")


def absorption_prior_test(g: dict[str, Any], nset: np.ndarray, found: np.ndarray) -> float:
    """The data's own chance probability of an absorber named in advance (by a prior).

    The binomial tail of the module docstring with the chance density of the
    dips that can be matched (``p_line_usable``), combined (Fisher) with the
    closeness of the found dips to each unresolved blend's forward-modelled
    dip (:mod:`workbench.matching.absorption`), measured from the spectrum's
    common offset when it is known and from zero otherwise, and made exact
    for the nearest of a Poisson number of chance dips
    (:func:`closeness_probability`). Used only where a positive abundance
    prior names the species in advance (:func:`prior_capped`); the net
    evidence and every call without a prior are unchanged.

    Parameters
    ----------
    g : dict
        The species' groups (with the absorption keys).
    nset, found : numpy.ndarray of bool
        Groups counted in the chance test, and those with a peak.

    Returns
    -------
    float
        The probability in (0, 1].
    """
    centre = g.get("offset_centre")
    centre_u = float(centre) if centre is not None else 0.0
    k = int(np.sum(nset & found))
    n = int(np.sum(nset))
    if k == 0:
        return 1.0
    p = float(special.betainc(k, n - k + 1, float(np.mean(g["p_line_usable"][nset]))))
    hit = nset & found

    def closeness(m: np.ndarray) -> float:
        # Closeness of the groups ``m`` to their blends' forward-modelled dips.
        return closeness_probability(
            g["offset_u"][m],
            g["offset_window_u"][m],
            g["offset_lines"][m],
            centre_u=centre_u,
            blend=tuple(g[key][m] for key in _BLEND_KEYS),
        )

    features = g.get("features")
    if features is None:
        return fisher_combined([p, closeness(hit)])
    # A prior-named species (absorption.species_features): closeness to each
    # unresolved group's blend dip, and inside groups that chain beyond a
    # resolution element, to the features the instrument resolves there.
    one = hit & np.isfinite(g["blend_u"])
    c_groups = closeness(one)
    own = g["found"] & ~g["explained"]
    t = feature_test(
        features,
        centre_u,
        unique_dips=g["peak"][own & g["unique"]],
        explained_dips=np.setdiff1d(g["peak"][g["found"] & g["explained"]], g["peak"][own]),
    )
    g["feature_counts"] = (t["k"], t["unique"])
    g["feature_test"] = t
    parts = [p] + ([c_groups] if np.any(one) else []) + ([t["closeness"]] if t["k"] else [])
    return fisher_combined(parts)


def main_feature_counted(g: dict[str, Any], n_unique_peaks: int) -> bool:
    """Absorption: the species' strongest predicted group is found, unique and counted.

    Or, inside groups that chain beyond a resolution element, two resolved
    features are found at distinct dips, one of them unique.
    """
    if g.get("features") is not None:
        # Inside chains, the features the instrument resolves
        # (absorption.feature_test): two found at distinct dips, one unique.
        k_f, unique_f = g.get("feature_counts", (0, 0))
        if k_f >= 2 and unique_f >= 1:
            return True
    if not g.get("absorption") or n_unique_peaks < 1:
        return False
    known_pred = np.where(g["known"], g["predicted"], -np.inf)
    if known_pred.size == 0 or not np.isfinite(known_pred.max()):
        return False
    main = int(np.argmax(known_pred))
    crowded = g.get("crowded")
    return bool(
        g["found"][main]
        and g["unique"][main]
        and g["visible"][main]
        and not g["masked"][main]
        and not (crowded is not None and crowded[main])
        and not g["explained"][main]
    )


def prior_capped(level: int, prior: float, chance_probability: float) -> int:
    """Cap at "possible" a call that a positive prior made without the data (optical).

    Parameters
    ----------
    level : int
        The class from the net evidence (prior included).
    prior : float
        The abundance prior's term (decades).
    chance_probability : float
        The data's own chance probability, uncorrected (a prior makes the
        species a pre-specified hypothesis, so the single-test level applies).

    Returns
    -------
    int
        ``level``, or 1 when ``level`` ≥ 2 rests on a positive prior with
        p > :data:`PRIOR_DATA_P`.
    """
    if level >= 2 and prior > 0.0 and chance_probability > PRIOR_DATA_P:
        return 1
    return level
