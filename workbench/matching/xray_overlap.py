"""X-ray: unresolved overlaps between families settled by a fit of their line patterns.

After the joint explanation (:mod:`workbench.matching.joint`) a family whose
peak a better family took (Ba Lα under Ti Kα, S Kα under Pb Mα) is only
"explained" there: the ranking decided, not the spectrum. An XRF analyst
settles such an overlap on the lines that tell the families apart (Ti Kβ
against Ba Lβ1/Lγ1). :func:`settle_overlaps` does this for every family with
its main group explained by a better family of another element: the
spectrum itself (channels within a FWHM of the families' lines, net of the
baseline) is fitted by the line patterns of the families involved and of
every family called probable or better with a line in that window
(:func:`workbench.xray.overlap.decide_overlap_spectrum`: weighted
non-negative least squares, each line a Gaussian of the detector FWHM,
Poisson errors and the pattern uncertainty
:data:`workbench.xray.overlap.PATTERN_UNCERTAINTY`). When the explained
family is *needed*, z = amplitude / uncertainty ≥ :data:`NEEDED_SIGMA`, its
explained groups count as its own again, and unique (the fit has shared the
peak), its net evidence is at least −log10 Φ(−z) (the chance that the counts
would need it this much were it absent), and it is re-evaluated; when it is
not needed, the explanation stands. Either way the decision, with the
settling lines, is recorded for the interference warning
(:func:`annotate_warnings`). A family whose main line a better family took
is needed only if its share also holds in the share test
(:func:`workbench.xray.overlap.share_test`, :func:`_share_test`: its rivals
and the spectrum's other present families in the fit, artefact channels as
upper bounds, on two readings of the energy scale), at the same corrected
standard; the smaller of the two figures floors its evidence. A family
needed by the settling fit alone could be made by the partner's mismatch
(an absent S K beside Pb M whose scale reads 20 eV low, 4–6σ at the
tabulated energies, 0σ once moved). A family that passes is then asked the
"shared peak" question of :mod:`workbench.matching.xray_scoring` (is its
share surely real and is it the only plausible source of it); the answer,
in its group arrays (``share_sole``), can make it a sole explanation.

The decisions read the whole set of fits, not the order they are taken
in: every share test fits, beside the families already called, those that
any settling fit needs; and when a family whose main line was taken is
restored, each family that took the peak and is short of established is
floored in the same way, by its own need in that fit and its own share
test (its height and position there include the restored family's counts).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import special

from workbench.matching.evidence import EvidencePass, ObservedLines
from workbench.matching.reference import ReferenceIndex
from workbench.matching.scoring import evaluate
from workbench.matching.xray_scoring import xray_share_sole

__all__ = ["NEEDED_DEX", "annotate_warnings", "settle_overlaps"]

#: A family is needed beside the one that took its peak when the chance that
#: the counts would need it as much were it absent, corrected (Šidák) for
#: every fit tried in the spectrum, is at most 10^−3: the "established"
#: standard of :data:`workbench.matching.scoring.ESTABLISHED_DEX` (z ≈ 3.9
#: for 25 fits).
NEEDED_DEX: float = 3.0
#: Lines weaker than this part of their family's strongest are left out of
#: the patterns (they cannot settle anything at counting precision; common
#: practice, no source). Lines down to a thousandth stay in: a trace family
#: needed only at the per-cent level beside a strong one would otherwise take
#: the strong family's minor lines (Nb Lα at 2169 eV on Pb M3-N1, 0.5 % of
#: Pb Mα, in lead white).
_MIN_REL: float = 0.001


def _pattern(
    ev_pass: EvidencePass, index: ReferenceIndex, code: int
) -> tuple[np.ndarray, np.ndarray]:
    lines = np.flatnonzero((index.species == code) & ev_pass.in_range)
    w = np.nan_to_num(np.asarray(ev_pass.strengths, dtype=np.float64)[lines])
    if lines.size == 0 or not np.any(w > 0):
        return np.empty(0), np.empty(0)
    keep = w >= _MIN_REL * float(np.max(w))
    return index.position[lines[keep]].astype(np.float64), w[keep]


def settle_overlaps(
    ev_pass: EvidencePass,
    obs: ObservedLines,
    index: ReferenceIndex,
    instrument: Any,
    spectrum: tuple[np.ndarray, np.ndarray, np.ndarray],
    artefacts_eV: np.ndarray | None = None,
    *,
    sigma_dex: float,
    strong_fraction: float,
) -> list[dict[str, Any]]:
    """Fit explained families against the families that explained them (module docstring).

    Parameters
    ----------
    ev_pass : EvidencePass
        After :func:`workbench.matching.joint.explain_jointly`; changed in place.
    obs : ObservedLines
    index : ReferenceIndex
    instrument : workbench.xray.instrument.Instrument
        For the detector FWHM.
    spectrum : (energy_eV, net counts, baseline)
        The spectrum the peaks were found in (``XrayPreparation.spectrum``).
    artefacts_eV : numpy.ndarray, optional
        Artefact peaks (labelled or predicted): channels within a FWHM of
        them are left out of the fits (no element pattern models a tube
        line's scatter or an escape peak).
    sigma_dex, strong_fraction : float
        As for :func:`workbench.matching.scoring.evaluate`.

    Returns
    -------
    list of dict
        One decision per fitted set: ``family`` (the explained one),
        ``explained_by`` and ``families`` (label → needed, amplitude,
        uncertainty, settling lines in eV).
    """
    from workbench.xray.detector import fwhm_eV
    from workbench.xray.overlap import decide_overlap_spectrum

    if not obs.detection_limit or obs.position.size == 0:
        return []
    x, net, base = (np.asarray(v, dtype=np.float64) for v in spectrum)
    whole = (x, net, base)
    keep = np.ones(x.size, dtype=bool)
    if artefacts_eV is not None and np.size(artefacts_eV):
        a = np.asarray(artefacts_eV, dtype=np.float64)
        near = np.min(np.abs(x[:, None] - a[None, :]), axis=1)
        keep = near > fwhm_eV(x, instrument)
        x, net, base = x[keep], net[keep], base[keep]
    fits = []
    by_label = {ev.label: ev for ev in ev_pass.evidence.values()}
    patterns = {ev.label: _pattern(ev_pass, index, ev.code) for ev in ev_pass.evidence.values()}
    out: list[dict[str, Any]] = []

    def main_taken(ev) -> bool:
        # Only a family whose main group was taken: one the better family
        # explains by a minor line only is no overlap an analyst would settle.
        g = ev.groups
        if not ev.explained_by or not np.any(g["explained"]) or not ev.family:
            return False
        known = np.where(g["known"], g["predicted"], -np.inf)
        return bool(g["explained"][int(np.argmax(known))])

    cands = [
        ev for ev in sorted(ev_pass.evidence.values(), key=lambda v: v.label) if main_taken(ev)
    ]
    partners = {ev.label: list(ev.explained_by) for ev in cands}
    # Families whose main line a better family took (before the on-peak ones join):
    # their fits charge the pattern error relative to each family's strongest.
    taken = set(partners)
    # Families whose main groups sit on one peak, none explained there (Ba L
    # and Ti K when neither is probable enough to take the peak): each one
    # short of established is fitted against the others.
    on_peak: dict[int, list] = {}
    for ev in ev_pass.evidence.values():
        g = ev.groups
        if not ev.family or not ev.main_found or ev.label in partners:
            continue
        known = np.where(g["known"], g["predicted"], -np.inf)
        on_peak.setdefault(int(g["peak"][int(np.argmax(known))]), []).append(ev)
    for evs in on_peak.values():
        for ev in evs:
            others = [o.label for o in evs if o.element != ev.element]
            if ev.level < 3 and others:
                partners[ev.label] = others
                cands.append(ev)
    cands.sort(key=lambda v: v.label)
    cand_labels = set(partners)
    for ev in cands:
        fams = {ev.label: patterns[ev.label]}
        for lb in partners[ev.label]:
            if lb in by_label:
                fams[lb] = patterns[lb]
        if any(p[0].size == 0 for p in fams.values()):
            continue
        # Every family called probable or better with a line in the window,
        # and every other candidate there, is fitted too, so that a
        # neighbour's counts are not taken for either (Pr L must not take
        # Ba L's counts beside Ti K).
        strong = np.concatenate([e[r >= 0.1 * r.max()] for e, r in fams.values()])
        lo = float(strong.min()) - 2.0 * float(fwhm_eV(strong.min(), instrument))
        hi = float(strong.max()) + 2.0 * float(fwhm_eV(strong.max(), instrument))
        for other in ev_pass.evidence.values():
            e, r = patterns[other.label]
            if (
                (other.level >= 2 or other.label in cand_labels)
                and other.label not in fams
                and e.size
            ):
                if np.any((e >= lo) & (e <= hi) & (r >= 0.1 * r.max())):
                    fams[other.label] = (e, r)
        # The fit uses the channels within a FWHM of every fitted family's
        # strong lines, wherever they lie: a family called probable or
        # better with a strong line among those channels is fitted too, or
        # its peak is taken by whichever fitted family reaches it (Os Lα on
        # Cu Kβ in brass, fitted without Cu K).
        for _ in range(3):
            at = np.concatenate([e[r >= 0.1 * r.max()] for e, r in fams.values()])
            reach = fwhm_eV(at, instrument)
            added = False
            for other in ev_pass.evidence.values():
                e, r = patterns[other.label]
                if other.level < 2 or other.label in fams or not e.size:
                    continue
                es = e[r >= 0.1 * r.max()]
                gap = (
                    np.abs(es[:, None] - at[None, :])
                    - reach[None, :]
                    - fwhm_eV(es, instrument)[:, None]
                )
                if np.any(gap <= 0.0):
                    fams[other.label] = (e, r)
                    added = True
            if not added:
                break
        dec = decide_overlap_spectrum(
            x, net, fams, instrument, background=base, relative_patterns=ev.label in taken
        )
        fits.append((ev, dec, fams))
    n_fits = len(fits)

    def sidak_dex(v: float) -> float:
        # Šidák-corrected chance, in decades, that the counts would need a
        # family this much were it absent (one-sided normal tail).
        return float(-np.log10(max(-np.expm1(n_fits * np.log1p(-special.ndtr(-v))), 1e-30)))

    # Families each settling fit needs (before their share tests): present
    # by the spectrum's own verdict, so every share test fits them as it
    # fits the families already called, whatever order the fits are read
    # in (S K's share, tested before Ti K was restored, was fitted without
    # Ti K and its offset profile lost its free minimum).
    fit_needed = {
        ev.label
        for ev, dec, _ in fits
        for d in dec
        if d.family == ev.label
        and d.uncertainty > 0
        and sidak_dex(d.amplitude / d.uncertainty) >= NEEDED_DEX
    }

    def share(label: str, fams: dict) -> tuple[Any, bool]:
        # The share test with every family called or needed by a settling fit.
        called = {o.label for o in ev_pass.evidence.values() if o.level >= 2} | fit_needed
        return _share_test(label, fams, patterns, whole, ~keep, instrument, called)

    def reevaluate(e) -> None:
        evaluate(
            e,
            detection_limit=obs.detection_limit,
            sigma_dex=sigma_dex,
            n_tried=ev_pass.n_species_tried,
            strong_fraction=strong_fraction,
        )

    for ev, dec, fams in fits:
        involved = (ev.label, *partners[ev.label])
        z = {d.family: d.amplitude / d.uncertainty if d.uncertainty > 0 else np.inf for d in dec}
        dex = {f: sidak_dex(v) for f, v in z.items()}
        rec = {
            d.family: d.to_dict() | {"needed": dex[d.family] >= NEEDED_DEX}
            for d in dec
            if d.family in involved
        }
        out.append({"family": ev.label, "explained_by": partners[ev.label], "families": rec})
        # The fit shares the peak only when it keeps the families that took
        # it as well; one that swaps them contradicts the ranking and is
        # not trusted (Pr M for Al K on the shifted Al Kα peak).
        if rec[ev.label]["needed"] and all(rec[o]["needed"] for o in ev.explained_by if o in rec):
            floor = dex[ev.label]
            g = ev.groups
            if ev.label in taken:
                # A family whose main line a better family took is needed
                # only if its share holds on both readings of the energy
                # scale, its rivals and the spectrum's other families in the
                # fit (share_test): an absent S K beside Pb M whose scale
                # reads 20 eV low was needed at 4–6σ at the tabulated
                # energies alone (0σ once moved), Bi M beside Pb M read
                # 20 eV high at 10σ.
                test, intact = share(ev.label, fams)
                floor = min(floor, sidak_dex(test.z))
                # The reviewer sees the figure that decided (a settling fit
                # may need the family while its share does not hold).
                rec[ev.label]["share_sigma"] = round(float(test.z), 2)
                if floor < NEEDED_DEX:
                    rec[ev.label]["needed"] = False
                    continue
                g["share_sole"] = xray_share_sole(
                    test.z,
                    test.z_counting,
                    position_agrees=test.offset_free,
                    channels_intact=intact,
                )
            ev.overlap_floor_dex = min(floor, 30.0)
            g["explained"] = np.zeros_like(g["explained"])
            g["unique"] = g["unique"] | g["found"]
            took = [by_label[o] for o in ev.explained_by if o in by_label]
            ev.explained_by = []
            reevaluate(ev)
            if ev.label in taken:
                # The peak is shared, so the families that took it share it
                # too: their own height and position terms there include
                # the restored family's counts (Ba Lα under Ti Kα read
                # 37 eV off its line, −2.2 dex of agreement). Each
                # one short of established is floored by its own need in
                # the same fit and its own share test, as the restored one.
                for o in took:
                    if o.level >= 3 or not rec.get(o.label, {}).get("needed"):
                        continue
                    o_test, _ = share(o.label, fams)
                    o_floor = min(dex[o.label], sidak_dex(o_test.z))
                    rec[o.label]["share_sigma"] = round(float(o_test.z), 2)
                    if o_floor >= NEEDED_DEX:
                        prev = o.overlap_floor_dex
                        o.overlap_floor_dex = min(
                            o_floor if prev is None else max(prev, o_floor), 30.0
                        )
                        reevaluate(o)
    return out


def _share_test(
    label: str,
    fams: dict[str, tuple[np.ndarray, np.ndarray]],
    patterns: dict[str, tuple[np.ndarray, np.ndarray]],
    spectrum: tuple[np.ndarray, np.ndarray, np.ndarray],
    artefact: np.ndarray,
    instrument: Any,
    called: set[str],
) -> tuple[Any, bool]:
    """The share test of a settled family whose main line a better family took.

    The fit that settled it is repeated with every family that has a strong
    line (≥ 0.1 of its strongest) within one FWHM of its main line added
    (the rivals that could take its share), on two readings of the energy
    scale (:func:`workbench.xray.overlap.share_test`), on the whole
    spectrum: the artefact channels (``artefact``) bound the fit there, and
    every family in ``called`` (probable or better) that reaches the fit's
    channels is fitted too. Returns the test and whether no channel within
    half a FWHM of the main line holds an artefact (for the "shared peak"
    rule of :mod:`workbench.matching.xray_scoring`).
    """
    from workbench.xray.detector import fwhm_eV
    from workbench.xray.overlap import share_test

    e, r = fams[label]
    main_eV = float(e[int(np.argmax(r))])
    width = float(fwhm_eV(main_eV, instrument))
    fams = dict(fams)
    for other, (oe, orr) in patterns.items():
        # Rivals that could take the share: a strong line near the main line.
        if other not in fams and oe.size:
            strong = oe[orr >= 0.1 * orr.max()]
            if np.any(np.abs(strong - main_eV) <= width):
                fams[other] = (oe, orr)
    x, net, base = spectrum
    test = share_test(
        x,
        net,
        fams,
        instrument,
        label,
        background=base,
        artefact=artefact,
        present={lb: patterns[lb] for lb in sorted(called) if lb in patterns},
    )
    near = np.abs(x - main_eV) <= 0.5 * width
    return test, bool(near.any() and not np.any(artefact[near]))


def annotate_warnings(warnings: list[dict[str, Any]], decisions: list[dict[str, Any]]) -> None:
    """Add each fit's decision to the interference warning about the same families.

    A decision without a warning (the families' lines overlap only in the
    fit's wider view) gets a warning of its own (``xray_overlap``) when it
    needs at least two of the families (an interference to report; a fit
    that needs one of them only confirms the ranking). A family the share
    test was asked about shows its share's significance (``share_sigma``)
    beside the fit's amplitude: the two can disagree (a settling fit that
    needs an absent S K beside a Pb M whose scale reads 20 eV low, at 0σ in
    the share test), and the reviewer should see the figure that decided.
    """
    seen: set[frozenset[str]] = set()
    for d in decisions:
        names = set(d["families"])
        if frozenset(names) in seen:
            continue  # the same fit, reached from another of its families
        seen.add(frozenset(names))
        text = "; ".join(
            f"{fam} {'needed' if r['needed'] else 'not needed'} "
            f"({r['amplitude']:.0f} ± {r['uncertainty']:.0f}"
            + (
                f", settled on {', '.join(f'{e:.0f}' for e in r['settling_lines_eV'][:4])} eV"
                if r["settling_lines_eV"]
                else ""
            )
            + (
                f", its share of the common peak with the neighbouring families fitted and "
                f"the energy scale read two ways, {r['share_sigma']:.1f}σ)"
                if "share_sigma" in r
                else ")"
            )
            for fam, r in sorted(d["families"].items())
        )
        sentence = f" Decided by a fit of the families' line patterns to the spectrum: {text}."
        hit = False
        for w in warnings:
            if set(w.get("elements", [])) <= names and len(w.get("elements", [])) >= 2:
                if "decision" in w:
                    continue
                w["message"] += sentence
                w["decision"] = d["families"]
                hit = True
        if not hit and sum(r["needed"] for r in d["families"].values()) >= 2:
            warnings.append(
                {
                    "kind": "xray_overlap",
                    "message": f"{' and '.join(sorted(names))} overlap at this detector's "
                    f"resolution.{sentence}",
                    "elements": sorted(names),
                    "lines": [],
                    "decision": d["families"],
                }
            )
