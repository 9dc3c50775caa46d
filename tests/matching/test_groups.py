"""Resolvable groups (workbench.matching.groups); expectations derived by hand."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.matching.groups import resolvable_groups


@pytest.mark.parametrize(
    ("species", "position", "resolution", "expected"),
    [
        # Cu Kα2 8027.8 eV and Kα1 8047.8 eV (Elam; from memory) at a 150 eV
        # silicon-drift FWHM: one group; Kβ1 8905.3 eV: a second one.
        ([0, 0, 0], [8027.8, 8047.8, 8905.3], [150.0, 150.0, 150.0], [0, 0, 1]),
        # Na D2 588.995 / D1 589.592 nm (air; from memory): one group at λ/R with
        # R = 500 (1.18 nm), two at R = 5000 (0.118 nm).
        ([0, 0], [588.995, 589.592], [1.18, 1.18], [0, 0]),
        ([0, 0], [588.995, 589.592], [0.118, 0.118], [0, 1]),
        # Two species never share a group, however close.
        ([0, 1], [500.0, 500.0], [1.0, 1.0], [0, 1]),
        # A chain of close lines joins (each gap below the resolution).
        ([0, 0, 0, 0], [1.0, 1.8, 2.6, 5.0], [1.0, 1.0, 1.0, 1.0], [0, 0, 0, 1]),
    ],
)
def test_groups(species, position, resolution, expected):
    g = resolvable_groups(np.array(species), np.array(position), np.array(resolution))
    assert g.tolist() == expected


def test_empty():
    assert resolvable_groups(np.array([], int), np.array([]), np.array([])).size == 0


@pytest.mark.parametrize(
    ("position", "strength", "fwhm", "expected"),
    [
        # Ba L lines of the shipped xray set (Elam energies): Lβ1 4828.3,
        # Lβ4 4852.0, Lβ3 4926.0, Lβ6 4993.5, Lβ2 5154.4 eV, with the
        # strengths the engine's x-ray model predicted for them in the
        # gunshot-residue forward-model case (180 eV, seed 20261202; Elam
        # shares × xraylib yields, rounded). Chained by the weak Lβ6 at a 175 eV FWHM,
        # but two maxima 1.9 FWHM apart with a dip to nearly nothing: split.
        (
            [4828.3, 4852.0, 4926.0, 4993.5, 5154.4],
            [0.514, 0.059, 0.092, 0.0099, 0.181],
            175.0,
            [0, 0, 0, 0, 1],
        ),
        # Zn Kα2 8614.1 / Kα1 8637.2 eV (Elam; strengths 0.51 : 1): one maximum.
        ([8614.1, 8637.2], [0.51, 1.0], 140.0, [0, 0]),
        # Two equal lines 0.95 FWHM apart: the summed Gaussians dip to about
        # 0.96 of the maxima (derivation), above Rayleigh's 0.81: one group.
        ([0.0, 0.95], [1.0, 1.0], 1.0, [0, 0]),
        # Unknown strengths (zeros) shape no profile: the chain stands.
        ([4828.3, 4993.5, 5154.4], [0.0, 0.0, 0.0], 175.0, [0, 0, 0]),
    ],
)
def test_chain_split_where_the_predicted_profile_is_resolved(position, strength, fwhm, expected):
    n = len(position)
    g = resolvable_groups(
        np.zeros(n, dtype=np.int64),
        np.array(position),
        np.full(n, fwhm),
        np.array(strength),
    )
    assert g.tolist() == expected
    # Without strengths the chaining rule alone decides (one group here).
    plain = resolvable_groups(np.zeros(n, dtype=np.int64), np.array(position), np.full(n, fwhm))
    assert plain.tolist() == [0] * n
