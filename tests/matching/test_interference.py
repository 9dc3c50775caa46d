"""Classic interferences on the shipped reference sets produce named warnings."""

from __future__ import annotations

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
