"""Lines of strength unknown from a source that lists only lines known to show.

``workbench.matching.reference.LISTED_SOURCES``: PypeIt's zinc-lamp list gives
Zn I 328.23, 330.26 and 334.50 nm with no intensity or transition probability
(its heights were measured on one spectrograph and are not kept). Such a
line's window is counted by the chance test, and its absence is not weighed
by the missing-line test (no prediction).

The peak lists are invented (a blue Hg-Cd-Zn arc as a spectrograph might
record it; heights invented, of the order such arcs show); wavelengths are
NIST ASD air values (from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching import MatchParameters
from workbench.matching.analyse import analyse_input
from workbench.matching.engine import build_index
from workbench.matching.reference import LISTED_SOURCES
from workbench.refdata import load_set

ZINC = {
    307.59: 40, 328.23: 500, 330.26: 1200, 334.50: 2200,
    468.01: 9000, 472.22: 15000, 481.05: 20000,
}  # fmt: skip
CADMIUM = {
    326.11: 3000, 340.37: 1500, 346.62: 2500, 361.05: 4000,
    467.82: 6000, 479.99: 9000, 508.58: 12000,
}  # fmt: skip
MERCURY = {
    302.15: 300, 312.57: 700, 313.16: 900, 334.15: 600,
    365.02: 8000, 404.66: 10000, 407.78: 800, 435.83: 25000,
}  # fmt: skip


def _run(lines: dict[float, float]):
    text = "wavelength_nm,intensity\n" + "\n".join(f"{k},{v}" for k, v in sorted(lines.items()))
    out = analyse_input(
        text.encode(), name="invented.csv", medium="air", kind="peak_list",
        params=MatchParameters(mode="emission"),
    )  # fmt: skip
    return {e["species"]: e for e in out.report["elements"]}


def test_the_index_marks_the_listed_lines():
    index = build_index([load_set("optical")], "wavelength", "air")
    assert index.listed is not None
    zn = np.array(index.species_names, dtype=object)[index.species] == "Zn I"
    at = zn & (np.abs(index.position - 330.258) < 0.001)
    assert at.sum() == 1 and index.listed[at].all()
    # a Gaia-ESO line (log gf known) is not a listed line
    at = zn & (np.abs(index.position - 481.053) < 0.001)
    assert at.sum() == 1 and not index.listed[at].any()
    assert set(LISTED_SOURCES) == {"nist_pypeit_lamps", "supplement"}


def test_zinc_lamp_lines_count_in_the_chance_test():
    ev = _run({**ZINC, **CADMIUM, **MERCURY})
    zn = ev["Zn I"]
    # Before the listed lines counted: "probable" (E 1.72, chance p 1.7e-4) on
    # its three Gaia-ESO lines (468.01, 472.22, 481.05 nm) alone.
    assert zn["verdict"] == "established"
    matched = {round(m["reference_nm"], 2) for m in zn["matched_lines"]}
    assert {328.23, 330.26, 334.5} <= matched
    assert ev["Cd I"]["verdict"] == "established"
    assert ev["Hg I"]["verdict"] == "established"


@pytest.mark.parametrize("dropped", [330.26, 334.50])
def test_a_missing_listed_line_is_not_weighed(dropped):
    full = _run({**ZINC, **CADMIUM, **MERCURY})["Zn I"]
    lines = {k: v for k, v in {**ZINC, **CADMIUM, **MERCURY}.items() if k != dropped}
    less = _run(lines)["Zn I"]
    # no prediction for it: the missing-line penalty does not change and the
    # line is not reported as missing ...
    assert less["missing_penalty_dex"] == pytest.approx(full["missing_penalty_dex"])
    assert all(abs(m["reference_nm"] - dropped) > 0.01 for m in less["missing_lines"])
    # ... but its window is still counted: one hit fewer is weaker evidence
    assert less["chance_probability"] > full["chance_probability"]
    assert less["n_groups_expected"] == full["n_groups_expected"]


def test_only_the_shipped_set_sources_are_listed():
    import polars as pl

    from workbench.matching.reference import _listed

    table = pl.DataFrame(
        {
            "_set_id": ["optical", "optical", "lab:brass", None],
            "source_id": ["supplement", "ges2022", "supplement", "nist_pypeit_lamps"],
        }
    )
    # a lab set may call its own source "supplement": not a listed line
    assert _listed(table, "wavelength").tolist() == [True, False, False, False]
    assert _listed(table, "energy") is None
    assert _listed(table.drop("source_id"), "wavelength") is None
