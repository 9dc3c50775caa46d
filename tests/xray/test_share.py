"""The shared-peak route to "established" (workbench.xray.overlap.share_test,
workbench.matching.xray_scoring.xray_share_sole): S Kα under Pb Mα.

Two kinds of check. Synthetic spectra drawn from the fit's own line
patterns (Elam energies and heights via the shipped xray set, Gaussian lines
of the detector FWHM, Poisson counts) test the share test alone, with the
partner's pattern made wrong on purpose: a sulfur-free Pb M spectrum whose
energy scale reads 20 eV low, whose lines are 10 % broader than the
instrument's FWHM, or carry a 5 % low-energy tail, must not make S K a sole
explanation. The forward-model cases of tests/xray/cases.py (xraylib
fundamental parameters) go through the whole engine: S K in gunshot residue
at FWHM 130 eV is established; in lead white (no sulfur) it is not.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from tests.xray.cases import CASES, instrument, run_case
from workbench.datamodel import Spectrum
from workbench.matching import MatchParameters, match_peaks
from workbench.matching.xray_scoring import (
    XRAY_SHARE_SIGMA,
    xray_main_found_and_sole,
    xray_share_sole,
)
from workbench.peaks import find_peaks
from workbench.refdata import load_set
from workbench.xray.detector import fwhm_eV, snip_iterations_for
from workbench.xray.forward import forward_model
from workbench.xray.overlap import share_test


@pytest.fixture(scope="module")
def patterns():
    """S K, Pb M and Mo L line patterns (≥ 0.1 % of each family's strongest)."""
    from workbench.matching.engine import build_index
    from workbench.matching.expected import expected_strengths

    idx = build_index([load_set("xray")], "energy", None)
    e = expected_strengths(idx, 10_000.0, "emission", idx.position > 1000.0)
    out = {}
    for label in ("S K", "Pb M", "Mo L"):
        m = (idx.species == idx.species_names.index(label)) & np.isfinite(e) & (e >= 0.001)
        out[label] = (idx.position[m], e[m] / np.max(e[m]))
    return out


def _synthetic(
    patterns,
    fwhm,
    *,
    s_height,
    pb_height=9000.0,
    shift_eV=0.0,
    broaden=1.0,
    tail=0.0,
    seed=20261202,
):
    """Counts per 10 eV channel, 1.8–3.0 keV: Pb M (and S K) on a flat background.

    ``shift_eV``: every line appears this much away from its tabulated energy
    (a scale error); ``broaden``: the lines' true FWHM over the instrument's;
    ``tail``: a low-energy exponential shelf (150 eV decay) under each Pb line,
    this part of its height. Heights are GSR-like (S Kα ≈ a third of Pb Mα, as
    the forward-model residue fits give: 3100 beside 9300 counts per channel).
    """
    inst = instrument(fwhm)
    x = np.arange(1800.0, 3000.0, 10.0)
    bg = np.full(x.size, 400.0)
    lam = bg.copy()
    for label, height in (("Pb M", pb_height), ("S K", s_height)):
        e, r = patterns[label]
        e = e + shift_eV
        sig = broaden * fwhm_eV(e, inst) / 2.3548
        lam += np.sum(height * r * np.exp(-0.5 * ((x[:, None] - e) / sig) ** 2), axis=1)
        if label == "Pb M" and tail:
            d = e[None, :] - x[:, None]
            lam += np.sum(np.where(d > 0, tail * height * r * np.exp(-d / 150.0), 0.0), axis=1)
    y = np.random.default_rng(seed).poisson(lam).astype(np.float64)
    return x, y - bg, bg, inst


def _sole(test):
    return xray_share_sole(
        test.z, test.z_counting, position_agrees=test.offset_free, channels_intact=True
    )


@pytest.mark.parametrize("seed", [20261202, 7])
def test_sulfur_share_of_the_blend_is_sole(patterns, seed):
    # At FWHM 130 eV the share comes out at 8σ with every modelled error; at
    # 180 eV it is 2.5–5.6σ by seed (S Kα is 0.4 FWHM from Pb Mα there), so
    # only the sharper detector is asserted.
    x, net, bg, inst = _synthetic(patterns, 130.0, s_height=3000.0, seed=seed)
    t = share_test(x, net, patterns, inst, "S K", background=bg)
    assert t.z >= XRAY_SHARE_SIGMA and _sole(t)
    assert abs(t.offset_eV) <= 5.0  # the lines sit where tabulated


@pytest.mark.parametrize("fwhm", [130.0, 180.0])
@pytest.mark.parametrize(
    "mismatch",
    [
        {},
        {"shift_eV": -20.0},  # the scale check applies no correction under 20 eV
        {"broaden": 1.1},  # a FWHM model 10 % off
        {"tail": 0.05},  # incomplete charge collection, 5 % of the peak height
    ],
    ids=["exact", "scale-20eV", "fwhm+10%", "tail5%"],
)
def test_absent_sulfur_is_not_sole_beside_a_mismatched_partner(patterns, fwhm, mismatch):
    x, net, bg, inst = _synthetic(patterns, fwhm, s_height=0.0, **mismatch)
    t = share_test(x, net, patterns, inst, "S K", background=bg)
    assert not _sole(t), t


def test_scale_error_fools_the_fixed_energy_fit_but_not_the_share_test(patterns):
    # The nominal reading alone needs the absent S K when the scale reads
    # 20 eV low (the reason for the second reading): the test can fail.
    x, net, bg, inst = _synthetic(patterns, 130.0, s_height=0.0, shift_eV=-20.0)
    t = share_test(x, net, patterns, inst, "S K", background=bg)
    assert t.z_nominal >= XRAY_SHARE_SIGMA
    assert t.z < XRAY_SHARE_SIGMA and abs(t.offset_eV + 20.0) <= 5.0


def test_each_condition_of_the_rule_can_refuse():
    ok = {"position_agrees": True, "channels_intact": True}
    assert xray_share_sole(6.0, 40.0, **ok)
    assert not xray_share_sole(4.9, 40.0, **ok)  # within its systematic errors
    assert not xray_share_sole(6.0, 9.0, **ok)  # under 10σ on counts alone
    assert not xray_share_sole(6.0, 40.0, **(ok | {"position_agrees": False}))
    assert not xray_share_sole(6.0, 40.0, **(ok | {"channels_intact": False}))


def test_share_flag_needs_the_main_group_found():
    g = {
        "known": np.array([True]),
        "predicted": np.array([1.0]),
        "found": np.array([True]),
        "explained": np.array([False]),
        "delta": np.array([40.0]),
        "sigma_pos": np.array([10.0]),
        "snr": np.array([500.0]),
        "share_sole": True,
    }
    use = np.array([True])
    assert xray_main_found_and_sole(g, use) == (True, True)
    assert xray_main_found_and_sole(g | {"found": np.array([False])}, use) == (False, False)
    assert xray_main_found_and_sole(g | {"share_sole": False}, use) == (True, False)


@pytest.mark.parametrize("seed", [20261202, 7])
def test_sulfur_in_gunshot_residue_established(seed):
    # Truth: S 5 % beside Pb 30 % in the residue (tests/xray/cases.py, invented).
    _, rep = run_case("gsr_on_cotton", 130.0, seed)
    called = {e["species"]: e["verdict"] for e in rep["elements"]}
    assert called["S K"] == "established"


def _engine(energy_eV, counts, fit_fwhm):
    """Verdicts of the engine, run as tests.xray.cases.run_case runs it."""
    rep = _report(energy_eV, counts, fit_fwhm)
    return {e["species"]: e["verdict"] for e in rep["elements"]}


def _report(energy_eV, counts, fit_fwhm, apply_calibration=None):
    """The engine's report, run as tests.xray.cases.run_case runs it."""
    inst = instrument(fit_fwhm)
    keep = energy_eV >= 1000.0
    spec = Spectrum(energy_eV[keep], counts[keep], "energy", None)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # scipy width-0 warning on Poisson spikes
        peaks = find_peaks(spec, snip_iterations=snip_iterations_for(inst, 10.0))
    peaks.extra.setdefault("x_range", (float(spec.x[0]), float(spec.x[-1])))
    peaks.extra["spectrum"] = (spec.x, spec.y)
    params = MatchParameters(instrument=inst, apply_calibration=apply_calibration)
    return match_peaks(peaks, [load_set("xray")], params).report()


def _lead_white(true_fwhm):
    """Lead white on chalk (no sulfur; tests/xray/cases.py), forward model at this true FWHM."""
    return forward_model(
        CASES["lead_white_on_chalk"], instrument(true_fwhm), rng=np.random.default_rng(20261202)
    )


@pytest.mark.parametrize(
    ("fit_fwhm", "true_fwhm", "shift_eV"),
    [
        (130.0, 130.0, 0.0),
        (130.0, 143.0, 0.0),
        (130.0, 130.0, -20.0),
        (180.0, 180.0, 0.0),
        (180.0, 198.0, 0.0),
        (180.0, 180.0, -20.0),
    ],
)
def test_no_sulfur_established_in_lead_white(fit_fwhm, true_fwhm, shift_eV):
    # Lead white on chalk has no sulfur (tests/xray/cases.py); the spectrum is
    # also given a 10 % broader true FWHM, or a scale reading 20 eV low.
    fs = _lead_white(true_fwhm)
    called = _engine(fs.energy_eV + shift_eV, fs.counts, fit_fwhm)
    assert called.get("S K", "not supported") != "established"
