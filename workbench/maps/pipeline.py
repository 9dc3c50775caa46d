"""Element maps from a spectrum cube: identify on the sum, fit every pixel.

Stages (each timed in ``MapResult.timings_s``):

1. **sum** — one pass over the cube gives the sum spectrum and the
   maximum-pixel spectrum (the channel-wise maximum over pixels, which keeps
   an element present in only a few pixels visible);
2. **identify** — both spectra go through the same engine as
   ``workbench match`` (:func:`workbench.matching.analyse_input`); X-ray
   families called at the chosen verdicts (default established or probable)
   become candidates;
3. **screen** — the sum spectrum is fitted on the candidates' templates; a
   family whose fitted counts are below ``detection_k`` standard
   uncertainties (k = 3.29, Currie, Anal. Chem. 40, 586 (1968): the
   detection limit for 5 % false positives and negatives) gets no map;
4. **fit** — a second pass fits every pixel (batched NNLS on the family
   templates plus a smooth background; :mod:`workbench.maps.fit`) and
   integrates ROI windows as a fast preview.

The cube is never loaded whole: both passes stream chunks through the
:class:`~workbench.maps.cluster.Runner` (a Dask cluster or threads).
"""

from __future__ import annotations

import time
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from workbench.errors import InputError, InsufficientDataError
from workbench.maps.cluster import Runner
from workbench.maps.cube import Cube
from workbench.maps.detector import Instrument
from workbench.maps.fit import FitModel, _sum_max_block
from workbench.maps.templates import build_templates

__all__ = ["MapParameters", "MapResult", "identify_spectrum", "run_maps", "spectrum_csv"]

_FAMILIES = ("K", "L", "M")


@dataclass(frozen=True)
class MapParameters:
    """Choices of the map pipeline (recorded with every product).

    Attributes
    ----------
    elements : tuple of str or None
        Consider only these elements (as ``workbench match --elements``).
    verdicts : tuple of str
        Engine verdicts that make a family a candidate.
    detection_k : float
        Screening threshold in standard uncertainties of the sum-spectrum fit.
    knot_spacing_eV : float
        Background B-spline knot spacing.
    min_snr : float or None
        Peak-finding threshold for the sum / max spectra (engine default if None).
    """

    elements: tuple[str, ...] | None = None
    verdicts: tuple[str, ...] = ("established", "probable")
    detection_k: float = 3.29
    knot_spacing_eV: float = 2000.0
    min_snr: float | None = None

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly form."""
        d = asdict(self)
        d["elements"] = list(self.elements) if self.elements else None
        d["verdicts"] = list(self.verdicts)
        return d


@dataclass
class MapResult:
    """Everything the pipeline produced (arrays in memory, a few MB per family)."""

    families: list[str]
    maps: np.ndarray  # (n_families, ny, nx) fitted counts
    sigma: np.ndarray  # (n_families, ny, nx) standard uncertainty
    roi: np.ndarray  # (n_families, ny, nx) ROI net counts (preview)
    chi2: np.ndarray  # (ny, nx) reduced Pearson χ²
    energy_eV: np.ndarray
    sum_spectrum: np.ndarray
    max_spectrum: np.ndarray
    sum_json: bytes
    max_json: bytes
    candidates: list[str]
    screening: dict[str, dict[str, float | bool]]
    parameters: MapParameters
    instrument: Instrument
    cube: dict[str, Any]
    runner: str
    timings_s: dict[str, float] = field(default_factory=dict)

    def family_index(self, species: str) -> int:
        """Index of a family in the map stack (InputError if it has no map)."""
        if species not in self.families:
            raise InputError(f"no map for {species!r}", f"choose one of {self.families}")
        return self.families.index(species)


def spectrum_csv(energy_eV: np.ndarray, counts: np.ndarray, title: str) -> bytes:
    """A two-column CSV (keV, counts) the readers take, with a labelled header.

    Channels at or below 0 eV (the zero-energy peak region of some
    calibrations) are left out: the readers need positive positions.
    """
    keep = np.asarray(energy_eV) > 0
    energy_eV, counts = np.asarray(energy_eV)[keep], np.asarray(counts)[keep]
    lines = [f"# {title}", "energy (keV),counts"]
    lines += [f"{e / 1000.0:.6f},{c:.6g}" for e, c in zip(energy_eV, counts, strict=True)]
    return ("\n".join(lines) + "\n").encode("utf-8")


def identify_spectrum(
    energy_eV: np.ndarray,
    counts: np.ndarray,
    name: str,
    params: MapParameters,
    instrument: Instrument | None = None,
) -> tuple[dict[str, Any], bytes]:
    """Run the matching engine on one spectrum; return (report, canonical JSON).

    When the instrument description carries X-ray settings (a ``workbench
    match --instrument`` file), the engine uses them, as ``match`` would.
    """
    from workbench.matching import MatchParameters, analyse_input
    from workbench.matching.report import result_json

    xray = instrument.xray_instrument() if instrument is not None else None
    mp = MatchParameters(
        elements=tuple(sorted(params.elements)) if params.elements else None, instrument=xray
    )
    opts = {"min_snr": params.min_snr} if params.min_snr else None
    try:
        outcome = analyse_input(
            spectrum_csv(energy_eV, counts, name),
            name=name,
            params=mp,
            peak_options=opts,
            kind="spectrum",
        )
    except InsufficientDataError as exc:
        # A blank or background-only region: nothing to identify is an outcome, not a
        # failure of the map (the single-spectrum CLI reports it as an error).
        report = {"spectrum": name, "elements": [], "note": str(exc)}
        return report, result_json(report)
    return outcome.report, outcome.json_bytes


def _candidates(report: dict[str, Any], verdicts: tuple[str, ...]) -> set[str]:
    out = set()
    for el in report.get("elements") or []:
        if el.get("verdict") in verdicts and el.get("family") in _FAMILIES:
            out.add(str(el["species"]))
    return out


def _block_offsets(chunks: tuple[tuple[int, ...], ...]) -> list[np.ndarray]:
    return [np.concatenate([[0], np.cumsum(c)]) for c in chunks]


def run_maps(
    cube: Cube,
    runner: Runner,
    *,
    instrument: Instrument | None = None,
    params: MapParameters | None = None,
) -> MapResult:
    """Identify the elements of a cube and map each identified family.

    Parameters
    ----------
    cube : Cube
        From :func:`workbench.maps.open_cube` or :meth:`Cube.from_array`.
    runner : Runner
        An entered :class:`~workbench.maps.cluster.Runner`.
    instrument : Instrument, optional
        Detector response (defaults: Si, 80 eV noise).
    params : MapParameters, optional
        Pipeline choices.

    Returns
    -------
    MapResult
    """
    import dask

    instrument = instrument or Instrument()
    params = params or MapParameters()
    timings: dict[str, float] = {}
    ny, nx, nch = cube.shape
    e = cube.energy_eV
    blocks = cube.data.to_delayed()  # (nby, nbx, 1)
    by, bx, _ = _block_offsets(cube.data.chunks)
    flat = [(i, j) for i in range(blocks.shape[0]) for j in range(blocks.shape[1])]

    # 1. sum and maximum-pixel spectra, one streaming pass.
    t0 = time.perf_counter()
    total = np.zeros(nch)
    peak = np.full(nch, -np.inf)
    n_unmeasured = 0

    def add(_: int, part: tuple[np.ndarray, np.ndarray, int]) -> None:
        nonlocal total, peak, n_unmeasured
        total = total + part[0]
        peak = np.maximum(peak, part[1])
        n_unmeasured += part[2]

    runner.compute_each(
        [dask.delayed(_sum_max_block)(blocks[i, j, 0]) for i, j in flat], add, "sum spectrum"
    )
    timings["sum_pass"] = time.perf_counter() - t0
    n_measured = ny * nx - n_unmeasured
    if n_measured == 0:
        raise InputError(
            f"no pixel of the cube holds a measured spectrum (all {ny * nx} hold NaN or "
            "infinite counts)",
            "check the dataset chosen and the export of the scan",
        )
    notes = list(cube.notes)
    if n_unmeasured:
        notes.append(
            f"{n_unmeasured} of {ny * nx} pixels hold NaN or infinite counts (not measured): "
            "left out of the sum spectrum and blank in every map"
        )

    # 2. identification by the engine, on the sum and the maximum-pixel spectra.
    t0 = time.perf_counter()
    name = cube.path.name if cube.path else "cube"
    sum_report, sum_json = identify_spectrum(e, total, f"{name} sum spectrum", params, instrument)
    max_report, max_json = identify_spectrum(
        e, peak, f"{name} maximum-pixel spectrum", params, instrument
    )
    candidates = sorted(
        _candidates(sum_report, params.verdicts) | _candidates(max_report, params.verdicts)
    )
    timings["identify"] = time.perf_counter() - t0

    # 3. screening fit of the sum spectrum (Poisson weights of the sum itself).
    t0 = time.perf_counter()
    screening: dict[str, dict[str, float | bool]] = {}
    families: list[str] = []
    if candidates:
        tpl = build_templates(e, candidates, instrument, knot_spacing_eV=params.knot_spacing_eV)
        sm = FitModel(tpl, 1.0 / np.maximum(total, 1.0))
        x, s, _, _ = sm.solve(total[:, None])
        for k, sp in enumerate(tpl.families):
            ok = bool(x[k, 0] > params.detection_k * s[k, 0])
            screening[sp] = {"sum_counts": float(x[k, 0]), "sigma": float(s[k, 0]), "detected": ok}
            if ok:
                families.append(sp)
    timings["screen"] = time.perf_counter() - t0

    # 4. per-pixel fit, second streaming pass.
    t0 = time.perf_counter()
    nf = len(families)
    maps = np.zeros((nf, ny, nx), np.float32)
    sigma = np.zeros_like(maps)
    roi = np.zeros_like(maps)
    chi2 = np.zeros((ny, nx), np.float32)
    tpl = build_templates(e, families, instrument, knot_spacing_eV=params.knot_spacing_eV)
    model = FitModel.from_mean_spectrum(tpl, total / n_measured)
    dmodel = dask.delayed(model, pure=True)

    def put(idx: int, out: np.ndarray) -> None:
        i, j = flat[idx]
        ys, xs = slice(by[i], by[i + 1]), slice(bx[j], bx[j + 1])
        maps[:, ys, xs] = np.moveaxis(out[..., :nf], -1, 0)
        sigma[:, ys, xs] = np.moveaxis(out[..., nf : 2 * nf], -1, 0)
        roi[:, ys, xs] = np.moveaxis(out[..., 2 * nf : 3 * nf], -1, 0)
        chi2[ys, xs] = out[..., -1]

    runner.compute_each(
        [dask.delayed(FitModel.fit_block)(dmodel, blocks[i, j, 0]) for i, j in flat],
        put,
        "pixel fit",
    )
    timings["fit_pass"] = time.perf_counter() - t0
    info = {
        "path": str(cube.path) if cube.path else None,
        "format": cube.format,
        "dataset": cube.dataset,
        "shape": [ny, nx, nch],
        "dtype": str(cube.data.dtype),
        "calibration_source": cube.calibration_source,
        "pixel_size_um": cube.pixel_size_um,
        "energy_first_eV": float(e[0]),
        "energy_last_eV": float(e[-1]),
        "notes": notes,
        "pixels_unmeasured": n_unmeasured,
    }
    return MapResult(
        families,
        maps,
        sigma,
        roi,
        chi2,
        e,
        total,
        peak,
        sum_json,
        max_json,
        candidates,
        screening,
        params,
        instrument,
        info,
        runner.description,
        timings,
    )
