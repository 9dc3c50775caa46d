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
