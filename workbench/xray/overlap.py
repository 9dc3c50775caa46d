"""Settle an XRF line overlap on the lines that tell the families apart.

Ba Lα (4466 eV) and Ti Kα (4511 eV), Pb Lα and As Kα, S K and Pb M and Mo L
are unresolved at any energy-dispersive detector. An analyst settles them on
the *other* lines of each family: Ti Kβ (4932 eV) against Ba Lβ1 (4828 eV)
and Ba Lγ1 (5531 eV). :func:`decide_overlap` does this quantitatively: each
family is a pattern of lines (energies and relative intensities), each line
seen as a Gaussian of the detector FWHM; the observed peak heights near the
families' lines are fitted as a non-negative sum of the patterns (weighted
non-negative least squares, :func:`scipy.optimize.nnls`), with a zero
observation (at the noise level) wherever a family predicts a line and no
peak was found. A family is *needed* when its fitted amplitude exceeds three
times its standard uncertainty. Relative intensities within a family are
uncertain under tube excitation and matrix absorption; each observation's
error includes :data:`PATTERN_UNCERTAINTY` of the observed height.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from workbench.xray.detector import fwhm_eV
from workbench.xray.instrument import Instrument

__all__ = [
    "PATTERN_UNCERTAINTY",
    "SHAPE_UNCERTAINTY",
    "SHARE_OFFSET_EV",
    "OverlapDecision",
    "ShareTest",
    "decide_overlap",
    "decide_overlap_spectrum",
    "share_test",
]

#: Relative uncertainty of a predicted line height within a family (common
#: practice, no source: tabulated ratios and matrix absorption differ by ~25 %).
PATTERN_UNCERTAINTY: float = 0.25
#: Relative uncertainty of the fitted line shape at each channel (the
#: detector response is not exactly Gaussian: low-energy tailing, a FWHM
#: model a few per cent off); charged to the fitted height once the
#: amplitudes are known (common practice, no source).
SHAPE_UNCERTAINTY: float = 0.05


#: Largest energy-scale offset :func:`share_test` profiles over: twice the
#: residual calibration uncertainty (10 eV; the energy-scale check applies no
#: correction under 20 eV, :mod:`workbench.xray.energy_scale`).
SHARE_OFFSET_EV: float = 20.0
#: Offset step of that profile: a small part of any line width (common
#: practice, no source).
_OFFSET_STEP_EV: float = 2.5
#: :func:`share_test` observes the channels within one FWHM of every line at
#: least this part of its family's strongest (not 0.1 as the settling fit):
#: an alternative family is refuted by its weaker lines where nothing is
#: seen (Mo Lℓ at 2015 eV, 4 % of Mo Lα, against Mo L taking S Kα's share;
#: common practice, no source).
_SHARE_MIN_REL: float = 0.01


@dataclass(frozen=True)
class OverlapDecision:
    """Outcome for one family.

    Attributes
    ----------
    family : str
        e.g. ``"Ti K"``.
    amplitude, uncertainty : float
        Fitted height of the family's strongest line and its 1σ.
    needed : bool
        amplitude > 3σ.
    settling_lines_eV : tuple of float
        The family's lines (relative intensity ≥ 0.1) where the other
        families predict less than a fifth of its own height: the lines that
        tell it apart.
    """

    family: str
    amplitude: float
    uncertainty: float
    needed: bool
    settling_lines_eV: tuple[float, ...]

    def to_dict(self) -> dict[str, object]:
        """JSON-friendly form."""
        return {
            "family": self.family,
            "amplitude": self.amplitude,
            "uncertainty": self.uncertainty,
            "needed": self.needed,
            "settling_lines_eV": list(self.settling_lines_eV),
        }


def _patterns(
    families: dict[str, tuple[np.ndarray, np.ndarray]],
) -> tuple[list[str], list[tuple[np.ndarray, np.ndarray]]]:
    names = list(families)
    pats = []
    for name in names:
        e, r = (np.asarray(v, dtype=np.float64) for v in families[name])
        keep = np.isfinite(e) & np.isfinite(r) & (r > 0)
        e, r = e[keep], r[keep]
        pats.append((e, r / np.max(r) if r.size else r))
    return names, pats


def _gauss_height(points: np.ndarray, e: np.ndarray, r: np.ndarray, instrument: Instrument):
    """Height at ``points`` of lines (e, r), each a Gaussian of unit peak height × r."""
    sig = fwhm_eV(e, instrument) / 2.3548
    return np.sum(r[None, :] * np.exp(-0.5 * ((points[:, None] - e[None, :]) / sig) ** 2), 1)


def _amplitude_errors(aw: np.ndarray, active: np.ndarray, n: int | None = None) -> np.ndarray:
    """1σ of each of the first ``n`` amplitudes (all by default) from the weighted design ``aw``.

    From the normal matrix of the columns left in the fit (a family fitted
    at zero gets its own-column error).
    """
    n = aw.shape[1] if n is None else n
    unc = np.empty(n)
    for k in range(n):
        cols = list(np.flatnonzero(active | (np.arange(aw.shape[1]) == k)))
        sub = aw[:, cols]
        try:
            cov = np.linalg.inv(sub.T @ sub)
            unc[k] = float(np.sqrt(max(cov[cols.index(k), cols.index(k)], 0.0)))
        except np.linalg.LinAlgError:  # identical patterns here: cannot be told apart
            unc[k] = np.inf
    return unc


def _solve(
    names: list[str],
    pats: list[tuple[np.ndarray, np.ndarray]],
    a: np.ndarray,
    obs: np.ndarray,
    noise: np.ndarray,
    instrument: Instrument,
    pattern_scale: float = 1.0,
    anchor: np.ndarray | None = None,
    details: dict[str, float | np.ndarray] | None = None,
    bound: np.ndarray | None = None,
) -> list[OverlapDecision]:
    """Weighted NNLS of the family columns ``a`` to ``obs``; decisions per family.

    The pattern error is that of each family's lines *relative to its
    strongest* (the anchor, column ``anchor``): the family's amplitude is
    fitted, so the anchor's own height carries no pattern error, only the
    other lines' heights relative to it do (:data:`PATTERN_UNCERTAINTY` of
    their fitted contribution). Charging the pattern error to the whole
    observed height made an unresolved blend unsettleable whenever one
    family was strong: S Kα (2308 eV) under Pb Mα (2346 eV), 49,000 counts
    beside 90,000, came out at 2.9σ although Pb Mβ (2444 eV) fixes Pb's
    share of the blend. ``pattern_scale`` multiplies the pattern error of
    each observation: √n when n observations share one line's pattern
    error (the channels across a line rise and fall together when its
    tabulated height is off). Without ``anchor`` the pattern error is
    charged to the larger of observed and fitted height (peak-list fits).
    With ``anchor``, the line shape's error (:data:`SHAPE_UNCERTAINTY` of the
    fitted height) is added once the amplitudes are known. ``details``, when
    given, receives the fit's χ² with its final errors (``chi2``) and each
    amplitude's 1σ from the counting noise alone (``counting``), for
    :func:`share_test`. ``bound`` marks observations that hold an
    artefact's counts besides the families' (an escape, sum or scattered
    tube peak, which no family pattern models): each gets a non-negative
    column of its own, so the families' model there may be anything up to
    the counts but not above them (the artefact's counts are not negative).
    """
    from scipy.optimize import nnls

    nf = a.shape[1]
    if bound is not None and np.any(bound):
        a = np.hstack([a, np.eye(obs.size)[:, np.asarray(bound, dtype=bool)]])
        if anchor is not None:
            anchor = np.hstack([anchor, a[:, nf:]])
    # The pattern error scales with the fitted heights; they need a first
    # fit, so fit a few times.
    model = obs
    coef = np.zeros(a.shape[1])
    for it in range(3):
        if anchor is None:
            pat = np.maximum(obs, model)
        elif it == 0:
            # First pass: no fitted amplitudes yet; the observed height
            # stands for every line, as in the peak-list fit.
            pat = obs
        else:
            pat = np.abs((a - anchor) @ coef)
        # The line-shape error is the families' (an artefact's column is free).
        shape = np.zeros_like(obs) if anchor is None or it == 0 else a[:, :nf] @ coef[:nf]
        err = np.sqrt(
            noise**2
            + (pattern_scale * PATTERN_UNCERTAINTY * pat) ** 2
            + (pattern_scale * SHAPE_UNCERTAINTY * shape) ** 2
        )
        err = np.maximum(err, 1e-12)
        aw, bw = a / err[:, None], obs / err
        coef, _ = nnls(aw, bw)
        model = a @ coef
    # 1σ of each amplitude: from the normal matrix of the families left in
    # the fit (a family fitted at zero gets its own-column error).
    active = coef > 0
    unc = _amplitude_errors(aw, active, nf)
    if details is not None:
        details["chi2"] = float(np.sum(((obs - model) / err) ** 2))
        details["counting"] = _amplitude_errors(a / noise[:, None], active, nf)
    out = []
    for k, name in enumerate(names):
        e, r = pats[k]
        own = coef[k] * r
        others = np.zeros(e.size)
        for j in range(len(names)):
            if j != k:
                others += coef[j] * _gauss_height(e, *pats[j], instrument)
        settle = tuple(float(v) for v in e[(r >= 0.1) & (others < 0.2 * np.maximum(own, 1e-12))])
        needed = bool(coef[k] > 3.0 * unc[k])
        out.append(OverlapDecision(name, float(coef[k]), float(unc[k]), needed, settle))
    return out


def decide_overlap(
    position_eV: np.ndarray,
    intensity: np.ndarray,
    noise: float,
    families: dict[str, tuple[np.ndarray, np.ndarray]],
    instrument: Instrument,
) -> list[OverlapDecision]:
    """Fit overlapping families to the observed peak heights (a peak list).

    The observation at each family line (relative intensity ≥ 0.1) is the
    spectrum's height there, rebuilt from the peak list (each peak a Gaussian
    of the detector FWHM): a line in the wing of a neighbour is seen at the
    height the wing has. A shoulder the peak finder did not resolve is lost;
    :func:`decide_overlap_spectrum` does not have that limit.

    Parameters
    ----------
    position_eV, intensity : numpy.ndarray
        Observed peaks (heights above the baseline).
    noise : float
        1σ noise of a peak height (the detection limit / 3).
    families : dict
        Family label → (line energies eV, relative intensities).
    instrument : Instrument
        For the detector FWHM.

    Returns
    -------
    list of OverlapDecision
        One per family, in the order given.
    """
    x = np.asarray(position_eV, dtype=np.float64)
    h = np.nan_to_num(np.asarray(intensity, dtype=np.float64), nan=0.0)
    names, pats = _patterns(families)
    pts = [e[r >= 0.1] for e, r in pats]
    pts_a = np.unique(np.round(np.concatenate(pts), 1)) if pts else np.empty(0)
    if pts_a.size == 0:
        return [OverlapDecision(n, 0.0, float("inf"), False, ()) for n in names]
    sig_x = fwhm_eV(x, instrument) / 2.3548
    obs = np.sum(h[None, :] * np.exp(-0.5 * ((pts_a[:, None] - x[None, :]) / sig_x) ** 2), 1)
    a = np.column_stack([_gauss_height(pts_a, e, r, instrument) for e, r in pats])
    return _solve(names, pats, a, obs, np.full(pts_a.size, float(noise)), instrument)


def decide_overlap_spectrum(
    energy_eV: np.ndarray,
    net_counts: np.ndarray,
    families: dict[str, tuple[np.ndarray, np.ndarray]],
    instrument: Instrument,
    *,
    background: np.ndarray | None = None,
    relative_patterns: bool = True,
) -> list[OverlapDecision]:
    """Fit overlapping families to the spectrum itself (what an analyst's fit does).

    Every channel within one FWHM of a family line (relative intensity
    ≥ 0.1) is an observation; its error is Poisson, √(net + background),
    and the pattern error (:data:`PATTERN_UNCERTAINTY`), which the channels
    across one line share: it is counted once per line by weighting it by
    √(channels per FWHM) in each channel (a channel-by-channel independent
    pattern error made a 0.3 % residual of a strong family's mis-tabulated
    line look like a needed family at 8σ).

    Parameters
    ----------
    energy_eV, net_counts : numpy.ndarray
        Channel energies and counts above the baseline.
    families : dict
        Family label → (line energies eV, relative intensities).
    instrument : Instrument
        For the detector FWHM.
    background : numpy.ndarray, optional
        The baseline that was subtracted (for the Poisson error).

    Returns
    -------
    list of OverlapDecision
        One per family, in the order given (amplitudes in counts per channel).
    """
    x = np.asarray(energy_eV, dtype=np.float64)
    y = np.asarray(net_counts, dtype=np.float64)
    bg = np.zeros_like(y) if background is None else np.asarray(background, dtype=np.float64)
    names, pats = _patterns(families)
    use = _fit_channels(x, pats, instrument)
    if not use.any():
        return [OverlapDecision(n, 0.0, float("inf"), False, ()) for n in names]
    return _spectrum_fit(x, y, bg, use, names, pats, instrument, relative_patterns)


def _fit_channels(
    x: np.ndarray,
    pats: list[tuple[np.ndarray, np.ndarray]],
    instrument: Instrument,
    min_rel: float = 0.1,
) -> np.ndarray:
    """Channels within one FWHM of a family line of relative intensity ≥ ``min_rel``."""
    use = np.zeros(x.size, dtype=bool)
    for e, r in pats:
        for ei in e[r >= min_rel]:
            use |= np.abs(x - ei) <= float(fwhm_eV(ei, instrument))
    return use


def _spectrum_fit(
    x: np.ndarray,
    y: np.ndarray,
    bg: np.ndarray,
    use: np.ndarray,
    names: list[str],
    pats: list[tuple[np.ndarray, np.ndarray]],
    instrument: Instrument,
    relative_patterns: bool = True,
    offset_eV: float = 0.0,
    details: dict[str, float | np.ndarray] | None = None,
    bound: np.ndarray | None = None,
) -> list[OverlapDecision]:
    """The fit of :func:`decide_overlap_spectrum` on channels ``use``.

    Every line is moved by ``offset_eV`` (an energy-scale offset,
    :func:`share_test`). ``bound`` (over all channels) marks those that
    hold an artefact's counts too: there the fit's model is only bounded by
    the counts (:func:`_solve`).
    """
    if offset_eV:
        pats = [(e + offset_eV, r) for e, r in pats]
    a = np.column_stack([_gauss_height(x[use], e, r, instrument) for e, r in pats])
    top = np.column_stack(
        [_gauss_height(x[use], e[r >= 1.0], r[r >= 1.0], instrument) for e, r in pats]
    )
    noise = np.sqrt(np.maximum(y[use] + bg[use], 1.0))
    channel = float(np.median(np.diff(x))) if x.size > 1 else 1.0
    per_line = float(np.sqrt(max(float(np.median(fwhm_eV(x[use], instrument))) / channel, 1.0)))
    return _solve(
        names,
        pats,
        a,
        y[use],
        noise,
        instrument,
        per_line,
        anchor=top if relative_patterns else None,
        details=details,
        bound=None if bound is None else np.asarray(bound, dtype=bool)[use],
    )


@dataclass(frozen=True)
class ShareTest:
    """How surely one family's share of an unresolved peak is real (:func:`share_test`).

    Attributes
    ----------
    family : str
        The family tested.
    z_nominal : float
        Its fitted amplitude over the amplitude's 1σ with every modelled
        error (counting, pattern, line shape), lines at their tabulated
        energies (the energy scale as checked).
    z_offset : float
        The same with every line moved by ``offset_eV``, the common offset
        of the best fit (lowest χ²).
    offset_eV : float
        That offset.
    z_counting : float
        The smaller of the two amplitudes over its 1σ from the counting noise
        alone: the share as a peak of its own.
    needed : tuple of str
        The fitted families needed (amplitude > 3σ) in either fit.
    offset_free : bool
        Whether the best offset lies inside the profiled range (not on its
        edge): the lines' positions agree with the spectrum.
    amplitudes : dict
        Every fitted family's amplitude (counts per channel of its strongest
        line) at the tabulated energies, the tested family's rivals and the
        present families added included.
    """

    family: str
    z_nominal: float
    z_offset: float
    offset_eV: float
    z_counting: float
    needed: tuple[str, ...]
    offset_free: bool
    amplitudes: dict[str, float] = field(default_factory=dict)

    @property
    def z(self) -> float:
        """The share's significance on both readings of the energy scale (the smaller)."""
        return min(self.z_nominal, self.z_offset)


def _z(amplitude: float, sigma: float) -> float:
    return amplitude / sigma if np.isfinite(sigma) and sigma > 0 else 0.0


def _share_families(
    x: np.ndarray,
    families: dict[str, tuple[np.ndarray, np.ndarray]],
    instrument: Instrument,
    present: dict[str, tuple[np.ndarray, np.ndarray]],
) -> tuple[dict[str, tuple[np.ndarray, np.ndarray]], np.ndarray]:
    """The families and channels of :func:`share_test` (its ``present`` parameter)."""
    families = dict(families)
    use = _fit_channels(x, _patterns(families)[1], instrument, _SHARE_MIN_REL)
    for _ in range(5):
        at = x[use]
        added = False
        for label, (e, r) in present.items():
            e, r = (np.asarray(v, dtype=np.float64) for v in (e, r))
            if label in families or not e.size or not at.size:
                continue
            strong = e[r >= 0.1 * np.max(r)]
            reach = fwhm_eV(strong, instrument)
            if np.any(np.abs(strong[:, None] - at[None, :]) <= reach[:, None]):
                families[label] = (e, r)
                added = True
        if not added:
            break
        use = _fit_channels(x, _patterns(families)[1], instrument, _SHARE_MIN_REL)
    return families, use


def share_test(
    energy_eV: np.ndarray,
    net_counts: np.ndarray,
    families: dict[str, tuple[np.ndarray, np.ndarray]],
    instrument: Instrument,
    family: str,
    *,
    background: np.ndarray | None = None,
    max_offset_eV: float = SHARE_OFFSET_EV,
    artefact: np.ndarray | None = None,
    present: dict[str, tuple[np.ndarray, np.ndarray]] | None = None,
) -> ShareTest:
    """One family's share of a blend, fitted on two readings of the energy scale.

    A family whose main line sits 38 eV below a strong partner's (S Kα under
    Pb Mα) looks, to first order, like the partner's peak moved down or
    broadened: a sulfur-free lead-white spectrum (forward model, FWHM
    130 eV) whose scale reads 20 eV low, within the calibration the scale
    check leaves alone, made the fit at the tabulated energies need S K at
    6σ, and one whose true FWHM is 10 % above the instrument's at 8σ. So the
    fit (:func:`decide_overlap_spectrum`, relative patterns) is done twice:
    at the tabulated energies, and with every line moved by the common
    offset, within ±``max_offset_eV``, that gives the lowest χ² (its own
    errors; the same channels for every offset; relative positions within
    and between families are tabulated to a few eV, the scale is not). The
    two readings fail differently (the moved fit let S K take a 5 % low-energy
    tail of the Pb M lines at 6σ, the fixed one at 1σ), so a share that is
    real must be significant on both: :attr:`ShareTest.z` is the smaller.

    Parameters
    ----------
    energy_eV, net_counts : numpy.ndarray
        Channel energies and counts above the baseline.
    families : dict
        Family label → (line energies eV, relative intensities); must hold
        ``family``.
    instrument : Instrument
        For the detector FWHM.
    family : str
        The family whose share is tested.
    background : numpy.ndarray, optional
        The baseline that was subtracted (for the Poisson error).
    max_offset_eV : float
        Half-width of the profiled offsets (:data:`SHARE_OFFSET_EV`).
    artefact : numpy.ndarray of bool, optional
        Channels that hold an artefact peak's counts besides the families'
        (escape, sum, scattered tube lines, argon). They stay in the fit as
        upper bounds: the families may predict anything up to the counts
        there, not more. Dropping them instead lets a rival whose main line
        falls there take the share with a minor line (Th M, main line at
        2996 eV under the argon and scattered Rh Lβ peak, fitted at ten
        times the counts there to take S Kα's share with Th M 2323 eV, 12 %
        of its main line; gunshot residue at FWHM 180 eV).
    present : dict, optional
        Families known to be in the spectrum (called probable or better),
        label → (line energies eV, relative intensities). Each one with a
        line of at least 0.1 of its strongest within a FWHM of the test's
        channels is fitted too (repeated, as each adds channels): the
        channels reach as far as the fitted families' 1 % lines, and a
        present family's peak there that nothing in the fit models is taken
        by whatever fitted family reaches it (Th M and U M took Sb L's and
        Ba L's counts at 3.4–4.6 keV in gunshot residue).

    Returns
    -------
    ShareTest
    """
    x = np.asarray(energy_eV, dtype=np.float64)
    y = np.asarray(net_counts, dtype=np.float64)
    bg = np.zeros_like(y) if background is None else np.asarray(background, dtype=np.float64)
    families, use = _share_families(x, families, instrument, present or {})
    names, pats = _patterns(families)
    k = names.index(family)
    if not use.any() or not pats[k][0].size:
        return ShareTest(family, 0.0, 0.0, 0.0, 0.0, (), False)
    n_step = int(np.floor(max_offset_eV / _OFFSET_STEP_EV + 1e-9))
    fits: dict[float, tuple[float, list[OverlapDecision], np.ndarray]] = {}
    for offset in _OFFSET_STEP_EV * np.arange(-n_step, n_step + 1):
        det: dict[str, float | np.ndarray] = {}
        dec = _spectrum_fit(
            x, y, bg, use, names, pats, instrument, True, float(offset), det, artefact
        )
        fits[float(offset)] = (float(det["chi2"]), dec, np.asarray(det["counting"]))
    best = min(fits, key=lambda o: (fits[o][0], abs(o)))
    nominal, moved = fits[0.0], fits[best]
    return ShareTest(
        family,
        _z(nominal[1][k].amplitude, nominal[1][k].uncertainty),
        _z(moved[1][k].amplitude, moved[1][k].uncertainty),
        best,
        float(
            min(_z(nominal[1][k].amplitude, nominal[2][k]), _z(moved[1][k].amplitude, moved[2][k]))
        ),
        tuple(d.family for i, d in enumerate(nominal[1]) if d.needed or moved[1][i].needed),
        bool(abs(best) < n_step * _OFFSET_STEP_EV),
        {d.family: d.amplitude for d in nominal[1]},
    )
