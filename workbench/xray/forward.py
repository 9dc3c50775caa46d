"""Forward model of an energy-dispersive XRF spectrum (for tests, demos and maps).

A layered sample (top layer first) is excited by the tube output
(:mod:`workbench.xray.tube`) through the air path. Per layer, primary
fluorescence of every line (xraylib ``CS_FluorLine_Kissel_Cascade``: photo-
ionisation, fluorescence yield, radiative rate and cascade vacancies) is
integrated over depth in closed form::

    N_i = Ω/4π · Σ_E N0(E) · A_in(E) · w σ_i(E)/sin ψ1 · (1 − e^(−χρt))/χ · A_out(E_i)
    χ = μ(E)/sin ψ1 + μ(E_i)/sin ψ2

(A_in, A_out: attenuation in the layers above and in the air path;
secondary fluorescence is left out). Rayleigh and Compton scatter of the
whole tube spectrum use the same depth integral with xraylib's differential
cross-sections (``DCS_Rayl``, ``DCS_Compt``) at the scatter angle; the
Compton line is Doppler-broadened (FWHM ≈ 3 % of its energy; approximate,
from memory). Air adds Ar K fluorescence from the air in front of the
detector. The detector multiplies by its efficiency, moves the escape
fraction of every component to E − E_escape
(:func:`workbench.xray.detector.escape_fraction`), adds pile-up (ordered
pairs within the pulse-pair time τ: rate_ij = τ·r_i·r_j, so a pair of
distinct lines gives 2τ·r_i·r_j), spreads everything with the Gaussian
resolution FWHM(E), shows energies through the instrument's calibration
error, and the counts get Poisson noise.

The absolute scale (solid angle :data:`SOLID_ANGLE_SR`, tube constants) is
tuned to give some 10⁴ counts/s from a thick sample at 40 kV and 20 µA, as
handheld units do; it is not a check value.

Public entry points: :class:`Layer`, :func:`simulate_spectrum` (energies and
counts, for maps and demos) and :func:`forward_model` (the same with every
discrete component listed, for tests that need the truth).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import polars as pl

from workbench.errors import ValueRangeError
from workbench.xray.detector import detector_efficiency, escape_fraction, escape_lines, fwhm_eV
from workbench.xray.excitation import AIR_COMPOSITION, AIR_DENSITY_G_CM3, path_transmission
from workbench.xray.instrument import Instrument
from workbench.xray.tube import tube_continuum, tube_lines

__all__ = [
    "SOLID_ANGLE_SR",
    "ForwardSpectrum",
    "Layer",
    "family_yield",
    "forward_model",
    "line_yields",
    "simulate_spectrum",
]

#: Detector solid angle seen from the spot (sr); invented, sets the count rate.
SOLID_ANGLE_SR: float = 0.01
_GRID_STEP_EV = 50.0
_YIELD_STEP_EV = 200.0
_MIN_LINE_EV = 800.0
_DOPPLER_FRACTION = 0.03
_IUPAC = re.compile(r"^(K|L[1-3]|M[1-5])(L[1-3]|M[1-5]|N[1-7]|O[1-7]|P[1-5]|Q[1-3])_LINE$")


@dataclass(frozen=True)
class Layer:
    """One homogeneous layer of the sample.

    Attributes
    ----------
    composition : dict
        Element symbol → mass fraction (normalised to 1 when used).
    density_g_cm3 : float
        Density.
    thickness_um : float or None
        Thickness; ``None`` for an infinitely thick substrate.
    name : str
        Label (e.g. ``"lead white"``).
    """

    composition: dict[str, float]
    density_g_cm3: float
    thickness_um: float | None = None
    name: str = ""

    def __post_init__(self) -> None:
        total = sum(self.composition.values())
        if not self.composition or total <= 0 or any(v < 0 for v in self.composition.values()):
            raise ValueRangeError(
                f"layer {self.name!r} has no positive composition",
                "give element mass fractions, e.g. {'Pb': 0.8, 'C': 0.2}",
            )
        if self.density_g_cm3 <= 0 or (self.thickness_um is not None and self.thickness_um <= 0):
            raise ValueRangeError(
                f"layer {self.name!r} needs a positive density and thickness",
                "give density in g/cm³ and thickness in µm (None for a thick substrate)",
            )

    @property
    def fractions(self) -> dict[str, float]:
        """Mass fractions normalised to 1."""
        total = sum(self.composition.values())
        return {k: v / total for k, v in self.composition.items() if v > 0}


@dataclass
class ForwardSpectrum:
    """A modelled spectrum with its components.

    Attributes
    ----------
    energy_eV : numpy.ndarray
        Channel centres as the instrument shows them.
    expected : numpy.ndarray
        Expected counts per channel (before Poisson noise).
    counts : numpy.ndarray
        Counts per channel (Poisson draw; equal to ``expected`` rounded when
        no generator was given).
    components : polars.DataFrame
        Discrete components: ``kind`` (fluorescence, rayleigh, compton,
        escape, sum, air), ``label``, ``element``, ``family``,
        ``energy_eV`` (true), ``shown_eV``, ``counts`` (expected, in the
        whole peak), ``fwhm_eV``.
    live_time_s : float
    """

    energy_eV: np.ndarray
    expected: np.ndarray
    counts: np.ndarray
    components: pl.DataFrame
    live_time_s: float


@lru_cache(maxsize=1)
def _iupac_lines() -> tuple[tuple[str, int], ...]:
    import xraylib

    return tuple(
        (n[:-5], getattr(xraylib, n)) for n in sorted(dir(xraylib)) if _IUPAC.match(n) is not None
    )


@lru_cache(maxsize=128)
def _element_lines(symbol: str) -> tuple[tuple[str, int, float], ...]:
    """(IUPAC name, xraylib code, energy eV) of the element's lines above 800 eV."""
    import xraylib

    z = xraylib.SymbolToAtomicNumber(symbol)
    out = []
    for name, code in _iupac_lines():
        try:
            e = xraylib.LineEnergy(z, code) * 1000.0
        except ValueError:
            continue
        if e >= _MIN_LINE_EV:
            out.append((name, code, e))
    return tuple(out)


def _mu(fractions: dict[str, float], energy_eV: np.ndarray) -> np.ndarray:
    import xraylib
    import xraylib_np

    e = np.clip(np.asarray(energy_eV, dtype=np.float64) / 1000.0, 0.1, 800.0)
    out = np.zeros(e.size)
    for sym, w in fractions.items():
        out += w * xraylib_np.CS_Total(np.array([xraylib.SymbolToAtomicNumber(sym)]), e)[0]
    return out


def _dcs(fractions: dict[str, float], energy_eV: np.ndarray, theta: float, kind: str) -> np.ndarray:
    import xraylib
    import xraylib_np

    fn = xraylib_np.DCS_Rayl if kind == "rayleigh" else xraylib_np.DCS_Compt
    e = np.clip(np.asarray(energy_eV, dtype=np.float64) / 1000.0, 0.1, 800.0)
    out = np.zeros(e.size)
    for sym, w in fractions.items():
        z = np.array([xraylib.SymbolToAtomicNumber(sym)])
        out += w * fn(z, e, np.array([theta]))[0, :, 0]
    return out


def _fluor_cs(symbol: str, energy_eV: np.ndarray) -> tuple[list[tuple[str, float]], np.ndarray]:
    """Lines and their fluorescence cross-sections (cm²/g) at each excitation energy."""
    import xraylib
    import xraylib_np

    lines = _element_lines(symbol)
    if not lines:
        return [], np.zeros((0, energy_eV.size))
    z = np.array([xraylib.SymbolToAtomicNumber(symbol)])
    codes = np.array([c for _, c, _ in lines])
    e = np.clip(energy_eV / 1000.0, 0.1, 800.0)
    cs = xraylib_np.CS_FluorLine_Kissel_Cascade(z, codes, e)[0]
    return [(n, en) for n, _, en in lines], np.nan_to_num(cs)


@lru_cache(maxsize=8)
def _primary(
    instrument: Instrument, step_eV: float = _GRID_STEP_EV
) -> tuple[np.ndarray, np.ndarray, tuple[str, ...]]:
    """Primary photons / s / sr reaching the sample: energies, photons, label per component.

    Cached per instrument and grid step (the arrays are read-only): the
    tube's filters and path cost tens of milliseconds of xraylib calls.
    """
    e0 = instrument.tube_kV * 1000.0
    grid = np.arange(_MIN_LINE_EV * 0.5 + step_eV / 2, e0, step_eV)
    n = tube_continuum(grid, instrument) * step_eV
    labels = [""] * grid.size
    for tl in tube_lines(instrument):
        grid = np.append(grid, tl.energy_eV)
        n = np.append(n, tl.photons_per_s_sr)
        labels.append(f"{tl.element} {tl.line}")
    out_e, out_n = grid, n * path_transmission(grid, instrument)
    out_e.setflags(write=False)
    out_n.setflags(write=False)
    return out_e, out_n, tuple(labels)


@lru_cache(maxsize=8)
def _detection_grid(instrument: Instrument) -> tuple[np.ndarray, np.ndarray]:
    """Path transmission × detector efficiency on a 2 eV grid up to the tube voltage (cached)."""
    grid = np.arange(_MIN_LINE_EV, max(instrument.tube_kV * 1000.0, 2 * _MIN_LINE_EV) + 2.0, 2.0)
    det = path_transmission(grid, instrument) * detector_efficiency(grid, instrument)
    grid.setflags(write=False)
    det.setflags(write=False)
    return grid, det


def family_yield(element: str, family: str, instrument: Instrument) -> float:
    """Detected photons / s of one line family from a thin film of unit areal density.

    Used for family ratios (:func:`workbench.xray.excitation.family_ratio`).
    """
    e_in, n_in, _ = _primary(instrument)
    lines, cs = _fluor_cs(element, e_in)
    total = 0.0
    for k, (name, energy) in enumerate(lines):
        if name[0] != family:
            continue
        det = path_transmission(np.array([energy]), instrument)[0]
        det *= detector_efficiency(np.array([energy]), instrument)[0]
        total += float(np.sum(n_in * cs[k])) * det
    return total


@lru_cache(maxsize=256)
def line_yields(element: str, instrument: Instrument) -> dict[str, float]:
    """Detected photons / s of each line of ``element`` from a thin film of unit areal density.

    Per line (xraylib IUPAC name, e.g. ``"M5N7"``, ``"L3M5"``, ``"KL3"``):
    Σ over the tube spectrum of photons × ``CS_FluorLine_Kissel_Cascade``
    (photo-ionisation of the initial sub-shell by Kissel's cross-sections,
    Coster–Kronig and radiative/non-radiative cascades from the deeper
    shells, fluorescence yield, radiative rate; xraylib 4.3), times the
    transmission of the path and the detector efficiency at the line. Lines
    below 800 eV are left out (not measurable on a bench or handheld unit).
    This is the same physics as the forward model, so the pattern of lines
    within a family (L1/L2/L3 or M3/M4/M5 sub-shell weights, minor lines
    such as Pb Mζ) follows the excitation instead of fixed weights.

    Parameters
    ----------
    element : str
        Element symbol.
    instrument : Instrument
        Tube, filter, path and detector.

    Returns
    -------
    dict
        IUPAC line name → detected photons / s (relative scale; empty for
        an element xraylib does not know).
    """
    try:
        # A 200 eV continuum grid (the tube lines stay exact): sub-shell
        # shares move by well under the x-ray model's 0.2 dex against the
        # forward model's 50 eV grid, at a quarter of the xraylib calls.
        e_in, n_in, _ = _primary(instrument, _YIELD_STEP_EV)
        lines, cs = _fluor_cs(element, e_in)
    except ValueError:
        return {}
    if not lines:
        return {}
    energy = np.array([en for _, en in lines])
    # Transmission and efficiency on a 2 eV grid (an edge moves a line's
    # factor by at most one grid step's worth).
    det = np.interp(energy, *_detection_grid(instrument))
    total = (cs @ n_in) * det
    return {name: float(v) for (name, _), v in zip(lines, total, strict=True) if v > 0}


def _depth_factor(chi: np.ndarray, rho_t: float | None) -> np.ndarray:
    if rho_t is None:
        return 1.0 / chi
    return -np.expm1(-chi * rho_t) / chi


def forward_model(
    layers: list[Layer],
    instrument: Instrument,
    live_time_s: float | None = None,
    rng: np.random.Generator | None = None,
    *,
    channel_eV: float = 10.0,
) -> ForwardSpectrum:
    """Model the spectrum of a layered sample (see the module docstring).

    Parameters
    ----------
    layers : list of Layer
        Top layer first; the last may be infinitely thick.
    instrument : Instrument
        Tube, path, geometry, detector and calibration.
    live_time_s : float, optional
        Live time; the instrument's when omitted.
    rng : numpy.random.Generator, optional
        For Poisson noise; without it ``counts`` is ``expected`` rounded.
    channel_eV : float
        Channel width.

    Returns
    -------
    ForwardSpectrum
    """
    import xraylib

    if not layers:
        raise ValueRangeError("the sample has no layers", "give at least one Layer")
    t_live = float(live_time_s if live_time_s is not None else instrument.live_time_s)
    s1 = np.sin(np.radians(instrument.incidence_deg))
    s2 = np.sin(np.radians(instrument.takeoff_deg))
    theta = instrument.scatter_angle_rad
    e_in, n_in, in_labels = _primary(instrument)
    n_grid = int(np.sum(np.array(in_labels) == ""))

    rows: list[tuple[str, str, str, str, float, float]] = []  # kind,label,el,family,E,rate
    cont_e: list[np.ndarray] = []
    cont_r: list[np.ndarray] = []
    a_in = np.ones(e_in.size)  # attenuation by the layers above, incoming
    above: list[tuple[dict[str, float], float]] = []  # (fractions, ρt) of the layers above

    def a_out(energy: np.ndarray) -> np.ndarray:
        out = np.ones(np.size(energy))
        for fr, rt in above:
            out *= np.exp(-_mu(fr, np.atleast_1d(energy)) * rt / s2)
        return out * path_transmission(np.atleast_1d(energy), instrument)

    for layer in layers:
        fr = layer.fractions
        rho_t = (
            None if layer.thickness_um is None else layer.density_g_cm3 * layer.thickness_um * 1e-4
        )
        mu_in = _mu(fr, e_in)
        for sym, w in fr.items():
            lines, cs = _fluor_cs(sym, e_in)
            for k, (name, energy) in enumerate(lines):
                chi = mu_in / s1 + _mu(fr, np.array([energy]))[0] / s2
                rate = np.sum(n_in * a_in * w * cs[k] / s1 * _depth_factor(chi, rho_t))
                rate *= SOLID_ANGLE_SR / (4 * np.pi) * a_out(np.array([energy]))[0]
                if rate > 0:
                    rows.append(("fluorescence", f"{sym} {name}", sym, name[0], energy, rate))
        # Scatter of every primary component.
        e_c = np.array([xraylib.ComptonEnergy(e / 1000.0, theta) * 1000.0 for e in e_in])
        for kind, e_out in (("rayleigh", e_in), ("compton", e_c)):
            chi = mu_in / s1 + _mu(fr, e_out) / s2
            rate = n_in * a_in * _dcs(fr, e_in, theta, kind) / s1 * _depth_factor(chi, rho_t)
            rate = rate * SOLID_ANGLE_SR * a_out(e_out)
            cont_e.append(e_out[:n_grid])
            cont_r.append(rate[:n_grid])
            for j in range(n_grid, e_in.size):
                rows.append((kind, f"{in_labels[j]} {kind}", "", "", float(e_out[j]), rate[j]))
        if rho_t is not None:
            a_in = a_in * np.exp(-mu_in * rho_t / s1)
            above.append((fr, rho_t))
        else:
            break
    if instrument.atmosphere == "air" and instrument.air_path_mm > 0:
        # Ar K from the air in front of the detector: a thin film excited by the primary beam.
        lines, cs = _fluor_cs("Ar", e_in)
        rho_t = AIR_DENSITY_G_CM3 * 0.1 * instrument.air_path_mm * AIR_COMPOSITION["Ar"]
        for k, (name, energy) in enumerate(lines):
            rate = np.sum(n_in * cs[k]) * rho_t * SOLID_ANGLE_SR / (4 * np.pi)
            if rate > 0:
                rows.append(("air", f"Ar {name}", "Ar", name[0], energy, rate))

    comp = pl.DataFrame(
        rows,
        schema=["kind", "label", "element", "family", "energy_eV", "rate"],
        orient="row",
    )
    cont_energy = np.concatenate(cont_e)
    cont_rate = np.concatenate(cont_r)
    # Detector efficiency.
    comp = comp.with_columns(
        pl.col("rate") * detector_efficiency(comp["energy_eV"].to_numpy(), instrument)
    )
    cont_rate = cont_rate * detector_efficiency(cont_energy, instrument)
    # Escape peaks.
    fr_d = escape_fraction(comp["energy_eV"].to_numpy(), instrument)
    fr_c = escape_fraction(cont_energy, instrument)
    esc_rows = []
    keep = np.ones(comp.height)
    keep_c = np.ones(cont_energy.size)
    for esc in escape_lines(instrument):
        f = fr_d[f"{esc.element} {esc.line}"]
        fc = fr_c[f"{esc.element} {esc.line}"]
        keep -= f
        keep_c -= fc
        for r, fi in zip(comp.iter_rows(named=True), f, strict=True):
            if fi > 0 and r["rate"] * fi * t_live >= 0.5:
                esc_rows.append(
                    (
                        "escape",
                        f"{r['label']} − {esc.element} {esc.line} escape",
                        r["element"],
                        r["family"],
                        r["energy_eV"] - esc.energy_eV,
                        r["rate"] * fi,
                    )
                )
        cont_energy = np.append(cont_energy, cont_energy[: fc.size] - esc.energy_eV)
        cont_rate = np.append(cont_rate, cont_rate[: fc.size] * fc)
    comp = comp.with_columns(pl.col("rate") * keep)
    cont_rate[: keep_c.size] *= keep_c
    if esc_rows:
        comp = pl.concat(
            [comp, pl.DataFrame(esc_rows, schema=comp.columns, orient="row")], how="vertical"
        )
    comp = comp.filter(pl.col("energy_eV") > 0)
    ok = cont_energy > 0
    cont_energy, cont_rate = cont_energy[ok], cont_rate[ok]

    # Pile-up.
    tau = instrument.pileup_time_ns * 1e-9
    total_rate = float(comp["rate"].sum() + cont_rate.sum())
    survive = float(np.exp(-2.0 * tau * total_rate))
    sum_rows = []
    pile_e = np.empty(0)
    pile_r = np.empty(0)
    if tau > 0:
        top = comp.sort("rate", descending=True).head(40)
        te, tr = top["energy_eV"].to_numpy(), top["rate"].to_numpy()
        tl = top["label"].to_list()
        for i in range(te.size):
            for j in range(i, te.size):
                r = tau * tr[i] * tr[j] * (1.0 if i == j else 2.0)
                if r * t_live >= 0.5:
                    sum_rows.append(("sum", f"{tl[i]} + {tl[j]} sum", "", "", te[i] + te[j], r))
        # Everything else piles into a smooth background: the self-convolution of
        # the whole spectrum minus the discrete top pairs (binned at 100 eV).
        step = 100.0
        n_b = int(2 * instrument.tube_kV * 1000.0 / step) + 2
        all_e = np.concatenate([comp["energy_eV"].to_numpy(), cont_energy])
        all_r = np.concatenate([comp["rate"].to_numpy(), cont_rate])
        h_all = np.bincount((all_e / step).astype(int), all_r, minlength=n_b)[:n_b]
        h_top = np.bincount((te / step).astype(int), tr, minlength=n_b)[:n_b]
        conv = np.convolve(h_all, h_all) - np.convolve(h_top, h_top)
        pile_e = (np.arange(conv.size) + 1.0) * step
        pile_r = np.clip(conv, 0.0, None) * tau
    comp = comp.with_columns(pl.col("rate") * survive)
    cont_rate = cont_rate * survive
    if sum_rows:
        comp = pl.concat(
            [comp, pl.DataFrame(sum_rows, schema=comp.columns, orient="row")], how="vertical"
        )

    # Detector response and calibration error.
    e0 = instrument.tube_kV * 1000.0
    n_ch = int(np.ceil(e0 / channel_eV))
    edges = np.arange(n_ch + 1) * channel_eV  # shown energies
    centres = 0.5 * (edges[1:] + edges[:-1])
    comp = comp.with_columns((pl.col("rate") * t_live).alias("counts")).filter(
        pl.col("counts") >= 0.5
    )
    e_true = comp["energy_eV"].to_numpy()
    width = fwhm_eV(e_true, instrument)
    doppler = np.where(comp["kind"].to_numpy() == "compton", _DOPPLER_FRACTION * e_true, 0.0)
    width = np.sqrt(width**2 + doppler**2)
    comp = comp.with_columns(
        pl.Series("shown_eV", (e_true - instrument.energy_offset_eV) / instrument.energy_gain),
        pl.Series("fwhm_eV", width),
    ).drop("rate")
    all_e = np.concatenate([e_true, cont_energy, pile_e])
    all_n = np.concatenate([comp["counts"].to_numpy(), cont_rate * t_live, pile_r * t_live])
    all_w = np.concatenate([width, fwhm_eV(cont_energy, instrument), fwhm_eV(pile_e, instrument)])
    use = (all_n > 1e-6) & (all_e < e0 + 5 * all_w)
    expected = _spread(
        (all_e[use] - instrument.energy_offset_eV) / instrument.energy_gain,
        all_n[use],
        all_w[use] / instrument.energy_gain,
        edges,
    )
    counts = rng.poisson(expected).astype(np.float64) if rng is not None else np.round(expected)
    return ForwardSpectrum(centres, expected, counts, comp, t_live)


def _spread(
    centre: np.ndarray, counts: np.ndarray, fwhm: np.ndarray, edges: np.ndarray
) -> np.ndarray:
    """Sum of Gaussians (integrated over each channel), in chunks to bound memory."""
    from scipy.special import ndtr

    out = np.zeros(edges.size - 1)
    sigma = fwhm / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    for a in range(0, centre.size, 256):
        c, n, s = centre[a : a + 256, None], counts[a : a + 256, None], sigma[a : a + 256, None]
        cdf = ndtr((edges[None, :] - c) / s)
        out += np.sum(n * np.diff(cdf, axis=1), axis=0)
    return out


def simulate_spectrum(
    layers: list[Layer],
    instrument: Instrument,
    live_time_s: float | None = None,
    rng: np.random.Generator | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Energies (eV, as the instrument shows them) and counts of a modelled spectrum.

    Parameters
    ----------
    layers : list of Layer
        The sample, top layer first.
    instrument : Instrument
        The instrument description.
    live_time_s : float, optional
        Live time; the instrument's when omitted.
    rng : numpy.random.Generator, optional
        Poisson noise source; without it the expected counts, rounded.

    Returns
    -------
    (energy_eV, counts) : tuple of numpy.ndarray
        Channel centres (10 eV channels from 0 to the tube voltage) and counts.
    """
    fs = forward_model(layers, instrument, live_time_s, rng)
    return fs.energy_eV, fs.counts
