"""Artefact peaks of an XRF spectrum, predicted from the instrument and the peaks.

Predicted before any element is matched, each with its origin:

``rayleigh``
    the tube's characteristic lines scattered elastically (at their own
    energies); intensity depends on the unknown matrix, so not predicted.
``compton``
    the same lines scattered inelastically, at
    E' = E / (1 + (E/m_ec²)(1 − cos θ)) (xraylib ``ComptonEnergy``), broadened
    by the electrons' motion (FWHM ≈ 3 % of E', approximate, from memory).
``escape``
    every observed peak above the sensor's K edge, less the escaping sensor
    line (Si Kα 1740 eV; Ge, Cd, Te Kα and Kβ), with the Reed–Ware fraction
    (:func:`workbench.xray.detector.escape_fraction`).
``sum``
    pile-up of pairs of the strongest peaks: counts_ij = k·τ·r_i·r_j·T with
    k = 1 for a peak with itself and 2 for two different peaks, r the peaks'
    count rates and τ the pulse-pair resolving time (``pileup_time_ns``). The
    prediction scales with the square of the count rate and with τ, which is
    rarely known well: it is trusted to a factor of two.
``air``
    Ar K lines (Kα 2957 eV, Kβ 3190 eV) from argon in the air path; not
    predicted in intensity.

A peak is *explained* by artefacts when it lies within half the detector
FWHM of their energies (the same window as for element lines) and its
intensity does not clearly exceed their summed prediction:
``I ≤ EXCESS_FACTOR · predicted + 3σ`` (σ the peak's noise). Unpredicted
artefacts (scatter, argon) explain any peak at their energy. A peak that
clearly exceeds the prediction stays evidence, with the predicted part
subtracted.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import polars as pl

from workbench.xray.detector import escape_fraction, escape_lines, fwhm_eV
from workbench.xray.instrument import Instrument

__all__ = [
    "EXCESS_FACTOR",
    "Artefact",
    "artefact_table",
    "label_peaks",
    "predict_artefacts",
]

#: A peak is evidence for an element only above this multiple of the predicted
#: artefact intensity (plus 3σ): the sum-peak prediction is uncertain by about
#: a factor of two through τ and the count rates (common practice, no source).
EXCESS_FACTOR: float = 2.0

_DOPPLER_FRACTION = 0.03
_N_SUM = 15  # pile-up pairs are formed among the strongest peaks only
_AR_LINES = (("Kα", 2957.7), ("Kβ", 3190.5))  # Ar K (Deslattes et al. 2003, from memory)


@dataclass(frozen=True)
class Artefact:
    """One predicted artefact peak.

    Attributes
    ----------
    kind : {"rayleigh", "compton", "escape", "sum", "air"}
    energy_eV : float
        Where the artefact appears (true energy).
    predicted_intensity : float or None
        Predicted peak height in the intensity unit of the peak list; ``None``
        when it cannot be predicted (scatter, argon).
    origin : str
        Plain-language origin, e.g. ``"Si escape of the 10551 eV peak"``.
    fwhm_eV : float
        Expected width.
    parents : tuple of int
        Indices of the observed peaks that cause it (escape, sum).
    """

    kind: str
    energy_eV: float
    predicted_intensity: float | None
    origin: str
    fwhm_eV: float
    parents: tuple[int, ...] = ()
    source: str = ""  # the tube or argon line, e.g. "Rh Kα1" (scatter, air)


def predict_artefacts(
    position_eV: np.ndarray,
    intensity: np.ndarray,
    instrument: Instrument,
    *,
    fwhm_obs_eV: np.ndarray | None = None,
    channel_eV: float = 10.0,
    min_intensity: float = 0.0,
) -> list[Artefact]:
    """Artefacts expected in a spectrum with these peaks, measured on this instrument.

    Parameters
    ----------
    position_eV, intensity : numpy.ndarray
        Observed peak centres and heights (counts per channel above the
        baseline for a raw spectrum).
    instrument : Instrument
    fwhm_obs_eV : numpy.ndarray, optional
        Measured widths (the detector's FWHM where missing).
    channel_eV : float
        Channel width, to turn heights into peak counts for the pile-up rate.
    min_intensity : float
        Escape and sum predictions below this height are dropped.

    Returns
    -------
    list of Artefact
    """
    import xraylib

    from workbench.xray.tube import tube_lines

    x = np.asarray(position_eV, dtype=np.float64)
    inten = np.nan_to_num(np.asarray(intensity, dtype=np.float64), nan=0.0)
    w_det = fwhm_eV(x, instrument)
    if fwhm_obs_eV is not None:
        w_obs = np.asarray(fwhm_obs_eV, dtype=np.float64)
        w = np.where(np.isfinite(w_obs) & (w_obs > 0), w_obs, w_det)
    else:
        w = w_det
    out: list[Artefact] = []
    theta = instrument.scatter_angle_rad
    tubes = tube_lines(instrument)
    for tl in tubes:
        # Only the tube's main lines scatter visibly. Below 2–3 keV a weak tube
        # L line (Rh Ll, Lβ4, under 10 % of the strongest L line) would
        # otherwise "explain" real element peaks (Pb M, S K); the K lines
        # scatter into a region with few element lines, where even Rh Kβ2
        # (~3 %) makes a visible Compton peak from a light matrix
        # (common practice, no source).
        fam_max = max(t.photons_per_s_sr for t in tubes if t.line[0] == tl.line[0])
        cut = 0.02 if tl.line.startswith("K") else 0.1
        if tl.photons_per_s_sr < cut * fam_max:
            continue
        f = float(fwhm_eV(tl.energy_eV, instrument))
        out.append(
            Artefact(
                "rayleigh",
                tl.energy_eV,
                None,
                f"{tl.element} {tl.line} from the tube, scattered by the sample (Rayleigh)",
                f,
                source=f"{tl.element} {tl.line}",
            )
        )
        e_c = xraylib.ComptonEnergy(tl.energy_eV / 1000.0, theta) * 1000.0
        if tl.energy_eV - e_c > 0.25 * f:  # distinct from the Rayleigh peak
            out.append(
                Artefact(
                    "compton",
                    e_c,
                    None,
                    f"{tl.element} {tl.line} from the tube, Compton-scattered "
                    f"at {np.degrees(theta):.0f}°",
                    float(np.hypot(fwhm_eV(e_c, instrument), _DOPPLER_FRACTION * e_c)),
                    source=f"{tl.element} {tl.line}",
                )
            )
    if instrument.atmosphere == "air" and instrument.air_path_mm > 0:
        for name, e in _AR_LINES:
            out.append(
                Artefact(
                    "air",
                    e,
                    None,
                    f"Ar {name} from argon in the air path",
                    float(fwhm_eV(e, instrument)),
                    source=f"Ar {name}",
                )
            )
    # Escape peaks of every observed peak.
    fractions = escape_fraction(x, instrument)
    for esc in escape_lines(instrument):
        f = fractions[f"{esc.element} {esc.line}"]
        e_esc = x - esc.energy_eV
        for p in np.flatnonzero((f > 0) & (e_esc > 0)):
            w_e = float(fwhm_eV(e_esc[p], instrument))
            # Same peak area, narrower peak: height scales by the width ratio.
            pred = float(inten[p] * f[p] * w[p] / w_e)
            if pred > min_intensity:
                out.append(
                    Artefact(
                        "escape",
                        float(e_esc[p]),
                        pred,
                        f"{esc.element} {esc.line} escape of the {x[p]:.0f} eV peak",
                        w_e,
                        (int(p),),
                    )
                )
    # Pile-up sums of pairs of the strongest peaks.
    tau = instrument.pileup_time_ns * 1e-9
    t_live = instrument.live_time_s
    if tau > 0 and x.size:
        area = inten * w * 1.0645 / channel_eV  # counts in each peak (Gaussian)
        rate = area / t_live
        top = np.argsort(-area, kind="stable")[:_N_SUM]
        for a_i, i in enumerate(top):
            for j in top[a_i:]:
                k = 1.0 if i == j else 2.0
                counts = k * tau * rate[i] * rate[j] * t_live
                e_sum = x[i] + x[j]
                w_s = float(fwhm_eV(e_sum, instrument))
                pred = float(counts * channel_eV / (1.0645 * w_s))
                if pred > min_intensity:
                    who = (
                        f"the {x[i]:.0f} eV peak with itself"
                        if i == j
                        else f"the {x[min(i, j)]:.0f} and {x[max(i, j)]:.0f} eV peaks"
                    )
                    out.append(
                        Artefact(
                            "sum",
                            float(e_sum),
                            pred,
                            f"pile-up sum of {who}",
                            w_s,
                            tuple(sorted({int(i), int(j)})),
                        )
                    )
    return out


def label_peaks(
    position_eV: np.ndarray,
    intensity: np.ndarray,
    noise: np.ndarray,
    artefacts: list[Artefact],
    *,
    excess_factor: float = EXCESS_FACTOR,
) -> pl.DataFrame:
    """Which observed peaks the artefacts explain.

    Parameters
    ----------
    position_eV, intensity : numpy.ndarray
        Observed peaks.
    noise : numpy.ndarray
        1σ noise of each peak's intensity (0 or NaN when unknown).
    artefacts : list of Artefact
        From :func:`predict_artefacts`.
    excess_factor : float
        See :data:`EXCESS_FACTOR`.

    Returns
    -------
    polars.DataFrame
        One row per peak with an artefact within half its FWHM: ``peak``
        (index), ``observed_eV``, ``intensity``, ``kinds`` (comma list),
        ``origin`` (all origins, "; "-joined), ``predicted_eV`` (where each
        predicted artefact the peak stands for lies, ascending: a broad
        Compton peak may hold the scatter of several tube lines hundreds of
        eV apart), ``predicted_intensity`` (sum,
        null when unpredictable), ``explained`` (bool) and
        ``residual_intensity`` (intensity less the prediction; what remains as
        evidence when not explained).
    """
    x = np.asarray(position_eV, dtype=np.float64)
    inten = np.asarray(intensity, dtype=np.float64)
    sig = np.nan_to_num(np.asarray(noise, dtype=np.float64), nan=0.0)
    rows = []
    for p in range(x.size):
        hits = [
            a
            for a in artefacts
            if abs(x[p] - a.energy_eV) <= 0.5 * a.fwhm_eV and p not in a.parents
        ]
        if not hits:
            continue
        unpredictable = any(a.predicted_intensity is None for a in hits)
        pred = sum(a.predicted_intensity or 0.0 for a in hits)
        if unpredictable:
            explained = True
        else:
            explained = bool(inten[p] <= excess_factor * pred + 3.0 * sig[p])
        kinds = sorted({a.kind for a in hits})
        hits.sort(key=lambda a: -(a.predicted_intensity or np.inf))
        rows.append(
            {
                "peak": p,
                "observed_eV": float(x[p]),
                "intensity": float(inten[p]),
                "kinds": ",".join(kinds),
                "origin": _origin_text(hits),
                "predicted_eV": sorted(float(a.energy_eV) for a in hits),
                "predicted_intensity": None if unpredictable else float(pred),
                "explained": explained,
                "residual_intensity": 0.0 if explained else float(inten[p] - pred),
            }
        )
    schema = {
        "peak": pl.Int64,
        "observed_eV": pl.Float64,
        "intensity": pl.Float64,
        "kinds": pl.Utf8,
        "origin": pl.Utf8,
        "predicted_eV": pl.List(pl.Float64),
        "predicted_intensity": pl.Float64,
        "explained": pl.Boolean,
        "residual_intensity": pl.Float64,
    }
    return pl.DataFrame(rows, schema=schema)


def _origin_text(hits: list[Artefact]) -> str:
    """One plain sentence per kind: scattered tube lines of one kind are merged."""
    parts: list[str] = []
    for kind in ("rayleigh", "compton", "air"):
        srcs = [a.source for a in hits if a.kind == kind and a.source]
        if not srcs:
            continue
        el = srcs[0].split()[0]
        names = "/".join(dict.fromkeys(s.split()[1] for s in srcs))
        first = next(a for a in hits if a.kind == kind)
        rest = first.origin.split(" ", 2)[2]  # "from the tube, …" / "from argon …"
        parts.append(f"{el} {names} {rest}")
    parts.extend(dict.fromkeys(a.origin for a in hits if a.kind in ("escape", "sum")))
    return "; ".join(parts)


def artefact_table(artefacts: list[Artefact]) -> pl.DataFrame:
    """The predictions as a table (kind, energy_eV, predicted_intensity, origin, fwhm_eV)."""
    return pl.DataFrame(
        {
            "kind": [a.kind for a in artefacts],
            "energy_eV": [a.energy_eV for a in artefacts],
            "predicted_intensity": [a.predicted_intensity for a in artefacts],
            "origin": [a.origin for a in artefacts],
            "fwhm_eV": [a.fwhm_eV for a in artefacts],
        },
        schema={
            "kind": pl.Utf8,
            "energy_eV": pl.Float64,
            "predicted_intensity": pl.Float64,
            "origin": pl.Utf8,
            "fwhm_eV": pl.Float64,
        },
    )
