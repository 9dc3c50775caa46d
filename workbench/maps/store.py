"""Map products: a chunked, compressed HDF5 store, PNG previews, a manifest, case-file records.

Layout of ``OUT/`` after :func:`write_products`::

    maps.h5             /maps/<family>, /sigma/<family>, /roi/<family> (counts,
                        float32, chunked, gzip), /chi2, /energy_eV,
                        /spectra/sum, /spectra/max; attributes: parameters,
                        instrument, cube (JSON)
    <Pb_L>.png …        one preview per family: colour scale and scale bar
    rgb.png             (when asked) three families as red, green, blue
    sum_match.json      the engine's record for the sum spectrum (schema 1)
    max_match.json      the same for the maximum-pixel spectrum
    manifest.json       every file's SHA-256, the parameters and data versions

:func:`register_products` files them in the case store as products of the
measurement: the original cube is kept byte-for-byte when it is at most
``copy_limit_bytes``, otherwise by its SHA-256 (a small reference record is
stored instead), and the choice is recorded in the measurement's settings.
"""

from __future__ import annotations

import io
import json
import os
import tempfile
from pathlib import Path
from typing import Any

import numpy as np

from workbench.errors import InputError
from workbench.maps.pipeline import MapResult

__all__ = [
    "DEFAULT_COPY_LIMIT_BYTES",
    "colourise",
    "preview_png",
    "register_products",
    "rgb_overlay",
    "write_products",
]

#: Largest cube copied into the case store (larger ones are kept by hash).
DEFAULT_COPY_LIMIT_BYTES = 256 * 1024 * 1024


def _lut() -> np.ndarray:
    import plotly.colors as pc

    stops = [pc.hex_to_rgb(c) for c in pc.sequential.Viridis]
    x = np.linspace(0, 1, len(stops))
    t = np.linspace(0, 1, 256)
    return np.stack([np.interp(t, x, [s[k] for s in stops]) for k in range(3)], 1).astype(np.uint8)


def _normalise(img: np.ndarray, vmin: float | None, vmax: float | None) -> np.ndarray:
    """Values scaled to 0–1 over the measured (finite) pixels; unmeasured ones 0."""
    a = np.asarray(img, dtype=float)
    finite = np.isfinite(a)
    v = a[finite] if finite.any() else np.zeros(1)
    lo = float(np.percentile(v, 1)) if vmin is None else vmin
    hi = float(np.percentile(v, 99.5)) if vmax is None else vmax
    with np.errstate(invalid="ignore"):
        out = np.clip((a - lo) / (hi - lo if hi > lo else 1.0), 0, 1)
    return np.where(finite, out, 0.0)


def colourise(img: np.ndarray, vmin: float | None = None, vmax: float | None = None) -> np.ndarray:
    """Map values to viridis RGB ``(ny, nx, 3)`` uint8 (1st–99.5th percentile by default).

    Unmeasured pixels (NaN, :func:`workbench.maps.fit.measured_pixels`) are white,
    a colour the viridis scale never takes.
    """
    rgb = _lut()[(_normalise(img, vmin, vmax) * 255).astype(np.uint8)]
    rgb[~np.isfinite(np.asarray(img, dtype=float))] = 255
    return rgb


def rgb_overlay(red: np.ndarray, green: np.ndarray, blue: np.ndarray) -> np.ndarray:
    """Three maps as the red, green and blue channels (each scaled on its own)."""
    return (np.stack([_normalise(c, None, None) for c in (red, green, blue)], -1) * 255).astype(
        np.uint8
    )


def _nice_length(target: float) -> float:
    exp = np.floor(np.log10(target))
    for m in (5, 2, 1):
        if m * 10**exp <= target:
            return float(m * 10**exp)
    return float(10**exp)


def preview_png(rgb: np.ndarray, pixel_size_um: float | None, title: str) -> bytes:
    """PNG of an RGB image, enlarged, with a title and (if the pixel size is known) a scale bar."""
    from PIL import Image, ImageDraw

    ny, nx, _ = rgb.shape
    scale = max(1, int(np.ceil(320 / max(ny, nx))))
    img = Image.fromarray(np.ascontiguousarray(rgb)).resize(
        (nx * scale, ny * scale), Image.Resampling.NEAREST
    )
    canvas = Image.new("RGB", (img.width, img.height + 34), "white")
    canvas.paste(img, (0, 0))
    draw = ImageDraw.Draw(canvas)
    draw.text((4, img.height + 2), title, fill="black")
    if pixel_size_um:
        length_um = _nice_length(nx * pixel_size_um / 4)
        bar = round(length_um / pixel_size_um * scale)
        y = img.height + 20
        draw.rectangle([4, y, 4 + bar, y + 4], fill="black")
        label = f"{length_um / 1000:g} mm" if length_um >= 1000 else f"{length_um:g} µm"
        draw.text((10 + bar, y - 5), label, fill="black")
    buf = io.BytesIO()
    canvas.save(buf, format="PNG", optimize=False)
    return buf.getvalue()


def _atomic_write(path: Path, data: bytes) -> None:
    from workbench.fileio import write_bytes_atomic

    write_bytes_atomic(path, data)


def _safe(species: str) -> str:
    return species.replace(" ", "_")


def _versions() -> dict[str, str]:
    import dask
    import h5py

    from workbench import __version__
    from workbench.refdata.manifest import data_version

    return {
        "workbench": __version__,
        "reference_data": data_version(),
        "dask": dask.__version__,
        "numpy": np.__version__,
        "h5py": h5py.__version__,
    }


def _write_h5(result: MapResult, path: Path) -> None:
    import h5py

    ny, nx = result.chi2.shape
    chunks = (min(ny, 256), min(nx, 256))
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".h5", dir=path.parent)
    os.close(fd)
    try:
        with h5py.File(tmp, "w") as f:
            for group, stack in (
                ("maps", result.maps),
                ("sigma", result.sigma),
                ("roi", result.roi),
            ):
                g = f.create_group(group)
                for k, sp in enumerate(result.families):
                    d = g.create_dataset(
                        sp,
                        data=stack[k],
                        chunks=chunks,
                        compression="gzip",
                        compression_opts=4,
                        shuffle=True,
                    )
                    d.attrs["units"] = "counts"
            f.create_dataset("chi2", data=result.chi2, chunks=chunks, compression="gzip")
            f.create_dataset("energy_eV", data=result.energy_eV)
            s = f.create_group("spectra")
            s.create_dataset("sum", data=result.sum_spectrum)
            s.create_dataset("max", data=result.max_spectrum)
            f.attrs["families"] = json.dumps(result.families)
            f.attrs["parameters"] = json.dumps(result.parameters.to_dict(), sort_keys=True)
            f.attrs["instrument"] = json.dumps(result.instrument.to_dict(), sort_keys=True)
            f.attrs["cube"] = json.dumps(result.cube, sort_keys=True)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_products(
    result: MapResult,
    out_dir: str | Path,
    *,
    cube_sha256: str | None = None,
    rgb: tuple[str, str, str] | None = None,
) -> dict[str, Any]:
    """Write the map store, previews, engine records and manifest to ``out_dir``.

    Parameters
    ----------
    result : MapResult
        From :func:`workbench.maps.run_maps`.
    out_dir : str or pathlib.Path
        Created if missing; existing files of the same names are replaced.
    cube_sha256 : str, optional
        SHA-256 of the original cube (recorded in the manifest).
    rgb : tuple of three family names, optional
        Also write ``rgb.png`` with these as red, green, blue.

    Returns
    -------
    dict
        The manifest (also written as ``manifest.json``).
    """
    from workbench.casefile.hashing import canonical_json, sha256_hex

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    files: dict[str, bytes] = {
        "sum_match.json": result.sum_json,
        "max_match.json": result.max_json,
    }
    px = result.cube.get("pixel_size_um")
    for k, sp in enumerate(result.families):
        files[f"{_safe(sp)}.png"] = preview_png(
            colourise(result.maps[k]),
            px,
            f"{sp} fitted counts (max {np.nanmax(result.maps[k]):.0f})",
        )
    if rgb:
        idx = [result.family_index(s) for s in rgb]
        files["rgb.png"] = preview_png(
            rgb_overlay(*(result.maps[i] for i in idx)), px, f"R {rgb[0]}, G {rgb[1]}, B {rgb[2]}"
        )
    for name, data in files.items():
        _atomic_write(out / name, data)
    _write_h5(result, out / "maps.h5")
    digests = {name: sha256_hex(data) for name, data in files.items()}
    digests["maps.h5"] = sha256_hex((out / "maps.h5").read_bytes())
    manifest = {
        "kind": "element_maps",
        "families": result.families,
        "candidates": result.candidates,
        "screening": result.screening,
        "parameters": result.parameters.to_dict(),
        "instrument": result.instrument.to_dict(),
        "cube": {**result.cube, "sha256": cube_sha256},
        "files": dict(sorted(digests.items())),
        "versions": _versions(),
        "caution": "Maps show fitted counts per family, not concentrations; a family is mapped "
        "only when the engine called it and it passed the detection screen.",
    }
    _atomic_write(out / "manifest.json", canonical_json(manifest))
    return manifest


def register_products(
    store: Any,
    item: Any,
    cube_path: str | Path,
    out_dir: str | Path,
    manifest: dict[str, Any],
    *,
    operator: str,
    analyst: str,
    measured_at: str,
    instrument_name: str,
    technique: str = "XRF",
    copy_limit_bytes: int = DEFAULT_COPY_LIMIT_BYTES,
) -> dict[str, Any]:
    """Record the cube as a measurement and the maps as an analysis of it.

    The measurement holds the original cube byte-for-byte when it is a single
    file of at most ``copy_limit_bytes``; otherwise a JSON reference naming
    its SHA-256 and size, with ``settings.original_kept = "hash"``. The
    analysis stores the engine's record for the sum spectrum (schema 1, so
    every face can show it) and lists the map products with their SHA-256
    in its parameters; the product files go into the store's content-addressed
    files.

    Parameters
    ----------
    store : workbench.casefile.CaseStore
        Open store.
    item : ItemRef
        The item measured, e.g. ``("CASE-1", "1")``.
    cube_path, out_dir : path
        The original cube and the products' directory.
    manifest : dict
        From :func:`write_products`.
    operator, analyst, measured_at, instrument_name, technique : str
        Measurement metadata.
    copy_limit_bytes : int
        Largest cube copied.

    Returns
    -------
    dict
        ``{"measurement_id", "analysis_id", "original_kept", "products"}``.
    """
    from workbench.casefile.hashing import canonical_json
    from workbench.maps.cube import cube_sha256

    cube = Path(cube_path)
    out = Path(out_dir)
    digest = manifest["cube"].get("sha256") or cube_sha256(cube)
    size = (
        sum(p.stat().st_size for p in cube.rglob("*") if p.is_file())
        if cube.is_dir()
        else cube.stat().st_size
    )
    settings = {
        "map_parameters": manifest["parameters"],
        "instrument": manifest["instrument"],
        "cube_sha256": digest,
        "cube_size_bytes": size,
    }
    if cube.is_file() and size <= copy_limit_bytes:
        data, filename = cube.read_bytes(), cube.name
        settings["original_kept"] = "bytes"
    else:
        ref = {
            "kind": "cube reference",
            "filename": cube.name,
            "sha256": digest,
            "size_bytes": size,
            "reason": "directory store"
            if cube.is_dir()
            else f"larger than the copy limit ({copy_limit_bytes} bytes)",
        }
        data, filename = canonical_json(ref), cube.name + ".ref.json"
        settings["original_kept"] = "hash"
    m = store.add_measurement(
        item, data, filename, technique, instrument_name, settings, operator, measured_at
    )
    products: dict[str, str] = {}
    for name, sha in manifest["files"].items():
        stored = store.files.put((out / name).read_bytes())
        if stored != sha:
            raise InputError(
                f"product {name} changed after it was written",
                "run the map again; do not edit its output directory",
            )
        products[name] = sha
    products["manifest.json"] = store.files.put((out / "manifest.json").read_bytes())
    sum_bytes = (out / "sum_match.json").read_bytes()
    sum_report = json.loads(sum_bytes)
    a = store.add_analysis(
        m.id,
        parameters={
            "kind": "element_maps",
            "families": manifest["families"],
            "map_parameters": manifest["parameters"],
            "products": products,
            "versions": manifest["versions"],
        },
        reference_sets=sum_report.get("reference_sets", []),
        result_json=sum_bytes,
        software_version=manifest["versions"]["workbench"],
        analyst=analyst,
    )
    return {
        "measurement_id": m.id,
        "analysis_id": a.id,
        "original_kept": settings["original_kept"],
        "products": products,
    }
