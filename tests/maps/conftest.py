"""Small synthetic cubes shared by the map tests (planted, seeded, seconds to fit)."""

from __future__ import annotations

import h5py
import numpy as np
import pytest

from workbench.maps.detector import Instrument
from workbench.maps.synth import synthesise_cube

#: Test instrument: 512 channels of 40 eV from 500 eV (invented).
INSTRUMENT = Instrument(offset_eV=500.0, gain_eV_per_channel=40.0, pixel_size_um=250.0)
NY, NX, NCH = 20, 24, 512


def planted_truth() -> dict[str, np.ndarray]:
    """Counts per pixel of three present families, each with its own pattern (invented)."""
    yy, xx = np.mgrid[0:NY, 0:NX].astype(float)
    blob = np.exp(-(((yy - 6) / 4) ** 2 + ((xx - 16) / 5) ** 2))
    return {
        "Pb L": 200.0 + 1500.0 * (xx / (NX - 1)),  # left-to-right gradient
        "Fe K": 100.0 + 1200.0 * blob,  # a blob upper right
        "Cu K": 50.0 + 900.0 * ((yy > 12) & (xx < 10)),  # a block lower left
    }


@pytest.fixture(scope="session")
def energy_eV() -> np.ndarray:
    return INSTRUMENT.energy_axis_eV(NCH)


@pytest.fixture(scope="session")
def truth() -> dict[str, np.ndarray]:
    return planted_truth()


@pytest.fixture(scope="session")
def counts(energy_eV, truth) -> np.ndarray:
    return synthesise_cube(energy_eV, truth, INSTRUMENT, background_counts=400.0, seed=20261202)


@pytest.fixture(scope="session")
def h5_cube(tmp_path_factory, counts, energy_eV):
    path = tmp_path_factory.mktemp("cube") / "planted.h5"
    with h5py.File(path, "w") as f:
        d = f.create_dataset("scan/counts", data=counts, chunks=(4, NX, NCH), compression="gzip")
        d.attrs["pixel_size_um"] = 250.0
        f.create_dataset("scan/energy_eV", data=energy_eV).attrs["units"] = "eV"
    return path
