"""The share test's context (workbench.xray.overlap.share_test ``artefact`` and
``present``): S Kα under Pb Mα at FWHM 180 eV.

The fit of the share reaches as far as its rivals' 1 % lines (Th M, U M up to
4.7 keV), where other families present in the sample (Sb L, Ba L in gunshot
residue) have peaks; and its channels cross artefact peaks (Rh L scattered
from the tube, Ar K from the air path). Synthetic spectra drawn from the fit's
own line patterns (Elam energies and heights via the shipped xray set,
Gaussian lines of the detector FWHM, Poisson counts; heights invented,
GSR-like) check each part; the forward-model cases of tests/xray/cases.py
(xraylib fundamental parameters) check the whole engine.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.xray.cases import instrument, run_case
from tests.xray.test_share import _engine, _lead_white, _report
from workbench.matching.xray_scoring import xray_share_sole
from workbench.refdata import load_set
from workbench.xray.detector import fwhm_eV
from workbench.xray.overlap import share_test

#: Artefact peaks in the synthetic spectra: Rh Lα1 scattered from the tube
#: (2697 eV) and Ar Kα from the air path (2957.7 eV, as in
#: workbench.xray.artefacts; Deslattes et al. 2003, from memory), with
#: invented heights (counts per 10 eV channel) near the forward model's.
_ARTEFACTS = ((2697.0, 1200.0), (2957.7, 900.0))
#: Invented heights (counts per channel of each family's strongest line).
_HEIGHTS = {"Pb M": 9000.0, "Sb L": 600.0, "Ba L": 1000.0}
#: The rivals of S K at these resolutions (a line ≥ 0.1 of their strongest
#: within a FWHM of S Kα, Elam via the shipped set): Th M 2323 eV, U M 2457 eV,
#: Bi M 2418 eV, Mo L 2293 eV.
_FIT = ("S K", "Pb M", "Mo L", "Th M", "U M", "Bi M")
#: Families called present in gunshot residue besides S K and Pb M.
_PRESENT = ("Pb M", "Sb L", "Ba L")


@pytest.fixture(scope="module")
def patterns():
    """Line patterns (≥ 0.1 % of each family's strongest) from the shipped set."""
    from workbench.matching.engine import build_index
    from workbench.matching.expected import expected_strengths

    idx = build_index([load_set("xray")], "energy", None)
    e = expected_strengths(idx, 10_000.0, "emission", idx.position > 1000.0)
    out = {}
    for label in sorted(set(_FIT) | set(_PRESENT)):
        m = (idx.species == idx.species_names.index(label)) & np.isfinite(e) & (e >= 0.001)
        out[label] = (idx.position[m], e[m] / np.max(e[m]))
    return out


def _gsr(patterns, fwhm, *, s_height, shift_eV=0.0, broaden=1.0, tail=0.0, seed=20261202):
    """Counts per 10 eV channel, 1.3–5.0 keV: Pb M, Sb L, Ba L (and S K), two artefacts.

    ``shift_eV``, ``broaden``, ``tail``: the partner's pattern made wrong on
    purpose, as in tests/xray/test_share.py. Returns the net counts, the
    flat background, the artefact channels (within a FWHM of an artefact
    peak, as the engine marks them) and the instrument.
    """
    inst = instrument(fwhm)
    x = np.arange(1300.0, 5000.0, 10.0)
    bg = np.full(x.size, 100.0)
    lam = bg.copy()
    for label, height in (_HEIGHTS | {"S K": s_height}).items():
        e, r = patterns[label]
        e = e + shift_eV
        sig = broaden * fwhm_eV(e, inst) / 2.3548
        lam += np.sum(height * r * np.exp(-0.5 * ((x[:, None] - e) / sig) ** 2), axis=1)
        if label == "Pb M" and tail:
            d = e[None, :] - x[:, None]
            lam += np.sum(np.where(d > 0, tail * height * r * np.exp(-d / 150.0), 0.0), axis=1)
    artefact = np.zeros(x.size, dtype=bool)
    for e_art, height in _ARTEFACTS:
        sig = broaden * fwhm_eV(e_art, inst) / 2.3548
        lam += height * np.exp(-0.5 * ((x - e_art - shift_eV) / sig) ** 2)
        artefact |= np.abs(x - e_art) <= fwhm_eV(e_art, inst)
    y = np.random.default_rng(seed).poisson(lam).astype(np.float64)
    return x, y - bg, bg, artefact, inst


def _sole(test):
    return xray_share_sole(
        test.z, test.z_counting, position_agrees=test.offset_free, channels_intact=True
    )


@pytest.mark.parametrize("seed", [20261202, 7])
def test_artefact_channels_bound_a_rival_whose_main_line_is_under_an_artefact(patterns, seed):
    # Th M's main line (2990 eV) falls under Ar Kα: with those channels
    # dropped, nothing limits it, and the fit puts it at more than twice the
    # counts there (to take S Kα's share with Th M 2323 eV); kept as upper
    # bounds, it stays near the counts (the bound is soft: the model may
    # exceed the counts by its errors, the 5 % shape error × √(channels per
    # FWHM) ≈ 20 % of the height).
    fams = {k: patterns[k] for k in ("S K", "Pb M", "Th M")}
    x, net, bg, art, inst = _gsr(patterns, 180.0, s_height=3000.0, seed=seed)
    at_main = float(net[np.argmin(np.abs(x - 2990.0))])
    keep = ~art
    dropped = share_test(x[keep], net[keep], fams, inst, "S K", background=bg[keep])
    bound = share_test(x, net, fams, inst, "S K", background=bg, artefact=art)
    assert dropped.amplitudes["Th M"] > 2.0 * at_main
    assert bound.amplitudes["Th M"] < 1.5 * at_main


@pytest.mark.parametrize("seed", [20261202, 7])
@pytest.mark.parametrize("fwhm", [130.0, 180.0])
def test_present_families_reaching_the_fit_are_fitted(patterns, fwhm, seed):
    # Without Sb L and Ba L the rivals' 1 % lines take their peaks, and the
    # fit's best offset runs to the edge of the profile (the share is then
    # refused at 180 eV); with them it sits where the lines are tabulated.
    x, net, bg, art, inst = _gsr(patterns, fwhm, s_height=3000.0, seed=seed)
    fams = {k: patterns[k] for k in _FIT}
    present = {k: patterns[k] for k in _PRESENT}
    keep = ~art
    before = share_test(x[keep], net[keep], fams, inst, "S K", background=bg[keep])
    t = share_test(x, net, fams, inst, "S K", background=bg, artefact=art, present=present)
    assert not _sole(before) and not before.offset_free
    assert {"Sb L", "Ba L"} <= set(t.needed) and "Th M" not in t.needed
    assert t.offset_free and abs(t.offset_eV) <= 5.0
    if fwhm == 130.0:
        # At 180 eV the synthetic share is 4.2–5.2σ (S Kα 0.4 FWHM from Pb
        # Mα); the forward-model residue below is asserted there.
        assert _sole(t), t


@pytest.mark.parametrize("fwhm", [130.0, 180.0])
@pytest.mark.parametrize(
    "mismatch",
    [
        {},
        {"shift_eV": -20.0},  # the scale check applies no correction under 20 eV
        {"shift_eV": 20.0},
        {"broaden": 1.1},  # a FWHM model 10 % off
        {"tail": 0.05},  # incomplete charge collection, 5 % of the peak height
    ],
    ids=["exact", "scale-20eV", "scale+20eV", "fwhm+10%", "tail5%"],
)
def test_absent_sulfur_is_not_sole_with_the_context(patterns, fwhm, mismatch):
    x, net, bg, art, inst = _gsr(patterns, fwhm, s_height=0.0, **mismatch)
    fams = {k: patterns[k] for k in _FIT}
    present = {k: patterns[k] for k in _PRESENT}
    t = share_test(x, net, fams, inst, "S K", background=bg, artefact=art, present=present)
    assert not _sole(t), t


@pytest.mark.parametrize("seed", [20261202, 7])
@pytest.mark.parametrize("case", ["gsr_on_cotton", "gsr_on_ti_fabric"])
def test_sulfur_in_gunshot_residue_established_at_180_eV(case, seed):
    # Truth: S 5 % beside Pb 30 % in the residue (tests/xray/cases.py, invented).
    _, rep = run_case(case, 180.0, seed)
    called = {e["species"]: e["verdict"] for e in rep["elements"]}
    assert called["S K"] == "established"


# Lead white at 180 eV (no sulfur established, also with a broader true FWHM
# or a scale 20 eV low): tests/xray/test_share.py::test_no_sulfur_established_in_lead_white.


@pytest.mark.parametrize("fwhm", [130.0, 180.0])
def test_no_sulfur_probable_in_brass(fwhm):
    # Leaded brass has no sulfur (tests/xray/cases.py); Pb M is weak there.
    _, rep = run_case("leaded_brass", fwhm, 20261202)
    called = {e["species"]: e["verdict"] for e in rep["elements"]}
    assert called.get("S K", "not supported") in ("not supported", "possible")


@pytest.mark.parametrize("fwhm", [130.0, 180.0])
@pytest.mark.parametrize("shift_eV", [-20.0, 20.0])
def test_no_absent_family_probable_in_lead_white_with_a_scale_error(fwhm, shift_eV):
    # Lead white on chalk holds Pb, Ca, C, O only (tests/xray/cases.py). A
    # scale reading 20 eV off (what the scale check leaves uncorrected) made
    # the settling fit alone need S K (−20 eV, 130 eV: probable) or Bi M
    # (+20 eV: established) beside Pb M; the share test's two readings of the
    # scale decide "needed" for a family whose main line Pb M took.
    fs = _lead_white(fwhm)
    called = _engine(fs.energy_eV + shift_eV, fs.counts, fwhm)
    sample = {"Pb", "Ca", "C", "O"}
    wrong = {
        sp: v
        for sp, v in called.items()
        if sp.split()[0] not in sample and v in ("probable", "established")
    }
    assert not wrong


def test_overturned_sulfur_shows_the_share_figure_that_decided():
    # Lead white on chalk (no sulfur, tests/xray/cases.py), scale reading
    # 20 eV low at 130 eV: the settling fit alone needed S K beside Pb M
    # (probable at c52e549); the share test does not, and the overlap
    # decision a reviewer reads carries the share's significance and says so.
    # The drift is left uncorrected (--no-calibration): by default the scale
    # after matching now corrects it (tests/xray/test_scale_drift.py) and
    # S K no longer competes for the Pb M peak.
    fs = _lead_white(130.0)
    rep = _report(fs.energy_eV - 20.0, fs.counts, 130.0, apply_calibration=False)
    decided = [w for w in rep["warnings"] if "S K" in w.get("decision", {})]
    assert decided
    s_k = decided[0]["decision"]["S K"]
    assert s_k["needed"] is False
    assert s_k["share_sigma"] < 5.0  # XRAY_SHARE_SIGMA: not a sole explanation
    assert f"{s_k['share_sigma']:.1f}σ" in decided[0]["message"]
