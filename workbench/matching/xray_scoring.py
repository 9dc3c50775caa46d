"""X-ray terms of the evidence model and the X-ray class rules.

Split from :mod:`workbench.matching.scoring` (which calls these functions
and sits above this module): the general model (chance probability,
missing-line penalty, net evidence, classes) is described there.

X-ray rules (``x-ray`` source model on an energy axis only; optical results
are untouched). Line energies are known to a few eV and the energy scale is
checked (:mod:`workbench.xray.energy_scale`), and intra-family intensity
ratios are predicted to about 0.2 dex, so closeness and ratio agreement are
evidence a coincidence rarely produces. Added to E (decades):

position agreement
    per found, unique, counted group: log10[(1 − ε)·W·φ(δ/σ)/σ + ε], δ the
    peak's offset from where the group's blend peaks at the detector
    resolution (:func:`workbench.matching.xray_evidence.group_blend_maxima`), σ the
    position uncertainty (:func:`workbench.matching.xray_evidence.xray_terms`:
    residual calibration 10 eV, tabulation 2 eV, the shift of the blend's
    maximum under the model's intensity-ratio uncertainty, and the
    wandering of a noisy peak's maximum), W = 2·tolerance + span the width
    over which a chance peak would have been accepted (uniform), ε the loss
    probability (a peak displaced by something outside the model). At most
    about +0.7, at least −0.7 per group.
ratio agreement
    per such group beyond the anchor (the one predicted strongest):
    r = log10(I/I_anchor) − log10(pred/pred_anchor), σ_r² = σ_model² +
    (0.434/SNR)² + (0.434/SNR_anchor)², a chance peak's height uniform in
    log over R decades (from 30 % of the prediction to the highest peak):
    log10[(1 − ε)·R·φ(r/σ_r)/σ_r + ε].
sole explanation
    +log10(1/0.05) = 1.3 when the family's main group is found, unique (no
    plausible species competes for its peak), within 2σ of its line, on a
    peak of at least 10σ: the peak must come from some line, and this is the
    only plausible one; 0.05 (:data:`XRAY_OUTSIDE_PROBABILITY`) is the chance
    that such a peak comes from outside the line table and artefact model.
    "10σ" is the peak's counting significance N/√(N + 2B), its own net and
    baseline counts (:mod:`workbench.xray.prepare`): whether a peak is real
    is a question of its counts. The engine's other SNR, height over the
    median noise of all peaks, is the wrong measure here: strong peaks
    inflate that median (the soil case's Zn Kα read 6 there and 12–16 in
    counts), so the rule never fired on the trace lines it is meant for.
    Nor is the counting significance the measure of how far a peak's
    maximum wanders: that is the height over one channel's counting noise,
    h/√(h + b) (:func:`workbench.matching.xray_evidence.xray_terms`; forward-
    model check, 30 seeds of the soil case at 130 eV: the maxima of Zn, Sr,
    Zr, Mn and Ti Kα scatter by 0.6–0.7 × the σ it gives, Ti Kα by 5.5 eV
    where the median-noise SNR gave 3.6 eV).
family support
    an established family of the same element that predicts this family's
    total intensity (:mod:`workbench.matching.joint`) makes E at least that
    family's E (a floor, never more).

Class changes on the energy axis: "probable" may rest on one found group
when the main group is found and unique (single-group families such as
Al K, Si K at EDS resolution); "possible" needs the main group found and not
explained by a better species, and E ≥ 0 (:data:`XRAY_POSSIBLE_DEX`).
"Established" needs two found groups, or a family that is probable and
whose main group is the *sole explanation* above (the only plausible line
of a peak of at least 10σ, within 2σ of it): such a peak is surely real and
surely not an artefact (labelled before matching), so the look-elsewhere
correction, which asks whether some species would fit a chance peak, does
not apply to it; what remains is that the family's other lines and its
element's other families agree, which "probable" on the net evidence says.

Shared peak. The sole-explanation rule cannot fire for a main line that
shares an unresolved peak with another family's (S Kα 2308 eV under Pb Mα
2346 eV: "unique" fails by construction), although the spectrum fit of
:mod:`workbench.matching.xray_overlap` may show that the family's own part of
the peak is surely there. The question is the same — is *this family's share*
surely real, and is this family the only plausible source of it — asked of
the fitted share instead of the peak. A family whose main group a better
family took, and which that fit settled (needed, the partners needed too),
is a sole explanation when (:func:`xray_share_sole`, figures from
:func:`workbench.xray.overlap.share_test`):

* its share is significant against every modelled error: fitted amplitude
  ≥ :data:`XRAY_SHARE_SIGMA` (5) × its 1σ from the fit's covariance with
  Poisson weights *and* the 25 % pattern and 5 % line-shape errors
  (:mod:`workbench.xray.overlap`). Those errors are there so that a family
  cannot be fitted to absorb the partner's mis-tabulated ratios or its
  not-quite-Gaussian shape; 5σ with them in the budget is the discovery
  standard. The counting noise alone is not the limit (S K at 50–130σ on
  counts): the systematic terms are, so the classical 10σ on counts
  (:data:`XRAY_SOLE_SNR`) is asked of the share too, and is easily met;
* on two readings of the energy scale: the lines at their tabulated
  energies, and all moved by the common offset (±20 eV, what the scale check
  leaves uncorrected) that fits best; the smaller significance counts. A
  share 38 eV from a strong line mimics that line moved or broadened: a
  sulfur-free Pb M spectrum whose scale reads 20 eV low needs S K at 6–8σ at
  the tabulated energies (0σ once moved), one 10 % broader than the
  instrument's FWHM at up to 4σ once moved (2σ fixed). The best offset must
  lie inside the range (the lines' positions agree with the spectrum);
* no other family could take the share: the fit is repeated with every
  family that has a line (≥ 0.1 of its strongest) within one FWHM of the main
  line (its rivals), observed on the channels within a FWHM of every line
  ≥ 1 % of its family's strongest (a rival is refuted by its weaker lines,
  Mo Lℓ for Mo L against S K). The significance above is the one with every
  rival free in the fit: a rival that could take the share shares its
  covariance and lowers it (S K against Mo L alone, on the channels of
  lines ≥ 0.1 only, 2.7σ; with Mo Lℓ's channels, 8σ). Those channels reach
  as far as the rivals' 1 % lines (Th M's and U M's, 3.4–4.7 keV), so every
  family called probable or better with a strong line there is fitted too
  (a present family's peak that nothing in the fit models is taken by
  whatever fitted family reaches it: Th M and U M took Sb L's and Ba L's
  counts in the gunshot residue at FWHM 180 eV, the fit's χ² was 21,000 on
  215 channels and its best offset sat on the −20 eV edge; with Sb L and
  Ba L in the fit, 600 on 458 channels at −2.5 eV). Channels that hold an
  artefact (escape, sum, scattered tube lines, argon) stay in the fit as
  upper bounds, as artefact counts are not negative: dropping them let Th M,
  whose main line (2996 eV) falls under argon Kα and scattered Rh Lβ, be
  fitted at ten times the counts there and take part of S Kα with its
  2323 eV line (12 % of its main line);
* no channel within half a FWHM of the main line holds an artefact
  (escape, sum, scatter): the share is measured, not inferred from the
  family's weaker lines.

Then, like the classical rule, "probable" on the net evidence (the fit
floors it at −log10 of its corrected chance) becomes "established". An absent
family fitted at zero, or within its errors, is never a sole explanation;
nor is one that the partner's modelled mismatches could make (worst 1.9σ in
tests/xray/test_share.py). S K in the gunshot-residue cases of
tests/xray/cases.py (forward model, seeds 20261202 and 7): 7.4–7.5σ at FWHM 130 eV, 7.8–8.4σ
at 180 eV, where S Kα is 0.4 FWHM from Pb Mα.


Missing groups on the energy axis cost the sum of their single-line terms
log10 P(not seen | present) (:func:`xray_missing_penalty_dex`), plus the
element's missing higher-energy family (:mod:`workbench.matching.joint`).
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = [
    "XRAY_OUTSIDE_PROBABILITY",
    "XRAY_POSSIBLE_DEX",
    "XRAY_SHARE_SIGMA",
    "XRAY_SOLE_DEX",
    "XRAY_SOLE_SNR",
    "xray_agreement",
    "xray_level",
    "xray_main_found_and_sole",
    "xray_missing_penalty_dex",
    "xray_share_sole",
]

#: X-ray "possible" floor: net evidence for, not against (common practice, no source).
XRAY_POSSIBLE_DEX: float = 0.0

#: X-ray: probability that a significant peak left after the artefact
#: labelling comes from outside the reference set and the artefact model
#: (diffraction peak, unpredicted sum, unlisted line): common practice, no
#: source (about one peak in twenty of a routine spectrum).
XRAY_OUTSIDE_PROBABILITY: float = 0.05
#: Evidence (decades) when a family's main line is the only plausible
#: explanation of a significant peak: −log10 of that probability.
XRAY_SOLE_DEX: float = float(-np.log10(XRAY_OUTSIDE_PROBABILITY))
#: Peak significance a sole explanation needs: the counting significance
#: N/√(N + 2B) of the peak's own net and baseline counts (``_sole``; the
#: height over the median peak noise where counts are not known) of at least
#: 10σ, twice the usual 5σ discovery threshold, so that the peak is surely
#: not noise nor a fluctuation of a neighbour's tail (common practice, no
#: source).
XRAY_SOLE_SNR: float = 10.0
#: Significance a family's fitted share of a blend needs to be the sole
#: explanation of that share (module docstring, "shared peak"): its amplitude
#: over a 1σ that holds the pattern and line-shape errors besides the counts,
#: the smaller on two readings of the energy scale. 5σ, the discovery
#: standard where the systematic errors are in the budget (common practice,
#: no source); the modelled mismatches of an absent family's partner
#: (tests/xray/test_share.py: scale 20 eV off, FWHM 10 % off, 5–10 % tails)
#: reached 1.9σ; S K beside Pb M in gunshot residue at FWHM 130 eV, 8σ.
XRAY_SHARE_SIGMA: float = 5.0


def _mixture_lr_dex(z: np.ndarray, sigma: np.ndarray, width: np.ndarray, eps: float) -> np.ndarray:
    """log10 of [(1 − ε)·width·φ(z)/σ + ε]: Gaussian agreement vs a uniform chance value."""
    dens = np.exp(-0.5 * z * z) / (np.sqrt(2.0 * np.pi) * sigma)
    return np.log10((1.0 - eps) * width * dens + eps)


def xray_agreement(g: dict[str, Any], use: np.ndarray, *, loss_probability: float) -> float:
    """Position and ratio agreement (decades) of found unique groups (X-ray only).

    Position: per group, δ = observed − line with uncertainty σ_pos; a chance
    peak falls anywhere in the window W (uniform), so the likelihood ratio is
    (1 − ε)·W·φ(δ/σ)/σ + ε (ε = ``loss_probability``, the general model's
    :data:`workbench.matching.scoring.LOSS_PROBABILITY`: a peak displaced by
    something outside the model). Ratio: per group beyond the anchor (the
    one predicted strongest), r = log10(I/I_anchor) − log10(pred/pred_anchor)
    with σ_r² = σ_model² + (0.434/SNR)² + (0.434/SNR_anchor)²; a chance peak's
    height is uniform in log over ``log_range`` decades, so the ratio is
    (1 − ε)·R·φ(r/σ_r)/σ_r + ε. Adds :data:`XRAY_SOLE_DEX` when the main
    group is a sole explanation (:func:`xray_main_found_and_sole`).

    Parameters
    ----------
    g : dict
        The species' group arrays (:mod:`workbench.matching.evidence`).
    use : numpy.ndarray of bool
        The found, unique groups counted in the chance probability.
    loss_probability : float
        ε (passed in: this module sits below :mod:`workbench.matching.scoring`).

    Returns
    -------
    float
        The agreement in decades.
    """
    if not np.any(use):
        return 0.0
    total = float(
        np.sum(
            _mixture_lr_dex(
                g["delta"][use] / g["sigma_pos"][use],
                g["sigma_pos"][use],
                g["window"][use],
                loss_probability,
            )
        )
    )
    inten = g["obs_intensity"]
    ok = (
        use & g["known"] & np.isfinite(inten) & (inten > 0) & ~g["saturated"] & (g["predicted"] > 0)
    )
    if np.sum(ok) >= 2 and g.get("dl") is not None:
        idx = np.flatnonzero(ok)
        a = idx[int(np.argmax(g["predicted"][idx]))]
        rest = idx[idx != a]
        snr = 3.0 * inten / g["dl"]
        r = np.log10(inten[rest] / inten[a]) - np.log10(g["predicted"][rest] / g["predicted"][a])
        sig = np.sqrt(g["sigma"][rest] ** 2 + (0.434 / snr[rest]) ** 2 + (0.434 / snr[a]) ** 2)
        total += float(
            np.sum(_mixture_lr_dex(r / sig, sig, g["log_range"][rest], loss_probability))
        )
    known_pred = np.where(g["known"], g["predicted"], -np.inf)
    if _sole(g, use, int(np.argmax(known_pred))):
        total += XRAY_SOLE_DEX
    return total


def _sole(g: dict[str, Any], use: np.ndarray, main: int) -> bool:
    """Whether group ``main`` is a sole explanation (module docstring).

    Counted, found and unique (``use``), within 2σ of the blend's maximum,
    on a peak whose counting significance N/√(N + 2B) (its own net and
    baseline counts, ``significance``; the height over the median peak noise,
    ``snr``, where that is not known) is at least :data:`XRAY_SOLE_SNR`.
    """
    signif = g.get("significance", g["snr"])
    return bool(
        main >= 0
        and use[main]
        and abs(g["delta"][main]) <= 2.0 * g["sigma_pos"][main]
        and signif[main] >= XRAY_SOLE_SNR
    )


def xray_missing_penalty_dex(p_miss: np.ndarray, missing: np.ndarray) -> float:
    """Missing-group penalty (decades): each missing group costs log10 P(not seen | present).

    Parameters
    ----------
    p_miss : numpy.ndarray
        m_i per group (:mod:`workbench.matching.scoring`).
    missing : numpy.ndarray of bool
        The groups that should be seen and have no peak.

    Returns
    -------
    float
        Σ log10 m_i over the missing groups.
    """
    return float(np.sum(np.log10(p_miss[missing])))


def xray_main_found_and_sole(g: dict[str, Any], use: np.ndarray) -> tuple[bool, bool]:
    """Whether the family's main group is found, and whether it is a sole explanation.

    The main group is the one predicted strongest among the known ones.
    Found: it has a peak not explained by a better species. Sole
    explanation: it is counted, found and unique (``use``), within 2σ of its
    line, on a peak of at least :data:`XRAY_SOLE_SNR` (module docstring).

    Parameters
    ----------
    g : dict
        The species' group arrays.
    use : numpy.ndarray of bool
        The found, unique groups counted in the chance probability.

    Returns
    -------
    tuple of bool
        ``(main_found, sole_explanation)``.
    """
    known_pred = np.where(g["known"], g["predicted"], -np.inf)
    main = int(np.argmax(known_pred)) if known_pred.size else -1
    main_found = bool(main >= 0 and g["found"][main] and not g["explained"][main])
    sole = _sole(g, use, main)
    # A shared peak: the spectrum fit's share test (xray_share_sole) set it.
    sole = sole or (main_found and bool(g.get("share_sole", False)))
    return main_found, sole


def xray_share_sole(
    z: float,
    z_counting: float,
    *,
    position_agrees: bool,
    channels_intact: bool,
) -> bool:
    """Whether a family's fitted share of a shared peak is its sole explanation.

    The "shared peak" rule of the module docstring, on the figures of
    :func:`workbench.xray.overlap.share_test`.

    Parameters
    ----------
    z : float
        The share's amplitude over its 1σ with counting, pattern and shape
        errors, the smaller on the two readings of the energy scale, every
        rival fitted too.
    z_counting : float
        The share's amplitude over its counting 1σ alone.
    position_agrees : bool
        The best common offset of the lines lies inside the profiled range.
    channels_intact : bool
        No channel within half a FWHM of the main line holds an artefact
        (where the fit bounds the families' model instead of fitting it).

    Returns
    -------
    bool
    """
    return bool(
        z >= XRAY_SHARE_SIGMA
        and z_counting >= XRAY_SOLE_SNR
        and position_agrees
        and channels_intact
    )


def xray_level(
    level: int,
    e: float,
    *,
    main_found: bool,
    k: int,
    n_unique: int,
    sole_explanation: bool,
    probable_dex: float,
) -> int:
    """The X-ray class changes of the module docstring, applied to the general class.

    Parameters
    ----------
    level : int
        The class from the general rules
        (:func:`workbench.matching.scoring.class_level`).
    e : float
        Net evidence (decades).
    main_found : bool
        Whether the main group is found and not explained by a better species.
    k : int
        Found groups counted in the chance probability.
    n_unique : int
        Unique peaks among them.
    sole_explanation : bool
        Whether the main group is the sole explanation of a ≥10σ peak.
    probable_dex : float
        The "probable" threshold (:data:`workbench.matching.scoring.PROBABLE_DEX`).

    Returns
    -------
    int
        The level (3 established … 0 not supported).
    """
    if level < 2 and e >= probable_dex and main_found and k >= 1 and n_unique >= 1:
        level = 2
    if level == 2 and sole_explanation:
        # X-ray: a family that is the only explanation of a ≥10σ peak (not an
        # artefact, not noise) on its main line, and probable on the net
        # evidence (its other lines and the element's other families agree),
        # is established even on one resolvable group (Si K, Al K).
        return 3
    if level >= 2:
        return level
    return 1 if e >= XRAY_POSSIBLE_DEX and main_found else 0
