"""The sum spectrum of a rectangle drawn on a map, ready for line matching."""

from __future__ import annotations

import numpy as np

from workbench.errors import ValueRangeError
from workbench.maps.cube import Cube
from workbench.maps.fit import measured_pixels
from workbench.maps.pipeline import spectrum_csv

__all__ = ["region_csv", "region_spectrum"]


def region_spectrum(cube: Cube, y0: int, y1: int, x0: int, x1: int) -> np.ndarray:
    """Channel-wise sum over pixels ``y0 ≤ y < y1``, ``x0 ≤ x < x1`` (only that region is read).

    Parameters
    ----------
    cube : Cube
        The cube.
    y0, y1, x0, x1 : int
        Half-open pixel bounds (clipped to the cube).

    Returns
    -------
    numpy.ndarray
        Counts per channel, summed over the region's measured pixels.
    """
    ny, nx, _ = cube.shape
    ya, yb = sorted((int(y0), int(y1)))
    xa, xb = sorted((int(x0), int(x1)))
    ya, yb, xa, xb = max(ya, 0), min(yb, ny), max(xa, 0), min(xb, nx)
    if yb <= ya or xb <= xa:
        raise ValueRangeError(
            f"the rectangle y {y0}–{y1}, x {x0}–{x1} holds no pixel",
            "draw a rectangle inside the map",
        )
    import dask
    import dask.array as da

    raw = cube.data[ya:yb, xa:xb, :]
    # Unmeasured pixels are left out by the sum spectrum's own rule
    # (measured_pixels, which skips integer cubes); the sum streams chunk by
    # chunk (no region held whole; chunks span every channel).
    ok = raw.map_blocks(
        lambda b: measured_pixels(b.reshape(-1, b.shape[-1])).reshape(b.shape[:-1]),
        drop_axis=2,
        dtype=bool,
    )
    part = da.where(ok[..., None], raw.astype(np.float64), 0.0).sum(axis=(0, 1))
    counts, n_ok = dask.compute(part, ok.sum(), scheduler="threads")
    if int(n_ok) == 0:
        raise ValueRangeError(
            f"no pixel of the rectangle y {y0}–{y1}, x {x0}–{x1} was measured (NaN or "
            "infinite counts)",
            "draw the rectangle over measured pixels",
        )
    return np.asarray(counts)


def region_csv(cube: Cube, y0: int, y1: int, x0: int, x1: int) -> tuple[str, bytes]:
    """(file name, CSV bytes) of a region's sum spectrum, as :func:`spectrum_csv` writes it."""
    counts = region_spectrum(cube, y0, y1, x0, x1)
    base = cube.path.stem if cube.path else "cube"
    name = f"{base}_y{y0}-{y1}_x{x0}-{x1}_sum.csv"
    title = f"sum spectrum of {base}, pixels y {y0}-{y1}, x {x0}-{x1} (half-open)"
    return name, spectrum_csv(cube.energy_eV, counts, title)
