"""Where an unresolved X-ray blend peaks (workbench.matching.xray_evidence.group_blend_maxima)."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching.xray_evidence import group_blend_maxima


def _grid_maximum(pos, weight, fwhm):
    """Maximum of the sum of Gaussians on a 0.01 eV grid (independent oracle)."""
    sg = fwhm / 2.3548
    x = np.arange(min(pos) - fwhm, max(pos) + fwhm, 0.01)
    y = sum(w * np.exp(-0.5 * ((x - p) / sg) ** 2) for p, w in zip(pos, weight, strict=True))
    return float(x[np.argmax(y)])


@pytest.mark.parametrize(
    ("pos", "weight", "fwhm"),
    [
        # Zn Kα1/Kα2 8638.9/8615.8 eV (xraylib 4.3), Kα2/Kα1 ≈ 0.51 (Elam),
        # detector FWHM 152 eV at 8.6 keV (the 130 eV test instrument).
        ([8638.9, 8615.8], [1.0, 0.51], 152.0),
        # Zr Kα1/Kα2 15775.3/15690.9 eV (xraylib 4.3), 199 eV FWHM.
        ([15775.3, 15690.9], [1.0, 0.52], 199.0),
    ],
)
def test_blend_maximum_is_where_the_summed_gaussians_peak(pos, weight, fwhm):
    pos_a, w_a = np.array(pos), np.array(weight)
    gid = np.zeros(2, dtype=np.int64)
    peak, sigma = group_blend_maxima(
        pos_a, w_a, gid, np.array([pos[0]]), np.array([fwhm]), np.array([0.2])
    )
    assert peak[0] == pytest.approx(_grid_maximum(pos, weight, fwhm), abs=0.05)
    # ±0.2 dex on the weaker line (the x-ray model's σ) moves the maximum by
    # half the difference of the two perturbed maxima (same oracle).
    up = _grid_maximum(pos, [weight[0], weight[1] * 10**0.2], fwhm)
    down = _grid_maximum(pos, [weight[0], weight[1] / 10**0.2], fwhm)
    assert sigma[0] == pytest.approx(0.5 * abs(up - down), abs=0.05)


def test_single_lines_and_unknown_strengths_stay_on_their_line():
    # Two groups: one line; two lines without known strengths (weights 0).
    pos = np.array([6403.8, 9000.0, 9050.0])
    gid = np.array([0, 1, 1])
    peak, sigma = group_blend_maxima(
        pos,
        np.array([1.0, 0.0, 0.0]),
        gid,
        np.array([6403.8, 9000.0]),
        np.array([140.0, 160.0]),
        np.array([0.2, 0.2]),
    )
    assert peak.tolist() == [6403.8, 9000.0] and sigma.tolist() == [0.0, 0.0]
