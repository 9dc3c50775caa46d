"""What the matching engine asks of the X-ray physics on an energy axis.

:func:`prepare_energy_peaks` takes the observed peak list and the instrument
and returns

* the peaks that may be evidence for an element: artefact peaks (tube
  scatter, escape, pile-up sum, argon in air) that do not clearly exceed
  their prediction are taken out, and those that do keep only the excess;
  maxima that counting statistics cannot support are dropped, and each
  kept peak's ``snr`` is its counting significance N/√(N + 2B) from its own
  net and baseline counts (:mod:`workbench.xray.counting`). A maximum
  measured much narrower than the detector response is taken for a
  counting spike unless the spectrum's own counts around it show a line
  (:func:`~workbench.xray.counting.window_significance`: a top-hat
  comparison of the counts within half a FWHM with those of the flanks, in
  which any locally linear background cancels);
* the detector FWHM at each peak in the ``fwhm_eV`` column, so that the
  engine's default window (half the FWHM) follows the detector resolution
  instead of a fixed 50 eV (the measured width is kept as
  ``fwhm_measured_eV``);
* positions corrected by the energy-scale check when the correction is
  significant (pairs from :mod:`workbench.xray.scale_pairs`, fitted in
  :mod:`workbench.xray.energy_scale`);
* an :class:`XrayPreparation` whose :meth:`~XrayPreparation.reference_mask`
  drops reference lines that the tube cannot excite or the beam path does
  not let through, and whose :meth:`~XrayPreparation.to_dict` goes into the
  result (instrument, artefact labels, energy scale, exclusions, warnings).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import polars as pl

from workbench.datamodel import FWHM_COLUMN, PeakList
from workbench.errors import InsufficientDataError, ValueRangeError
from workbench.xray.artefacts import artefact_table, label_peaks, predict_artefacts
from workbench.xray.centroid import fitted_peak_centres
from workbench.xray.counting import (
    MIN_COUNTING_SIGMA,
    channel_snr,
    channel_width,
    not_significant,
)
from workbench.xray.detector import fwhm_eV
from workbench.xray.energy_scale import EnergyScale, fit_energy_scale
from workbench.xray.excitation import excitable, measurable
from workbench.xray.instrument import DEFAULT_INSTRUMENT, Instrument
from workbench.xray.scale_pairs import anchor_pairs
from workbench.xray.wording import artefact_kind_label

__all__ = ["XrayPreparation", "prepare_energy_peaks"]


@dataclass
class XrayPreparation:
    """The X-ray physics applied to one peak list (see the module docstring)."""

    instrument: Instrument
    assumed: bool
    labels: pl.DataFrame
    predicted: pl.DataFrame
    scale: EnergyScale
    unresolved: list[dict[str, Any]] = field(default_factory=list)
    #: (energy_eV, net counts, baseline) of the spectrum, when it came with the
    #: peaks: overlaps are settled on it (workbench.matching.xray_overlap).
    spectrum: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None
    not_excited: list[str] = field(default_factory=list)
    not_measurable: list[str] = field(default_factory=list)
    warnings: list[dict[str, object]] = field(default_factory=list)

    def reference_mask(
        self, element: np.ndarray, transition: np.ndarray, energy_eV: np.ndarray
    ) -> np.ndarray:
        """Per reference line, whether this instrument can excite and measure it.

        Parameters
        ----------
        element : numpy.ndarray of str
            Element of each line.
        transition : numpy.ndarray of str
            IUPAC transition (``"L3-M5"``, ``"M4,5-N6,7"``); its initial level
            decides the edge.
        energy_eV : numpy.ndarray
            Line energies.

        Returns
        -------
        numpy.ndarray of bool
        """
        levels = [str(t).split("-")[0].split(",")[0] if t else "" for t in transition]
        levels = [lv if lv else "?" for lv in levels]
        exc = excitable(list(element), levels, self.instrument)
        mea = measurable(energy_eV, self.instrument)
        fam = np.array([lv[:1] for lv in levels], dtype=object)
        el = np.asarray(element, dtype=object)
        self.not_excited = sorted({f"{e} {f}" for e, f in zip(el[~exc], fam[~exc], strict=True)})
        lost = ~mea & exc
        # A K family none of whose lines is measurable: the light elements
        # (an L or M family of a heavier element is measured by its K or L lines).
        fams = {f"{e} {f}" for e, f in zip(el, fam, strict=True) if f == "K"}
        ok = {f"{e} {f}" for e, f in zip(el[mea & exc], fam[mea & exc], strict=True)}
        self.not_measurable = sorted(
            {f"{e} {f}" for e, f in zip(el[lost], fam[lost], strict=True)} & (fams - ok)
        )
        return exc & mea

    def artefact_energies(self) -> np.ndarray:
        """Energies (eV) of artefact peaks: labelled as explained, or predicted without a peak.

        A merged row of predictions gives both ends of its range; faint
        predictions (below the peak finder's acceptance) are left out.
        """
        lab = self.labels.filter(pl.col("explained"))["observed_eV"].to_numpy()
        hidden = np.array(
            [e for a in self.unresolved if not a["faint"] for e in a["energy_range_eV"]],
            dtype=np.float64,
        )
        return np.concatenate([lab, hidden])

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record for the result (``xray`` key)."""
        inst = self.instrument.to_dict()
        return {
            "instrument": inst,
            "instrument_assumed": self.assumed,
            "artefact_peaks": self.labels.to_dicts(),
            "n_artefacts_predicted": self.predicted.height,
            "artefacts_without_peak": self.unresolved,
            "energy_scale": self.scale.to_dict(),
            "not_excited": self.not_excited,
            "not_measurable": self.not_measurable,
            "not_measurable_note": _measurable_note(self.instrument),
        }


def _measurable_note(instrument: Instrument) -> str:
    grid = np.arange(500.0, 5000.0, 10.0)
    ok = measurable(grid, instrument)
    first = float(grid[np.argmax(ok)]) if ok.any() else float("nan")
    return (
        f"lines below about {first:.0f} eV are not measurable in {instrument.atmosphere} "
        f"with this detector (light elements)"
    )


def _without_peak(
    arts: list,
    labels: pl.DataFrame,
    x: np.ndarray,
    channel: float,
    noise: float,
    x_range: tuple[float, float] | None = None,
    baseline: tuple[np.ndarray, np.ndarray] | None = None,
) -> list[dict[str, Any]]:
    """Predicted artefacts the peak finder did not separate, with their expected counts.

    A predicted artefact with no observed peak within half its width (and no
    labelled peak there) is still in the spectrum: merged into a stronger
    neighbour's peak (a Compton peak beside its Rayleigh peak, a sum peak on
    an element line's tail) or below what the peak finder separates. It is
    listed so that the analyst knows what lies under that part of the
    spectrum; artefacts within half a FWHM of each other are merged into one
    row (``energy_range_eV`` its first and last member, ``energy_eV`` the
    middle of that range: a chain of a sum peak and a broad Compton peak is
    not placed at its first member), and the expected counts (Gaussian area
    1.0645 · height · FWHM / channel) summed where predictable (escape, sum;
    scatter and argon are not predicted in intensity). ``x`` holds the
    significant peaks only (a noise maximum near a predicted artefact does
    not stand for it).

    With the ``baseline`` (channel energies, counts), a predicted escape or
    sum peak's significance is N/√(N + 2B) (N its expected counts over
    ±FWHM, B the baseline counts under them; the peak finder's own
    acceptance, as in :func:`not_significant`). Those from
    :data:`LIST_COUNTING_SIGMA` (2σ) up to :data:`MIN_COUNTING_SIGMA` (3σ)
    are listed with ``faint`` true: too weak to be a peak of their own, but
    two thirds or more of what a line at the detection limit would hold, so
    they can carry a weak element line there over the limit. Weaker ones
    are not listed (on the 20 forward-model spectra of the tests, 1σ would
    list 121 faint rows, up to 32 rows in one spectrum; 2σ lists 38).
    Faint predictions are merged among themselves only. Without the
    baseline, those below the peak heights' 1σ noise (``noise``) are not
    listed. Artefacts outside the measured range (``x_range``) are not
    listed.
    """
    lab = labels["observed_eV"].to_numpy() if labels.height else np.empty(0)
    # Faint predictions are merged among themselves only, so that they never
    # widen a row of peaks the finder could have separated.
    rows: dict[bool, list[dict[str, Any]]] = {False: [], True: []}
    for a in sorted(arts, key=lambda a: a.energy_eV):
        half = 0.5 * a.fwhm_eV
        faint = False
        if a.predicted_intensity is not None:
            if baseline is not None:
                n = 0.98 * 1.0645 * a.predicted_intensity * a.fwhm_eV / channel
                b = float(np.interp(a.energy_eV, baseline[0], baseline[1])) * 2.0 * a.fwhm_eV
                b /= channel
                sig = n / np.sqrt(n + 2.0 * max(b, 0.0)) if n > 0 else 0.0
                if sig < LIST_COUNTING_SIGMA:
                    continue
                faint = bool(sig < MIN_COUNTING_SIGMA)
            elif a.predicted_intensity < noise:
                continue
        if x_range is not None and not x_range[0] <= a.energy_eV <= x_range[1]:
            continue
        if np.any(np.abs(lab - a.energy_eV) <= half) or np.any(np.abs(x - a.energy_eV) <= half):
            continue
        counts = (
            None
            if a.predicted_intensity is None
            else float(1.0645 * a.predicted_intensity * a.fwhm_eV / channel)
        )
        same = rows[faint]
        if same and a.energy_eV - same[-1]["energy_range_eV"][1] <= half:
            r = same[-1]
            r["energy_range_eV"][1] = float(a.energy_eV)
            r["kinds"] = ",".join(sorted(set(r["kinds"].split(",")) | {a.kind}))
            if a.origin not in r["origin"]:
                r["origin"] += "; " + a.origin
            if counts is not None:
                r["expected_counts"] = (r["expected_counts"] or 0.0) + counts
            continue
        same.append(
            {
                "energy_eV": float(a.energy_eV),
                "energy_range_eV": [float(a.energy_eV), float(a.energy_eV)],
                "kinds": a.kind,
                "origin": a.origin,
                "expected_counts": counts,
                "faint": faint,
            }
        )
    out = rows[False] + rows[True]
    for r in out:
        r["energy_eV"] = 0.5 * (r["energy_range_eV"][0] + r["energy_range_eV"][1])
    return sorted(out, key=lambda r: r["energy_eV"])


#: Predicted escape and sum peaks are listed down to this significance (two
#: thirds of the 3σ detection limit: enough to carry a weak line over it),
#: marked ``faint`` below :data:`MIN_COUNTING_SIGMA` (reasoning in
#: :func:`_without_peak`; common practice, no source).
LIST_COUNTING_SIGMA: float = 2.0


def prepare_energy_peaks(
    peaks: PeakList,
    instrument: Instrument | None,
    reference: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None,
    apply_scale: bool | None = None,
) -> tuple[PeakList, XrayPreparation]:
    """Apply the X-ray physics to an energy-axis peak list (see the module docstring).

    Parameters
    ----------
    peaks : PeakList
        Observed peaks on an energy axis (eV).
    instrument : Instrument or None
        The instrument; the documented default (with a warning) when ``None``.
    reference : (species label, energy_eV, rel_intensity) arrays, optional
        Reference lines for the energy-scale check; no check without them.
    apply_scale : bool or None
        The check's correction: applied when significant (None, the
        default), whenever it has pairs (True), never (False; it is still
        reported).

    Returns
    -------
    (PeakList, XrayPreparation)
    """
    assumed = instrument is None
    inst = instrument or DEFAULT_INSTRUMENT
    if peaks.extra.get("xray_prepared") if isinstance(peaks.extra, dict) else False:
        raise ValueRangeError(
            "this peak list was already prepared for X-ray matching",
            "pass the original peak list",
        )
    t = peaks.table
    col = peaks.position_column
    x = peaks.positions
    inten = peaks.intensities
    snr = (
        t["snr"].cast(pl.Float64).fill_null(np.nan).to_numpy()
        if "snr" in t.columns
        else np.full(x.size, np.nan)
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        noise = np.where(np.isfinite(snr) & (snr > 0), inten / snr, np.nan)
    fcol = FWHM_COLUMN["energy"]
    w_obs = (
        t[fcol].cast(pl.Float64).fill_null(np.nan).to_numpy()
        if fcol in t.columns
        else np.full(x.size, np.nan)
    )
    w_det = fwhm_eV(x, inst)
    channel = channel_width(peaks)
    weak = not_significant(peaks, x, inten, w_det, channel)
    # Centres from a fit of the detector's line shape, not the peak's top
    # channels (workbench.xray.centroid): a weak peak's maximum wanders.
    x, x_sigma = fitted_peak_centres(peaks, x, w_det, weak[0])
    with np.errstate(divide="ignore", invalid="ignore"):
        snr = np.where(np.isfinite(weak[1]), weak[1], snr)
        noise = np.where(np.isfinite(snr) & (snr > 0), inten / snr, np.nan)
    dl = float(np.nanmedian(noise)) if np.any(np.isfinite(noise)) else 0.0
    real_i = np.where(weak[0], 0.0, inten)  # noise maxima cause no artefacts

    def artefacts_at(pos: np.ndarray) -> tuple[list, pl.DataFrame]:
        a = predict_artefacts(
            pos, real_i, inst, fwhm_obs_eV=w_obs, channel_eV=channel, min_intensity=dl
        )
        return a, label_peaks(pos, inten, noise, a)

    arts, labels = artefacts_at(x)
    # Energy scale from element lines only: artefact peaks (a Compton peak is
    # broad and shifted) and noise maxima are left out of the pairs.
    usable = ~weak[0]
    usable[labels["peak"].to_numpy()] = False
    snr_use = np.where(usable, snr, np.nan)
    o, r, s, names = anchor_pairs(x, snr_use, w_det, reference)
    scale = fit_energy_scale(o, r, s, names)
    if scale.n_pairs and (scale.significant if apply_scale is None else apply_scale):
        x = scale.correct(x)
        scale = EnergyScale(**{**scale.__dict__, "applied": True})
        arts, labels = artefacts_at(x)
    drop = weak[0].copy()
    new_i = np.array(inten, dtype=np.float64, copy=True)
    for row in labels.iter_rows(named=True):
        if row["explained"]:
            drop[row["peak"]] = True
        else:
            new_i[row["peak"]] = row["residual_intensity"]
    labels = labels.filter(~pl.col("peak").is_in(np.flatnonzero(weak[0]).tolist()))
    if drop.all():
        raise InsufficientDataError(
            "every peak is explained as tube scatter, escape, pile-up sum or argon from air",
            "there are no element lines to match; check the measurement (blank or no sample?)",
        )
    new = t.with_columns(
        pl.Series(col, x),
        pl.Series("intensity", new_i),
        pl.Series("fwhm_measured_eV", w_obs),
        pl.Series(fcol, fwhm_eV(x, inst)),
    )
    if "snr" in t.columns:
        with np.errstate(divide="ignore", invalid="ignore"):
            new = new.with_columns(pl.Series("snr", np.where(noise > 0, new_i / noise, snr)))
    new = new.with_columns(
        pl.Series("snr_channel", channel_snr(peaks, x, new_i)),
        pl.Series("position_sigma_eV", x_sigma),
    )
    new = new.filter(pl.Series(~drop))
    extra = dict(peaks.extra) if isinstance(peaks.extra, dict) else {}
    extra["xray_prepared"] = True
    spectrum = None
    sp = extra.pop("spectrum", None)  # per-channel arrays: kept here, not in the result
    base = extra.get("baseline")
    if sp is not None and base is not None and np.size(base) == np.size(sp[1]):
        b = np.asarray(base, dtype=np.float64)
        spectrum = (
            scale.correct(np.asarray(sp[0], dtype=np.float64))
            if scale.applied
            else np.asarray(sp[0], dtype=np.float64),
            np.asarray(sp[1], dtype=np.float64) - b,
            b,
        )
    if "baseline" in extra:  # per-channel array: not needed downstream, and large
        extra.pop("baseline")
        extra["channel_eV"] = channel
    out = PeakList(new, peaks.axis, peaks.medium, peaks.source, peaks.mode, extra)
    prep = XrayPreparation(inst, assumed, labels, artefact_table(arts), scale)
    xr = peaks.extra.get("x_range") if isinstance(peaks.extra, dict) else None
    # Predicted artefacts without a peak of their own are listed from every
    # significant peak as parent, whatever its assignment, down to what the
    # peak finder could have separated (not only the predictions above the
    # median noise that may explain a peak): every sum and escape peak an
    # analyst could see in the spectrum is named.
    listable = predict_artefacts(
        x, real_i, inst, fwhm_obs_eV=w_obs, channel_eV=channel, min_intensity=0.0
    )
    base_curve = None
    b_arr = peaks.extra.get("baseline") if isinstance(peaks.extra, dict) else None
    if xr is not None and b_arr is not None and np.size(b_arr) > 1 and np.min(b_arr) >= 0:
        base_curve = (
            np.linspace(float(xr[0]), float(xr[1]), np.size(b_arr)),
            np.asarray(b_arr, dtype=np.float64),
        )
    prep.unresolved = _without_peak(
        listable,
        labels,
        x[~weak[0]],
        channel,
        dl,
        (float(xr[0]), float(xr[1])) if xr else None,
        base_curve,
    )
    prep.spectrum = spectrum
    if assumed:
        prep.warnings.append(
            {
                "kind": "instrument_assumed",
                "message": "no instrument description was given: assumed a silicon-drift unit "
                f"with a {inst.anode} tube at {inst.tube_kV:g} kV, {inst.fwhm_MnKa_eV:g} eV FWHM "
                f"at Mn Kα and an {inst.atmosphere} path; give --instrument FILE for yours",
                "elements": [],
                "lines": [],
            }
        )
    n_art = int(labels["explained"].sum()) if labels.height else 0
    if n_art:
        kinds = sorted(
            {k for ks in labels.filter(pl.col("explained"))["kinds"] for k in ks.split(",")}
        )
        prep.warnings.append(
            {
                "kind": "artefact_peaks",
                "message": f"{n_art} peak(s) are instrument artefacts "
                f"({artefact_kind_label(','.join(kinds))}) and are "
                "not used as evidence for any element; see the artefact list",
                "elements": [],
                "lines": [],
            }
        )
    if scale.applied:
        prep.warnings.append(
            {
                "kind": "energy_scale",
                "message": f"energy scale corrected by {scale.max_correction_eV:+.0f} eV at most "
                f"(offset {scale.offset_eV:+.1f} ± {scale.offset_uncertainty_eV:.1f} eV, gain "
                f"{scale.gain:.5f}) from {scale.n_pairs} unambiguous strong line(s); "
                "recalibrate the instrument",
                "elements": [],
                "lines": [],
            }
        )
    return out, prep
