"""X-ray line intensities within a family from the excitation physics (workbench.xray.lines)."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from workbench.refdata import load_set
from workbench.xray.forward import line_yields
from workbench.xray.instrument import DEFAULT_INSTRUMENT
from workbench.xray.lines import FALLBACK_LEVEL_WEIGHT, expand_levels, line_weights


def _family(label: str) -> dict[str, float]:
    """Transition → strength (strongest line 1) of one family in the engine's index."""
    from workbench.matching.engine import build_index

    idx = build_index([load_set("xray")], "energy", None)
    sp = np.asarray(idx.species_names, dtype=object)[idx.species]
    m = sp == label
    s = idx.rel_intensity[m] * idx.subshell_weight[m]
    return dict(zip(idx.transition[m].tolist(), (s / s.max()).tolist(), strict=True))


def test_expand_levels():
    assert expand_levels("M4,5") == ["M4", "M5"]
    assert expand_levels("N6,7") == ["N6", "N7"]
    assert expand_levels("K") == ["K"]
    assert expand_levels("L3") == ["L3"]


def test_pb_m_zeta_follows_the_sub_shell_populations():
    pb_m = _family("Pb M")
    # xraylib 4.3 radiative rates: M4-N2 0.118 and M5-N3 0.062 of their levels
    # against M5-N7 0.866: Mζ is several per cent of Mα. The Elam table's share
    # (0.0029 of the M4,5 emission) with fixed level weights made it 0.3 %.
    assert 0.03 <= pb_m["M4,5-N2,3"] / pb_m["M5-N6,7"] <= 0.3
    table = load_set("xray").table.filter(pl.col("element") == "Pb")
    share = dict(zip(table["transition"].to_list(), table["rel_intensity"].to_list(), strict=True))
    assert share["M4,5-N2,3"] < 0.01  # the Elam share the weight corrects (Elam et al. 2002)


def test_one_initial_level_keeps_the_tabulated_pattern():
    # Within the K level only radiative rates matter: Fe Kβ1,3 / Kα1 from the
    # yields agrees with the Elam shares within 15 % (two compilations of the
    # same rates, Elam et al. 2002 and xraylib 4.3; detector efficiency is
    # flat between 6.4 and 7.1 keV for the default 450 µm silicon).
    fe_k = _family("Fe K")
    table = load_set("xray").table.filter(pl.col("element") == "Fe")
    share = dict(zip(table["transition"].to_list(), table["rel_intensity"].to_list(), strict=True))
    modelled = (fe_k["K-M2"] + fe_k["K-M3"]) / fe_k["K-L3"]
    tabulated = (share["K-M2"] + share["K-M3"]) / share["K-L3"]
    assert modelled == pytest.approx(tabulated, rel=0.15)


def test_l3_above_l1_for_lead_white():
    # Sub-shell populations under a Rh tube at 40 kV: L3 (Lα) emits far more
    # than L1 (Lβ3, L1-M3), ratio of their yields from xraylib 4.3 — the fixed
    # weights put L1 at 0.25 of L3; the physics must still keep L1 well below L3.
    pb_l = _family("Pb L")
    assert pb_l["L3-M5"] == 1.0
    assert pb_l["L1-M3"] < 0.25 * pb_l["L3-M5"]


def test_line_unknown_to_xraylib_takes_its_level_total():
    yields = line_yields("Pb", DEFAULT_INSTRUMENT)
    top = max(yields.values())
    l3_total = sum(v for k, v in yields.items() if k.startswith("L3"))
    w = line_weights(
        np.array(["Pb", "Pb", "Xx"], dtype=object),
        np.array(["L3-X9", "L3-M5", "L3-M5"], dtype=object),
        np.array(["L3", "L3", "L3"], dtype=object),
        np.array([0.01, 0.8, 0.8]),
    )
    # Not listed by xraylib: the tabulated share of the L3 level's total yield.
    assert w[0] == pytest.approx(l3_total / top)
    # Listed: the line's own yield (L3-M5 is Pb's strongest line, so 1 / share).
    assert w[1] * 0.8 == pytest.approx(yields["L3M5"] / top)
    # An element xraylib does not know keeps the fixed fallback weight.
    assert w[2] == FALLBACK_LEVEL_WEIGHT["L3"]


def test_minor_lines_the_table_lacks_are_added_and_named():
    from workbench.matching.engine import build_index

    idx = build_index([load_set("xray")], "energy", None)
    ids = set(idx.line_id.tolist())
    # Pb M3-N1 (2173 eV) and M2-N4 (3119 eV) are real Pb M lines (xraylib 4.3
    # LineEnergy/RadRate; 1500 and 2600 counts in the lead-white forward
    # spectrum) that the Elam table does not list; without them their peaks
    # went to Nb L and Cd L.
    assert {"xraylib:Pb:M3-N1", "xraylib:Pb:M2-N4"} <= ids
    # Pb M5-O3 (2401 eV) is 1.4 % of Mα but lies within one FWHM of Mα and
    # Mβ: it makes no peak of its own and is left out.
    assert "xraylib:Pb:M5-O3" not in ids
    # A line the table has is never added twice (Pb M5-N6,7 covers M5N6, M5N7).
    assert "xraylib:Pb:M5-N7" not in ids and "xray:Pb:M5-N6,7" in ids
    prov = {p["id"]: p for p in idx.provenance}
    assert (
        prov["xraylib_minor_lines"]["version"] and len(prov["xraylib_minor_lines"]["sha256"]) == 64
    )


def test_unresolved_minor_lines_are_added_on_their_summed_yield():
    from workbench.xray.lines import SUPPLEMENT_MIN_FRACTION, _yields, supplement_lines

    table = load_set("xray").table
    extra, _prov = supplement_lines(table.filter(pl.col("element") == "Pb"))
    ids = set(extra["line_id"].to_list())
    # Pb L1-O3 (15778 eV) and L1-O2 (15756 eV), xraylib 4.3 LineEnergy: each
    # below the cut of Pb Lα alone, together above it, 22 eV apart (one peak
    # at a 200 eV detector).
    y = _yields("Pb")
    top = max(v for k, v in y.items() if k[0] == "L")
    assert y["L1O3"] < SUPPLEMENT_MIN_FRACTION * top and y["L1O2"] < SUPPLEMENT_MIN_FRACTION * top
    assert y["L1O3"] + y["L1O2"] >= SUPPLEMENT_MIN_FRACTION * top
    assert {"xraylib:Pb:L1-O3", "xraylib:Pb:L1-O2"} <= ids


def test_demo_xrf_ground_lists_nothing_outside_its_recipe():
    from workbench.demo import demo_file
    from workbench.matching.analyse import analyse_input

    rep = analyse_input(demo_file("white_pigment"), name="xrf.csv").report
    recipe = {"Pb", "Zn", "Ti", "Ca", "Fe", "O", "C", "H"}  # invented (workbench.demo)
    # Not even "possible": Zr K sat on the unlisted Pb Lγ4 (L1-O2,3) peak and
    # Cd L on Pb M1-N2 / M2-N4 before the lacking lines were summed.
    listed = {el["element"] for el in rep["elements"] if el["verdict_level"] >= 1}
    assert listed <= recipe, listed - recipe
