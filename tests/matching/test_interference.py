"""Classic interferences on the shipped reference sets produce named warnings."""

from __future__ import annotations

import re

import numpy as np
import polars as pl
import pytest

from workbench.datamodel import PeakList
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks
from workbench.refdata import load_set


def test_pb_l_alpha_and_as_k_alpha_warned():
    xray = load_set("xray")
    t = xray.table.filter(pl.col("element") == "Pb")
    # Pb L lines with their Elam relative intensities (xraydb via the shipped set):
    lines = t.filter(pl.col("siegbahn").is_in(["Lα1", "Lβ1", "Lγ1", "Lβ2", "Lα2"]))
    energies = lines["energy_eV"].to_numpy()
    inten = 1000.0 * lines["rel_intensity"].to_numpy()
    order = np.argsort(energies)
    peaks = PeakList(
        pl.DataFrame({"energy_eV": energies[order], "intensity": inten[order]}), "energy", None
    )
    params = MatchParameters(tolerance=ToleranceSpec("fixed", 40.0))
    rep = match_peaks(peaks, [xray], params).report()
    warn = [
        w
        for w in rep["warnings"]
        if w["kind"] == "unresolved_overlap" and set(w["elements"]) == {"As K", "Pb L"}
    ]
    assert warn, [w["message"] for w in rep["warnings"]]
    # Pb Lα1 and As Kα1 lie within ~10 eV (common practice, no source).
    assert warn[0]["separation"] < 10.0
    assert "As K" in warn[0]["settle"] and "Pb L" in warn[0]["settle"]
    levels = {el["species"]: el["verdict_level"] for el in rep["elements"]}
    # Pb L has its other lines found; As K lacks its Kβ: Pb L must rank above As K.
    assert levels["Pb L"] > levels.get("As K", 0)


def test_cd_and_as_near_228_8_nm_warned():
    optical = load_set("optical")
    # Cd I 228.802 nm and As I 228.812 nm (air; handbook values, from memory) are
    # 0.010 nm apart: at R = 5000 (window 0.046 nm) one peak cannot tell them apart.
    peaks = PeakList(
        pl.DataFrame({"wavelength_nm": [228.805], "intensity": [1000.0]}), "wavelength", "air"
    )
    params = MatchParameters(
        tolerance=ToleranceSpec("resolving_power", 5000.0),
        elements=("Cd", "As"),
        temperature_K=9000.0,
    )
    rep = match_peaks(peaks, [optical], params).report()
    species = {ln for ln in rep["lines"][0]["assigned_to"]} | {
        c["species"] for c in rep["lines"][0]["candidates"]
    }
    assert {"Cd I", "As I"} <= species
    sep = abs(228.802 - 228.812)
    assert sep * 5000 / 228.8 < 1  # unresolved at R = 5000 (derived)
    cand = {c["species"]: c["reference_nm"] for c in rep["lines"][0]["candidates"]}
    assert cand["Cd I"] == pytest.approx(228.802, abs=0.003)
    assert cand["As I"] == pytest.approx(228.812, abs=0.003)


@pytest.fixture(scope="module")
def xrf_demo_report():
    """The invented XRF demo (white ground, workbench.demo) matched with the defaults."""
    from workbench.demo import demo_file
    from workbench.matching import analyse_input

    return analyse_input(demo_file("white_pigment"), name="white_pigment.csv").report


def test_xray_overlaps_of_clearly_refuted_families_are_ruled_out_notes(xrf_demo_report):
    from workbench.matching.interference import REFUTED_DEX
    from workbench.matching.scoring import PROBABLE_DEX

    report = xrf_demo_report
    net = {e["species"]: e["net_evidence_dex"] for e in report["elements"]}
    level = {e["species"]: e["verdict_level"] for e in report["elements"]}
    ruled = [w for w in report["warnings"] if w["kind"] == "overlap_ruled_out"]
    # The threshold is the "probable" standard turned round (documented in interference.py).
    assert REFUTED_DEX == PROBABLE_DEX
    assert ruled
    for w in ruled:
        fam = w["ruled_out"]
        assert net[fam] <= -REFUTED_DEX and level[fam] == 0, w
        assert fam in w["elements"] and len(w["elements"]) == 2
        assert "ruled out on its own lines" in w["message"]
    # An X-ray overlap still warned as an interference is open: neither side refuted.
    for w in report["warnings"]:
        if w["kind"] == "unresolved_overlap":
            assert all(net[s] > -REFUTED_DEX for s in w["elements"]), w["message"]
    # Ruled-out overlaps keep the spectrum fit's decision; none turns into a bare
    # "overlap at this detector's resolution" warning naming a ruled-out family.
    gone = {w["ruled_out"] for w in ruled}
    for w in report["warnings"]:
        if w["kind"] == "xray_overlap":
            assert not gone & set(w["elements"]), w["message"]


def test_ba_l_under_ti_k_is_ruled_out_on_ba_lines_in_the_lead_white_demo(xrf_demo_report):
    # The invented ground holds Ti but no Ba (workbench.demo.SCENARIOS): Ba Lα1 (4466 eV)
    # falls under Ti Kα; Ba Lβ2 (5157 eV; Elam 5154, via xraydb in the shipped set) is the
    # line that settles it, and it is missing.
    report = xrf_demo_report
    (w,) = [
        w
        for w in report["warnings"]
        if w["kind"] == "overlap_ruled_out" and w["ruled_out"] == "Ba L"
    ]
    assert w["elements"] == ["Ba L", "Ti K"]
    assert any(abs(e - 5154.4) < 1.0 for e in w["settle"]["Ba L"]["missing"])
    # The peak is Ti Kα (Kα2 4505.8, Kα1 4512.2 eV in the shipped set, Elam; its
    # blend peaks near 4510 eV): the message names where it was measured.
    at = int(re.search(r"Ti K peak at (\d+) eV", w["message"]).group(1))
    assert 4503 <= at <= 4513, w["message"]
    assert w["decision"]["Ti K"]["needed"] and not w["decision"]["Ba L"]["needed"]


def test_xrf_text_report_lists_ruled_out_families_once_and_every_artefact(xrf_demo_report):
    from workbench.matching.textsummary import summary_text

    text = summary_text(xrf_demo_report)
    assert "[overlap_ruled_out]" not in text
    assert text.count("ruled out on their own lines (") == 1
    # Open interferences once per peak, not one long message per pair.
    assert "[unresolved_overlap]" not in text
    assert text.count("interferences, by peak") == 1
    assert "Pb L, with lines of As K (8 eV apart) in one peak at this detector" in text
    assert "Ba L: a line under the Ti K peak at" in text
    xray = xrf_demo_report["xray"]
    for a in xray["artefact_peaks"]:
        assert f"{int(a['observed_eV'] + 0.5)} eV" in text, a
    for a in xray["artefacts_without_peak"]:
        # A merged prediction is shown as its range (matching.xrf_view).
        lo, hi = (int(v + 0.5) for v in a["energy_range_eV"])
        shown = f"{lo}–{hi}" if a["energy_range_eV"][1] - a["energy_range_eV"][0] >= 1.0 else lo
        assert f"{shown} eV" in text, a
    # No plasma wording on an energy axis (issue 10).
    assert "temperature" not in text.lower() and "LTE" not in text


def _calcium_peaks_report():
    # Ca II K and H and Ca I 422.673 nm (air; NIST ASD positions, from memory) with
    # heights: many species have a line in the 422.67 nm window.
    peaks = PeakList(
        pl.DataFrame(
            {"wavelength_nm": [393.366, 396.847, 422.673], "intensity": [100.0, 80.0, 60.0]}
        ),
        "wavelength",
        "air",
    )
    return match_peaks(peaks, [load_set("optical")]).report()


def test_each_overlap_position_belongs_to_the_element_beside_it():
    # Elements are sorted; lines and positions were in the pair's own order, so
    # "Ar II, Ca II" could come with Ca II's position first (stop 32).
    rep = _calcium_peaks_report()
    overlaps = [
        w for w in rep["warnings"] if w["kind"] in ("unresolved_overlap", "reference_overlap")
    ]
    assert overlaps
    for w in overlaps:
        assert w["elements"] == sorted(w["elements"])
        for name, pos in zip(w["elements"], w["positions"], strict=True):
            assert f"{name} {pos:.4f}" in w["message"], (name, pos, w["message"])


def test_the_text_report_groups_overlaps_by_observed_line():
    # One line per observed line, the best-supported species first, instead of
    # one warning per pair (n(n-1)/2 pairs for n species in the window).
    from workbench.matching.textsummary import summary_text

    rep = _calcium_peaks_report()
    pairs = [w for w in rep["warnings"] if w["kind"] == "unresolved_overlap"]
    text = summary_text(rep)
    assert "[unresolved_overlap]" not in text
    grouped = [ln for ln in text.splitlines() if ln.startswith("  422.6730 nm: ")]
    assert len(grouped) == 1
    assert grouped[0].startswith("  422.6730 nm: Ca I 422.6728 (")
    at_422 = {s for w in pairs if abs(w["observed"] - 422.673) < 1e-6 for s in w["elements"]}
    # Nine species have a line in its window (measured here, data 2026.12.7).
    assert len(at_422) >= 3 and all(s in grouped[0] for s in at_422)
    assert re.search(r"R ≥ [\d,]+", grouped[0])
