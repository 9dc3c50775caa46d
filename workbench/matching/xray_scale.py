"""Energy scale of an XRF spectrum measured from what the engine decided.

The check before matching (``workbench.xray.prepare``) pairs peaks with
line families before anything is decided and, to stay clear of chance
alignments, accepts few pairs and only corrections above 20 eV. A handheld
unit that drifted by 10–20 eV goes unseen there, and near the edge of the
evidence's position allowance an absent family can fit the shifted lines
better than the true one. After the first full match the engine has
decided which families are present; their lines measure the scale far
better (:func:`matched_scale`):

* *anchors* are families called probable or established whose main group
  (the group of the highest predicted strength) is found on a peak of
  counting significance ≥ :data:`ANCHOR_MIN_SIGNIFICANCE` that no other
  family called probable or better also claims (a family called "possible"
  is not decided: chance L lines of rare earths near every strong K peak
  would otherwise leave no anchor at all). M families are no anchors:
  the position of their blend's maximum hangs on intra-family ratios
  (sub-shell vacancies, Coster-Kronig) too uncertain to place it to a few
  eV, and below ~3 keV peaks carry incomplete-charge tails (the same rule
  as before matching; common practice, no source);
* each anchor gives a pair for every found group on a peak no other
  family claims, with counting significance ≥ :data:`PAIR_MIN_SIGNIFICANCE`
  and within the group's half-window, and is used only with two such pairs
  or more (a family seen in one line only is not confirmed on this scale:
  that is how a wrong family fits a drifted line, e.g. Re Lα on the Zn Kα
  peak of a brass read 20 eV high, its Lβ shared with Pb Lα). A pair is
  the peak's measured centre against
  the group's blend maximum at the detector resolution (``blend_max``, what
  the evidence compares the peak with). Its σ is the evidence's position σ
  without the calibration allowance: √(line² + blend² + peak²), the
  tabulation error, the blend maximum's uncertainty under the model's
  intensity ratios and the peak centre's own error (a fitted centre's
  standard error, or the wander of a noisy peak's top), and a
  peak-shape allowance :data:`PAIR_SHAPE_SIGMA_EV`;
* :func:`workbench.xray.energy_scale.fit_matched_scale` fits the scale
  robustly by family (a wrong family called on a drifted scale is dropped
  as a whole, and a single family's reading does not stand against a
  majority) and decides significance.

Positions are taken back to the energies the spectrum *shows* when the
check before matching already corrected them, so the result is the whole
correction from the shown axis and supersedes that check's.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
import polars as pl

from workbench.datamodel import FWHM_COLUMN, PeakList
from workbench.matching.evidence import EvidencePass, ObservedLines
from workbench.matching.reference import ReferenceIndex
from workbench.matching.xray_evidence import XRAY_CALIBRATION_SIGMA_EV
from workbench.xray.energy_scale import (
    MATCHED_MIN_SIGNIFICANT_EV,
    EnergyScale,
    fit_matched_scale,
)

__all__ = [
    "ANCHOR_MIN_SIGNIFICANCE",
    "PAIR_MIN_SIGNIFICANCE",
    "PAIR_SHAPE_SIGMA_EV",
    "applied_before",
    "apply_matched_scale",
    "corrected_energy_peaks",
    "matched_scale",
    "scale_warning",
    "xray_record",
]

#: An anchor family's main line sits on a peak at least this significant in
#: counting statistics (the strong-peak bound of the check before matching;
#: common practice, no source).
ANCHOR_MIN_SIGNIFICANCE: float = 30.0
#: Other lines of an anchor give pairs from this counting significance on
#: (well above the 3σ detection limit, so the peak is the line's and not a
#: chance maximum; common practice, no source).
PAIR_MIN_SIGNIFICANCE: float = 10.0
#: Added in quadrature to each pair's σ (eV): a fitted peak centre
#: (:mod:`workbench.xray.centroid`) is the centre of the counts, the blend
#: maximum is the mode of the modelled lines; minor lines of the group and
#: a real detector's tail separate the two by a few eV that no counting
#: error covers. With fitted centres (σ down to 1 eV) the Pb L lines of
#: lead white read 20 eV high scattered 2–29 eV and the family was dropped
#: whole; 5 eV keeps them one reading (forward-model seeds 20261202 and 7;
#: common practice for a line-position systematic, no source).
PAIR_SHAPE_SIGMA_EV: float = 5.0


def matched_scale(
    obs: ObservedLines,
    ev_pass: EvidencePass,
    index: ReferenceIndex,
    before: EnergyScale | None = None,
) -> EnergyScale:
    """The energy scale from the decided families' lines (module docstring).

    Parameters
    ----------
    obs : ObservedLines
        The peaks as matched (energy axis, eV).
    ev_pass : EvidencePass
        The final evidence of the match, classes decided.
    index : ReferenceIndex
        The reference index of the match.
    before : EnergyScale, optional
        The check before matching; when it was applied, observed positions
        are taken back to the energies shown.

    Returns
    -------
    EnergyScale
        ``stage`` "matched families"; not applied.
    """
    claims = np.zeros(obs.position.size, dtype=np.int64)
    for ev in ev_pass.evidence.values():
        g = ev.groups
        if ev.level < 2 or not g or "delta" not in g:
            continue
        claims[np.unique(g["peak"][g["found"]])] += 1
    shown = obs.position
    if before is not None and before.applied:
        shown = (obs.position - before.offset_eV) / before.gain
    sig = (
        np.nan_to_num(obs.significance)
        if obs.significance is not None
        else np.zeros(obs.position.size)
    )
    o: list[float] = []
    r: list[float] = []
    s: list[float] = []
    fam: list[str] = []
    names: list[str] = []
    for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label):
        g = ev.groups
        if ev.level < 2 or not g or "blend_max" not in g or ev.label.endswith(" M"):
            continue
        main = int(np.argmax(g["strength"]))
        pk = g["peak"]
        if not (
            g["found"][main] and claims[pk[main]] == 1 and sig[pk[main]] >= ANCHOR_MIN_SIGNIFICANCE
        ):
            continue
        mine: list[tuple[float, float, float, str]] = []
        for i in np.flatnonzero(g["found"]):
            p = int(pk[i])
            delta = float(g["delta"][i])
            if (
                claims[p] != 1
                or sig[p] < PAIR_MIN_SIGNIFICANCE
                or not abs(delta) <= obs.half_window[p]
            ):
                continue
            # The evidence's position σ without its calibration allowance.
            s2 = (
                float(g["sigma_pos"][i]) ** 2
                - XRAY_CALIBRATION_SIGMA_EV**2
                + PAIR_SHAPE_SIGMA_EV**2
            )
            bm = float(g["blend_max"][i])
            mine.append((float(shown[p]), bm, float(np.sqrt(max(s2, 1e-6))), f"{bm:.0f} eV"))
        if len(mine) < 2:
            continue  # one line: the family is not confirmed on this scale
        for xo, bm, sd, nm in mine:
            o.append(xo)
            r.append(bm)
            s.append(sd)
            fam.append(ev.label)
            names.append(f"{ev.label} {nm}")
    return fit_matched_scale(np.array(o), np.array(r), np.array(s), np.array(fam), tuple(names))


def applied_before(peaks: PeakList, pre: Any) -> Any:
    """The energy-scale correction already in the positions (None when none)."""
    extra = peaks.extra if isinstance(peaks.extra, dict) else {}
    done = extra.get("xray_scale_applied")
    if done is not None:
        return done
    return pre if pre.applied else None


def apply_matched_scale(xscale: Any, before: Any, asked: bool | None) -> bool:
    """Whether the scale after matching is applied (a re-run on corrected energies).

    ``asked`` False never; True whenever measured; None when significant
    (:mod:`workbench.xray.energy_scale`) and, when positions are already
    corrected, when it differs from that correction by as much: somewhere
    over the pairs' span the difference exceeds the 5 eV floor and three
    standard uncertainties of the new reading (measured from the energies
    shown, so independent of the correction in place; its offset's
    uncertainty, which with a gain is the larger, extrapolated to zero
    energy). When the new reading is the more precise of the two (its
    offset uncertainty below that of the correction in place, both at zero
    energy), the floor alone decides: the better of two estimates of one
    drift is used wherever they differ by more than the floor. A check
    before matching rests on a few anchor peaks and often fits a gain from
    them; the reading after matching has every line of the decided
    families.
    """
    if asked is False or xscale.n_pairs == 0:
        return False
    if asked is True:
        return True
    if not xscale.significant and before is None:
        return False
    if before is None:
        return True
    grid = np.asarray(xscale.span_eV, dtype=np.float64)
    diff = np.abs(xscale.correct(grid) - before.correct(grid))
    u = xscale.offset_uncertainty_eV
    if u < before.offset_uncertainty_eV:
        return bool(np.max(diff) > MATCHED_MIN_SIGNIFICANT_EV)
    return bool(np.max(diff) > max(3.0 * u, MATCHED_MIN_SIGNIFICANT_EV))


def corrected_energy_peaks(peaks: PeakList, scale: Any) -> PeakList:
    """The peak list as given, its energies corrected (spectrum, range and widths with them)."""
    col = FWHM_COLUMN["energy"]
    table = peaks.table.with_columns(
        pl.Series(peaks.position_column, scale.correct(peaks.positions))
    )
    if col in table.columns:
        table = table.with_columns(pl.col(col) * scale.gain)
    extra = dict(peaks.extra)
    if extra.get("x_range") is not None:
        extra["x_range"] = tuple(float(v) for v in scale.correct(np.asarray(extra["x_range"])))
    for key in ("spectrum", "noise_curve"):
        if extra.get(key) is not None:
            extra[key] = (scale.correct(np.asarray(extra[key][0])), extra[key][1])
    if extra.get("sample_spacing") is not None:
        extra["sample_spacing"] = np.asarray(extra["sample_spacing"]) * scale.gain
    extra["xray_scale_applied"] = replace(scale, applied=True)
    return PeakList(table, peaks.axis, peaks.medium, peaks.source, peaks.mode, extra)


def scale_warning(scale: Any, how: str) -> dict[str, object]:
    """The warning that says which energy-scale correction was applied, and from what."""
    fams = sorted({nm.rsplit(" ", 2)[0] for nm in scale.lines})
    gain = f", gain {scale.gain:.5f} ± {scale.gain_uncertainty:.5f}" if scale.gain != 1.0 else ""
    left = f"; left out as inconsistent: {', '.join(scale.rejected)}" if scale.rejected else ""
    return {
        "kind": "energy_scale",
        "message": f"energy scale corrected by {scale.max_correction_eV:+.1f} eV at most "
        f"(offset {scale.offset_eV:+.1f} ± {scale.offset_uncertainty_eV:.1f} eV{gain}) from "
        f"{scale.n_pairs} lines of the families called ({', '.join(fams)}{left}), and the "
        f"match run again on corrected energies ({how}; --no-calibration turns this off); "
        "recalibrate the instrument",
        "elements": fams,
        "lines": [],
    }


def xray_record(xray: Any, xscale: Any) -> dict[str, Any]:
    """The result's ``xray`` record: the preparation and the scale after matching."""
    rec = xray.to_dict() | {"warnings": list(xray.warnings)}
    rec["energy_scale_matched"] = xscale.to_dict() if xscale is not None else None
    return rec
