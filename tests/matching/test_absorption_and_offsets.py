"""Real-data conditions on synthetic (invented) spectra: absorption dips, scale offsets."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching import MatchParameters, match_peaks
from workbench.matching.engine import build_index
from workbench.matching.expected import expected_strengths
from workbench.peaks import find_peaks
from workbench.physics.synth import absorption_spectrum, synthetic_spectrum
from workbench.refdata import load_set

RANGE = (380.0, 600.0)


@pytest.fixture(scope="module")
def optical():
    return load_set("optical")


def _lines(optical, recipe, T, mode):
    index = build_index([optical], "wavelength", "air")
    in_range = (index.position >= RANGE[0]) & (index.position <= RANGE[1])
    e = np.nan_to_num(expected_strengths(index, T, mode, in_range))
    names = np.array(index.species_names, dtype=object)[index.species]
    amp = e * np.array([recipe.get(n, 0.0) for n in names])
    keep = in_range & (amp >= 2e-3)
    return index.position[keep], amp[keep]


def test_absorption_spectrum_identifies_its_species(optical):
    # A solar-like invented absorption spectrum at 5800 K (weak-line limit).
    recipe = {"Fe I": 0.6, "Na I": 0.8, "Ca II": 0.9, "Mg I": 0.5}
    pos, depth = _lines(optical, recipe, 5800.0, "absorption")
    spec = absorption_spectrum(
        pos,
        np.clip(depth, 0, 0.95),
        x_range=RANGE,
        n_points=44_001,
        resolving_power=20_000,
        noise_sigma=0.002,
        seed=5,
    )
    peaks = find_peaks(spec, mode="absorption", min_snr=6.0)
    rep = match_peaks(
        peaks, [optical], MatchParameters(mode="absorption", temperature_K=5800.0)
    ).report()
    levels = {el["species"]: el["verdict_level"] for el in rep["elements"]}
    # By construction (the recipe above): the strongest absorbers are called.
    assert levels.get("Fe I", 0) >= 2
    assert levels.get("Na I", 0) >= 2
    put_in = {s.split()[0] for s in recipe}
    assert not [s for s, lv in levels.items() if lv == 3 and s.split()[0] not in put_in]


def test_pixel_offset_is_reported_and_corrected(optical):
    recipe = {"Fe I": 1.0, "Ti II": 1.0, "Ca II": 0.5}
    pos, amp = _lines(optical, recipe, 9000.0, "emission")
    R = 10_000.0
    shift_nm = 0.02  # ≈ 2 pixels of 0.01 nm: a typical uncorrected drift (invented)
    spec = synthetic_spectrum(
        pos + shift_nm,
        amp * pos / R * 1.0645,
        x_range=RANGE,
        n_points=22_001,
        resolving_power=R,
        noise_sigma=0.003,
        seed=9,
    )
    peaks = find_peaks(spec, min_snr=5.0)
    # With the correction turned off, the offset is measured and reported.
    params = MatchParameters(temperature_K=9000.0, apply_calibration=False)
    rep = match_peaks(peaks, [optical], params).report()
    # Within 0.4 pixel of the imposed shift (common practice, no source).
    assert rep["calibration"]["shift"] == pytest.approx(shift_nm, abs=0.004)
    assert any(w["kind"] == "scale_offset" for w in rep["warnings"])
    assert not rep["calibration"]["applied"]
    # By default a significant offset (2 pixels ≫ a quarter of the window) is applied.
    fixed = match_peaks(peaks, [optical], MatchParameters(temperature_K=9000.0)).report()
    assert fixed["calibration"]["applied"]
    lv = {el["species"]: el["verdict_level"] for el in fixed["elements"]}
    assert lv["Fe I"] == 3 and lv["Ti II"] == 3  # by construction (recipe above)
