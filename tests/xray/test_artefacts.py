"""Artefact prediction and labelling (xraylib 4.3 line energies, Reed–Ware escape)."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.xray.artefacts import label_peaks, predict_artefacts
from workbench.xray.instrument import Instrument


def _find(arts, kind, energy, tol=1.0):
    return [a for a in arts if a.kind == kind and abs(a.energy_eV - energy) <= tol]


def test_tube_scatter_and_argon_predicted():
    arts = predict_artefacts(np.array([6404.0]), np.array([1000.0]), Instrument())
    # Rh Kα1 20216 eV (xraylib 4.3); its Compton partner at 90° is
    # E/(1 + E/511 keV) = 19446 eV (Compton formula).
    assert _find(arts, "rayleigh", 20216.1)
    assert _find(arts, "compton", 20216.1 / (1 + 20216.1 / 510998.95), tol=1.0)
    assert _find(arts, "air", 2957.7)  # Ar Kα (Deslattes et al. 2003, from memory)


def test_escape_and_sum_of_strong_peaks():
    x = np.array([8047.8, 8638.9])  # Cu Kα1, Zn Kα1 (xraylib 4.3)
    inten = np.array([50000.0, 30000.0])
    arts = predict_artefacts(x, inten, Instrument(), channel_eV=10.0)
    esc = _find(arts, "escape", 8047.8 - 1740.0, tol=1.0)
    assert esc and 0 < esc[0].predicted_intensity < 0.01 * 50000
    # Cu + Zn sum at 16687 eV: the peak once taken for Nb Kα (issue 10).
    s = _find(arts, "sum", 8047.8 + 8638.9)
    assert s and s[0].parents == (0, 1)


@pytest.mark.parametrize(("height", "explained"), [(100.0, True), (10000.0, False)])
def test_peak_explained_unless_it_clearly_exceeds(height, explained):
    x = np.array([8047.8, 8047.8 - 1740.0])
    arts = predict_artefacts(x, np.array([50000.0, height]), Instrument())
    lab = label_peaks(x, np.array([50000.0, height]), np.array([10.0, 5.0]), arts)
    row = lab.filter(lab["peak"] == 1).to_dicts()[0]
    assert row["explained"] is explained
    assert "escape" in row["kinds"]
    if not explained:
        assert row["residual_intensity"] == pytest.approx(height - row["predicted_intensity"])
