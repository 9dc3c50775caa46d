"""Spectrum cubes (scanning XRF, LIBS imaging) read lazily as Dask arrays.

Formats
-------
HDF5 (``.h5``, ``.hdf5``)
    One 3-D numeric dataset (or the one named by ``dataset``). The energy axis
    is a 1-D dataset beside it named ``energy_eV``, ``energy_keV`` or
    ``energy`` (unit from its ``units`` attribute), or the attributes
    ``offset_eV`` and ``gain_eV_per_channel`` on the cube.
NeXus (``.nxs``)
    An ``NXentry`` holding an ``NXdata`` group whose ``@signal`` is 3-D and
    whose ``@axes`` names an energy axis (NXfluo style); ``x``/``y`` axes
    with units give the pixel size.
Zarr (a directory or ``.zarr``)
    A 3-D array, or a group laid out as for HDF5.
NumPy (``.npy``)
    A 3-D array (memory-mapped); the calibration comes from the instrument.

The spectral axis is the one whose length equals the energy axis (the last
if several do); the cube is presented as ``(y, x, channel)`` and chunked over
pixels only, each chunk at most ``chunk_mb`` megabytes, so memory follows the
chunk size, never the cube size. Reading is by path inside each task (HDF5
handles cannot travel to other processes), so the same graph runs on a local
or a remote cluster that sees the same path.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from workbench.errors import FileFormatError, InputError, ValueRangeError
from workbench.maps.detector import Instrument

__all__ = ["DEFAULT_IN_MEMORY_LIMIT_BYTES", "Cube", "cube_sha256", "open_cube"]

#: Largest cube read wholly into memory in ``mode="in_memory"`` (common practice, no source).
DEFAULT_IN_MEMORY_LIMIT_BYTES = 1 << 30

_ENERGY_NAMES = ("energy_eV", "energy_keV", "energy")
_UNIT_TO_EV = {"ev": 1.0, "kev": 1000.0}
_LENGTH_TO_UM = {"m": 1e6, "mm": 1e3, "um": 1.0, "µm": 1.0, "micron": 1.0, "nm": 1e-3}


@dataclass
class Cube:
    """A spectrum cube ready for mapping.

    Attributes
    ----------
    data : dask.array.Array
        Counts, shape ``(ny, nx, n_channels)``, chunked over pixels only.
    energy_eV : numpy.ndarray
        Channel centres in eV, increasing.
    path : pathlib.Path or None
        The file or directory read (None for an in-memory array).
    format : str
        ``"hdf5"``, ``"nexus"``, ``"zarr"``, ``"npy"`` or ``"memory"``.
    dataset : str or None
        Dataset path inside the file.
    calibration_source : str
        ``"file"`` or ``"instrument"``.
    pixel_size_um : float or None
        Pixel step for the scale bar.
    notes : list of str
        What the reader decided.
    """

    data: Any
    energy_eV: np.ndarray
    path: Path | None
    format: str
    dataset: str | None
    calibration_source: str
    pixel_size_um: float | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def shape(self) -> tuple[int, int, int]:
        """``(ny, nx, n_channels)``."""
        return tuple(int(s) for s in self.data.shape)  # type: ignore[return-value]

    @property
    def nbytes(self) -> int:
        """Size of the counts in their stored type."""
        return int(self.data.nbytes)

    @classmethod
    def from_array(
        cls,
        counts: np.ndarray,
        energy_eV: np.ndarray,
        *,
        pixel_size_um: float | None = None,
        chunk_mb: float = 32.0,
    ) -> Cube:
        """Wrap an in-memory ``(ny, nx, n_channels)`` array."""
        import dask.array as da

        arr = np.asarray(counts)
        e = _check_energy(np.asarray(energy_eV, dtype=float), "the array")
        _check_shape(arr.shape, "the array")
        if arr.shape[2] != e.size:
            raise ValueRangeError(
                f"the array has {arr.shape[2]} channels but the energy axis {e.size} values",
                "give one energy per channel",
            )
        chunks = _pixel_chunks(arr.shape, arr.dtype.itemsize, chunk_mb)
        return cls(
            da.from_array(arr, chunks=chunks), e, None, "memory", None, "file", pixel_size_um
        )


def _check_shape(shape: tuple[int, ...], what: str) -> None:
    if len(shape) != 3:
        raise ValueRangeError(
            f"{what} has {len(shape)} dimension(s) {tuple(shape)}; a cube needs 3 (y, x, channel)",
            "give a 3-D dataset (or name it with --dataset)",
        )
    if min(shape) < 1:
        raise ValueRangeError(f"{what} is empty (shape {tuple(shape)})", "give a non-empty cube")


def _check_energy(e: np.ndarray, what: str) -> np.ndarray:
    if e.ndim != 1 or e.size < 8:
        raise ValueRangeError(
            f"the energy axis of {what} has shape {e.shape}",
            "give a 1-D energy axis with one value per channel",
        )
    if not np.all(np.isfinite(e)) or not np.all(np.diff(e) > 0):
        raise ValueRangeError(
            f"the energy axis of {what} is not finite and increasing",
            "check the calibration (offset and gain in eV)",
        )
    return e


def _pixel_chunks(shape: tuple[int, ...], itemsize: int, chunk_mb: float) -> tuple[int, int, int]:
    ny, nx, nch = shape
    budget = max(int(chunk_mb * 1e6 / (itemsize * nch)), 1)  # pixels per chunk
    if budget >= nx:
        return (max(min(budget // nx, ny), 1), nx, nch)
    return (1, budget, nch)


def cube_sha256(path: str | Path) -> str:
    """SHA-256 of a cube file, or of a directory store (sorted relative paths and contents)."""
    p = Path(path)
    h = hashlib.sha256()
    files = sorted(q for q in p.rglob("*") if q.is_file()) if p.is_dir() else [p]
    for q in files:
        if p.is_dir():
            rel = q.relative_to(p).as_posix().encode("utf-8")
            h.update(len(rel).to_bytes(8, "big") + rel)
        with open(q, "rb") as fh:
            while chunk := fh.read(1 << 22):
                h.update(chunk)
    return h.hexdigest()


# --- reading a region by path (runs inside Dask tasks) -------------------------


def _read_region(
    fmt: str,
    path: str,
    dataset: str | None,
    order: tuple[int, int, int],
    region: tuple[slice, slice, slice],
) -> np.ndarray:
    native = [slice(None)] * 3
    for out_axis, nat_axis in enumerate(order):
        native[nat_axis] = region[out_axis]
    if fmt in ("hdf5", "nexus"):
        import h5py

        with h5py.File(path, "r") as f:
            block = f[dataset][tuple(native)]  # type: ignore[index]
    elif fmt == "zarr":
        import zarr

        node = zarr.open(path, mode="r")
        arr = node[dataset] if dataset else node
        block = arr[tuple(native)]
    else:
        block = np.load(path, mmap_mode="r")[tuple(native)]
    return np.ascontiguousarray(np.transpose(np.asarray(block), order))


def _load_block(
    fmt: str,
    path: str,
    dataset: str | None,
    order: tuple[int, int, int],
    dtype: np.dtype,
    block_info: dict | None = None,
) -> np.ndarray:
    loc = block_info[None]["array-location"]  # type: ignore[index]
    region = tuple(slice(a, b) for a, b in loc)
    return _read_region(fmt, path, dataset, order, region).astype(dtype, copy=False)  # type: ignore[arg-type]


# --- finding the cube and its calibration --------------------------------------


def _units_factor(attrs: Any, name: str, default: float) -> float:
    unit = attrs.get("units", attrs.get("unit"))
    if isinstance(unit, bytes):
        unit = unit.decode()
    if unit is None:
        return 1000.0 if name.endswith("keV") else default
    f = _UNIT_TO_EV.get(str(unit).strip().lower())
    if f is None:
        raise FileFormatError(
            f"energy axis {name!r} has unit {unit!r}", "store the energy axis in eV or keV"
        )
    return f


def _h5_candidates(f: Any) -> list[str]:
    import h5py

    found: list[str] = []

    def visit(name: str, obj: Any) -> None:
        if isinstance(obj, h5py.Dataset) and obj.ndim == 3 and obj.dtype.kind in "uif":
            found.append(name)

    f.visititems(visit)
    return found


def _attr_calibration(attrs: Any, n: int) -> np.ndarray | None:
    if "offset_eV" in attrs and "gain_eV_per_channel" in attrs:
        return float(attrs["offset_eV"]) + float(attrs["gain_eV_per_channel"]) * np.arange(n)
    return None


def _nexus_signal(f: Any) -> tuple[str, list[str], str] | None:
    """(signal path, axis names, group path) of the first 3-D NXdata in an NXentry."""
    import h5py

    def cls(obj: Any) -> str:
        v = obj.attrs.get("NX_class", b"")
        return v.decode() if isinstance(v, bytes) else str(v)

    for ename, entry in f.items():
        if not isinstance(entry, h5py.Group) or cls(entry) != "NXentry":
            continue
        groups: list[tuple[str, Any]] = [("", entry)]

        def collect(n: str, o: Any, found: list[tuple[str, Any]] = groups) -> None:
            if isinstance(o, h5py.Group):
                found.append((n, o))

        entry.visititems(collect)
        for gname, g in groups:
            if cls(g) != "NXdata" or "signal" not in g.attrs:
                continue
            sig = g.attrs["signal"]
            sig = sig.decode() if isinstance(sig, bytes) else str(sig)
            if sig in g and g[sig].ndim == 3:
                axes = g.attrs.get("axes", [])
                axes = [a.decode() if isinstance(a, bytes) else str(a) for a in np.atleast_1d(axes)]
                base = f"{ename}/{gname}".rstrip("/")
                return f"{base}/{sig}", axes, base
    return None


def _spectral_axis(shape: tuple[int, ...], n_energy: int | None, what: str) -> int:
    if n_energy is None:
        return 2
    hits = [i for i, s in enumerate(shape) if s == n_energy]
    if not hits:
        raise ValueRangeError(
            f"{what}: no axis of the cube {tuple(shape)} has the energy axis's length {n_energy}",
            "check that the energy axis belongs to this cube (one energy per channel)",
        )
    return hits[-1]


def _inspect(path: Path, fmt: str, dataset: str | None) -> dict[str, Any]:
    """Find the cube, its shape, dtype, energy axis (or None) and pixel size."""
    info: dict[str, Any] = {"dataset": dataset, "energy": None, "pixel_um": None, "notes": []}
    if fmt in ("hdf5", "nexus"):
        import h5py

        try:
            f = h5py.File(path, "r")
        except OSError as exc:
            raise FileFormatError(
                f"{path.name} is not a readable HDF5 file ({exc})",
                "give an HDF5, NeXus, Zarr or .npy cube",
            ) from exc
        with f:
            axes_names: list[str] = []
            group = None
            if dataset is None and fmt == "nexus":
                nx = _nexus_signal(f)
                if nx is None:
                    raise FileFormatError(
                        f"{path.name}: no NXentry with a 3-D NXdata signal",
                        "write the cube as the @signal of an NXdata group (NXfluo style)",
                    )
                dataset, axes_names, group = nx
                info["notes"].append(f"NeXus signal {dataset} (axes {axes_names})")
            if dataset is None:
                cands = _h5_candidates(f)
                if not cands:
                    raise FileFormatError(
                        f"{path.name} holds no 3-D numeric dataset",
                        "give a file with the cube as a 3-D dataset",
                    )
                if len(cands) > 1:
                    raise InputError(
                        f"{path.name} holds several 3-D datasets: {cands}",
                        "name the cube with --dataset PATH",
                    )
                dataset = cands[0]
            if dataset not in f:
                raise InputError(
                    f"{path.name} has no dataset {dataset!r}",
                    "check the dataset path (h5ls lists them)",
                )
            d = f[dataset]
            if not hasattr(d, "shape") or d.dtype.kind not in "uif":
                raise FileFormatError(
                    f"{path.name}:{dataset} is not a numeric dataset", "name a numeric 3-D dataset"
                )
            info["shape"], info["dtype"] = tuple(d.shape), d.dtype
            _check_shape(info["shape"], f"{path.name}:{dataset}")
            parent = d.parent
            e = None
            if group is not None:
                g = f[group]
                for a in axes_names:
                    if "energy" in a.lower() and a in g:
                        e = g[a][()] * _units_factor(g[a].attrs, a, 1000.0)
                for a in axes_names:
                    if a.lower() in ("x", "y") and a in g and g[a].size > 1:
                        unit = g[a].attrs.get("units", "mm")
                        unit = unit.decode() if isinstance(unit, bytes) else str(unit)
                        step = float(np.median(np.abs(np.diff(g[a][()]))))
                        info["pixel_um"] = step * _LENGTH_TO_UM.get(unit.strip().lower(), 1e3)
            if e is None:
                for name in _ENERGY_NAMES:
                    if name in parent and parent[name].ndim == 1:
                        e = parent[name][()] * _units_factor(parent[name].attrs, name, 1.0)
                        break
            n_spec = None if e is None else np.asarray(e).size
            ax = _spectral_axis(info["shape"], n_spec, f"{path.name}:{dataset}")
            if e is None:
                e = _attr_calibration(d.attrs, info["shape"][ax])
            if info["pixel_um"] is None and "pixel_size_um" in d.attrs:
                info["pixel_um"] = float(d.attrs["pixel_size_um"])
            info["energy"], info["spectral_axis"] = e, ax
    elif fmt == "zarr":
        import zarr

        try:
            node = zarr.open(str(path), mode="r")
        except Exception as exc:  # zarr raises several kinds for a non-store
            raise FileFormatError(
                f"{path.name} is not a readable Zarr store ({exc})",
                "give an HDF5, NeXus, Zarr or .npy cube",
            ) from exc
        if isinstance(node, zarr.Array):
            arr, group = node, None
        else:
            group = node
            if dataset is None:
                cands = [k for k, a in node.arrays() if a.ndim == 3]
                if len(cands) != 1:
                    raise InputError(
                        f"{path.name} holds {len(cands)} 3-D arrays {cands}",
                        "name the cube with --dataset NAME",
                    )
                dataset = cands[0]
            arr = node[dataset]
        info["shape"], info["dtype"] = tuple(arr.shape), np.dtype(arr.dtype)
        _check_shape(info["shape"], path.name)
        e = None
        if group is not None:
            for name in _ENERGY_NAMES:
                if name in group:
                    e = group[name][:] * _units_factor(dict(group[name].attrs), name, 1.0)
                    break
        n_spec = None if e is None else np.asarray(e).size
        ax = _spectral_axis(info["shape"], n_spec, path.name)
        if e is None:
            e = _attr_calibration(dict(arr.attrs), info["shape"][ax])
        if "pixel_size_um" in arr.attrs:
            info["pixel_um"] = float(arr.attrs["pixel_size_um"])
        info["energy"], info["spectral_axis"] = e, ax
    else:
        try:
            arr = np.load(path, mmap_mode="r")
        except (OSError, ValueError) as exc:
            raise FileFormatError(
                f"{path.name} is not a readable .npy file ({exc})", "save the cube with numpy.save"
            ) from exc
        info["shape"], info["dtype"] = tuple(arr.shape), arr.dtype
        _check_shape(info["shape"], path.name)
        if arr.dtype.kind not in "uif":
            raise FileFormatError(
                f"{path.name} holds {arr.dtype}, not numbers", "save counts as integers or floats"
            )
        info["spectral_axis"] = 2
    info["dataset"] = dataset
    return info


def _format_of(path: Path) -> str:
    suffix = path.suffix.lower()
    if path.is_dir() or suffix == ".zarr":
        return "zarr"
    if suffix == ".npy":
        return "npy"
    if suffix in (".nxs", ".nx5", ".nexus"):
        return "nexus"
    if suffix in (".h5", ".hdf5", ".hdf", ".he5"):
        return "hdf5"
    raise FileFormatError(
        f"{path.name}: unknown cube format {suffix or '(no suffix)'!r}",
        "give .h5/.hdf5, .nxs (NeXus), .zarr or .npy",
    )


def open_cube(
    path: str | Path,
    *,
    instrument: Instrument | None = None,
    dataset: str | None = None,
    chunk_mb: float = 32.0,
    mode: str = "out_of_core",
    in_memory_limit_bytes: int = DEFAULT_IN_MEMORY_LIMIT_BYTES,
) -> Cube:
    """Open a cube lazily, with its energy axis in eV.

    Parameters
    ----------
    path : str or pathlib.Path
        HDF5, NeXus, Zarr or ``.npy`` cube (see the module docstring).
    instrument : Instrument, optional
        Gives the calibration when the file has none, and the pixel size.
        A calibration in the file wins (and the choice is noted).
    dataset : str, optional
        Dataset / array path inside the file.
    chunk_mb : float
        Largest chunk (in the stored type) read by one task.
    mode : {"out_of_core", "in_memory"}
        ``"in_memory"`` loads the counts now (for interactive use) and
        refuses cubes above ``in_memory_limit_bytes``.
    in_memory_limit_bytes : int
        Limit for ``mode="in_memory"``.

    Returns
    -------
    Cube
    """
    import dask.array as da

    p = Path(path)
    if not p.exists():
        raise InputError(f"cube {str(p)!r} does not exist", "check the path")
    if mode not in ("out_of_core", "in_memory"):
        raise InputError(f"unknown mode {mode!r}", "use 'out_of_core' or 'in_memory'")
    fmt = _format_of(p)
    info = _inspect(p, fmt, dataset)
    instrument = instrument or Instrument()
    shape, ax = info["shape"], info["spectral_axis"]
    order = tuple([i for i in range(3) if i != ax] + [ax])
    out_shape = tuple(shape[i] for i in order)
    notes = list(info["notes"])
    if info["energy"] is not None:
        energy = np.asarray(info["energy"], dtype=float)
        source = "file"
        if instrument.offset_eV is not None:
            notes.append("energy calibration taken from the file (the instrument's was not used)")
    else:
        energy = instrument.energy_axis_eV(out_shape[2])
        source = "instrument"
    energy = _check_energy(energy, p.name)
    if energy.size != out_shape[2]:
        raise ValueRangeError(
            f"{p.name}: {out_shape[2]} channels but {energy.size} energies",
            "give one energy per channel",
        )
    if ax != 2:
        notes.append(f"spectral axis is axis {ax} of {tuple(shape)}; presented as (y, x, channel)")
    nbytes = math.prod(shape) * info["dtype"].itemsize
    if mode == "in_memory" and nbytes > in_memory_limit_bytes:
        raise InputError(
            f"{p.name} holds {nbytes / 1e9:.2f} GB of counts, more than the in-memory limit "
            f"{in_memory_limit_bytes / 1e9:.2f} GB",
            "map it out of core (the CLI default: workbench map CUBE), or crop the cube",
        )
    chunks = _pixel_chunks(out_shape, info["dtype"].itemsize, chunk_mb)
    data = da.map_blocks(
        _load_block,
        fmt,
        str(p.resolve()),
        info["dataset"],
        order,
        info["dtype"],
        chunks=da.core.normalize_chunks(chunks, out_shape),
        dtype=info["dtype"],
        meta=np.empty((0, 0, 0), dtype=info["dtype"]),
    )
    if mode == "in_memory":
        data = da.from_array(data.compute(scheduler="threads"), chunks=chunks)
    pixel = info["pixel_um"] if info["pixel_um"] is not None else instrument.pixel_size_um
    return Cube(data, energy, p, fmt, info["dataset"], source, pixel, notes)
