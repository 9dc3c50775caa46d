"""Element maps from spectrum cubes (scanning XRF, LIBS imaging) and batches on Dask.

Modules: ``detector`` (Gaussian response, instrument description), ``cube``
(HDF5 / NeXus / Zarr / .npy readers as Dask arrays), ``templates`` (family,
background templates), ``nnls`` (batched non-negative least squares), ``fit``
(per-chunk fit and ROI preview), ``cluster`` (Dask runner and progress),
``pipeline`` (identify, screen, map), ``store`` (HDF5 map store, PNG
previews, case-file registration), ``region`` (sum spectrum of a drawn
rectangle), ``batch`` (many single spectra), ``synth`` and ``demo``
(invented test and demo cubes).
"""

from __future__ import annotations

from workbench.maps.cluster import Runner, TextProgress
from workbench.maps.cube import Cube, cube_sha256, open_cube
from workbench.maps.detector import Instrument, fwhm_eV, load_instrument
from workbench.maps.nnls import nnls_batch
from workbench.maps.pipeline import MapParameters, MapResult, run_maps

__all__ = [
    "Cube",
    "Instrument",
    "MapParameters",
    "MapResult",
    "Runner",
    "TextProgress",
    "cube_sha256",
    "fwhm_eV",
    "load_instrument",
    "nnls_batch",
    "open_cube",
    "run_maps",
]
