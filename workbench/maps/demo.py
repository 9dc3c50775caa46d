"""INVENTED demo: "Portrait of a Lady in Grey", scanned by XRF.

Everything here is invented for demonstration: the painting, its painter
and its history do not exist, and the cube is synthesised
(:mod:`workbench.maps.synth`), not measured. The visible portrait — a face
and collar in lead white (Pb), lips and cheeks in vermilion (Hg), hair and
background in earth pigments (Fe), a green dress in a copper pigment (Cu),
over a chalk ground (Ca) — covers an earlier composition that only the lead
and mercury maps show: a kneeling figure in a vermilion cloak at the right
and a lead-white crescent moon at the upper left.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from workbench.maps.detector import Instrument
from workbench.maps.synth import synthesise_cube

__all__ = ["DEMO_INSTRUMENT", "DEMO_TITLE", "painting_truth", "write_demo_cube"]

DEMO_TITLE = "Portrait of a Lady in Grey (INVENTED painting, synthetic XRF scan)"

#: The invented scanner: 1,024 channels of 20 eV, 80 eV noise, 1 mm steps.
DEMO_INSTRUMENT = Instrument(
    offset_eV=0.0,
    gain_eV_per_channel=20.0,
    noise_fwhm_eV=80.0,
    pixel_size_um=1000.0,
    name="demo scanning XRF, Rh tube 50 kV (invented)",
)


def _ellipse(yy: np.ndarray, xx: np.ndarray, cy: float, cx: float, ry: float, rx: float):
    return ((yy - cy) / ry) ** 2 + ((xx - cx) / rx) ** 2 <= 1.0


def painting_truth(ny: int = 48, nx: int = 64) -> dict[str, np.ndarray]:
    """Planted counts per pixel for each family (invented composition)."""
    yy, xx = np.mgrid[0:ny, 0:nx].astype(float)
    sy, sx = ny / 48.0, nx / 64.0
    face = _ellipse(yy, xx, 18 * sy, 30 * sx, 10 * sy, 7.5 * sx)
    hair = _ellipse(yy, xx, 13 * sy, 30 * sx, 10 * sy, 10 * sx) & ~face
    dress = (yy > 31 * sy) & (np.abs(xx - 30 * sx) < (8 + (yy / sy - 31) * 1.2) * sx)
    collar = (np.abs(yy - 30 * sy) < 1.5 * sy) & (np.abs(xx - 30 * sx) < 6 * sx)
    lips = _ellipse(yy, xx, 23.5 * sy, 30 * sx, 1.0 * sy, 2.5 * sx)
    cheeks = _ellipse(yy, xx, 20 * sy, 25.5 * sx, 1.5 * sy, 1.5 * sx) | _ellipse(
        yy, xx, 20 * sy, 34.5 * sx, 1.5 * sy, 1.5 * sx
    )
    # The earlier composition (hidden): a kneeling cloaked figure and a moon.
    cloak = _ellipse(yy, xx, 34 * sy, 53 * sx, 11 * sy, 6 * sx) | _ellipse(
        yy, xx, 21 * sy, 53 * sx, 3 * sy, 3 * sx
    )
    moon = _ellipse(yy, xx, 9 * sy, 10 * sx, 5 * sy, 5 * sx) & ~_ellipse(
        yy, xx, 8 * sy, 12.5 * sx, 4.5 * sy, 4.5 * sx
    )
    background = ~(face | hair | dress)
    pb = 150.0 + 1600.0 * face + 1200.0 * collar + 1400.0 * moon
    hg = 700.0 * lips + 400.0 * cheeks + 900.0 * cloak
    fe = 500.0 * hair + 250.0 * background
    cu = 900.0 * (dress & ~collar)
    ca = np.full((ny, nx), 400.0)
    return {"Pb L": pb, "Hg L": hg, "Fe K": fe, "Cu K": cu, "Ca K": ca}


def write_demo_cube(path: str | Path, ny: int = 48, nx: int = 64, seed: int = 1650) -> Path:
    """Write the invented painting's cube as HDF5 with its energy axis (eV).

    Parameters
    ----------
    path : str or pathlib.Path
        Target ``.h5`` file (written atomically).
    ny, nx : int
        Pixels (defaults give a cube that maps in seconds).
    seed : int
        Random seed of the Poisson noise.

    Returns
    -------
    pathlib.Path
    """
    import os

    import h5py

    inst = DEMO_INSTRUMENT
    energy = inst.energy_axis_eV(1024)
    truth = painting_truth(ny, nx)
    cube = synthesise_cube(energy, truth, inst, background_counts=600.0, seed=seed)
    target = Path(path)
    tmp = target.with_name(target.name + ".tmp")
    with h5py.File(tmp, "w") as f:
        f.attrs["title"] = DEMO_TITLE
        f.attrs["note"] = "INVENTED demonstration data, synthesised; not a measurement"
        g = f.create_group("scan")
        d = g.create_dataset("counts", data=cube, chunks=(8, nx, 1024), compression="gzip")
        d.attrs["pixel_size_um"] = inst.pixel_size_um
        ds = g.create_dataset("energy_eV", data=energy)
        ds.attrs["units"] = "eV"
    os.replace(tmp, target)
    return target
