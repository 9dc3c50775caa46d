"""Synthetic peak lists for the comparison tests (invented data, fixed seeds)."""

from __future__ import annotations

import numpy as np

# Strong LIBS lines of glass elements, air wavelengths in nm (NIST ASD; from memory).
GLASS_LINES = {
    "Fe": 259.940,
    "Mg": 279.553,
    "Si": 288.158,
    "Ca": 393.366,
    "Al": 396.152,
    "Sr": 407.771,
    "Ba": 455.403,
    "Na": 588.995,
    "K": 766.491,
}


def peak_csv(positions_nm, intensities) -> bytes:
    """A two-column peak-list CSV as bytes."""
    rows = ["wavelength_nm,intensity"]
    rows += [f"{p:.5f},{i:.6g}" for p, i in zip(positions_nm, intensities, strict=True)]
    return ("\n".join(rows) + "\n").encode()


def glass_replicate(
    rng: np.random.Generator, ratio_sr_ca: float, ratio_fe_ca: float = 0.05
) -> bytes:
    """One invented replicate whose Sr/Ca and Fe/Ca intensity ratios are given exactly."""
    ca = 20000.0 * rng.normal(1.0, 0.05)
    inten = {el: 3000.0 * rng.normal(1.0, 0.03) for el in GLASS_LINES}
    inten["Ca"] = ca
    inten["Sr"] = ratio_sr_ca * ca
    inten["Fe"] = ratio_fe_ca * ca
    names = sorted(GLASS_LINES, key=GLASS_LINES.get)
    pos = [GLASS_LINES[n] + rng.normal(0.0, 0.003) for n in names]
    return peak_csv(pos, [inten[n] for n in names])
