"""The engine's X-ray preparation on forward-model spectra and hand-made peak lists."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import polars as pl
import pytest

from tests.xray.cases import CASES, instrument
from workbench.datamodel import PeakList, Spectrum
from workbench.errors import InsufficientDataError
from workbench.peaks import find_peaks
from workbench.refdata import load_set
from workbench.xray.forward import forward_model
from workbench.xray.prepare import prepare_energy_peaks


def _reference():
    from workbench.matching.engine import build_index

    idx = build_index([load_set("xray")], "energy", None)
    sp = np.asarray(idx.species_names, dtype=object)[idx.species]
    return sp, idx.position, idx.rel_intensity * idx.subshell_weight


def _peaks(case, inst, seed=20261202):
    fs = forward_model(CASES[case], inst, rng=np.random.default_rng(seed))
    k = fs.energy_eV >= 1000.0
    spec = Spectrum(fs.energy_eV[k], fs.counts[k], "energy", None)
    pk = find_peaks(spec)
    pk.extra.setdefault("x_range", (float(spec.x[0]), float(spec.x[-1])))
    return pk


@pytest.mark.filterwarnings("ignore::scipy.signal._peak_finding_utils.PeakPropertyWarning")
@pytest.mark.parametrize(("offset", "applied"), [(40.0, True), (0.0, False)])
def test_energy_scale_found_and_applied_only_when_significant(offset, applied):
    measured_on = instrument(140.0)
    true = replace(measured_on, energy_offset_eV=offset)  # E_true = offset + E_shown
    out, prep = prepare_energy_peaks(_peaks("leaded_brass", true), measured_on, _reference())
    sc = prep.scale
    assert sc.applied is applied
    if applied:
        # The modelled offset is recovered within its uncertainty budget: blends
        # shift centroids by ~20 eV (forward model vs Elam intensities).
        assert sc.offset_eV + (sc.gain - 1.0) * 8000.0 == pytest.approx(offset, abs=20.0)
        # Cu Kα is then where xraylib puts it (8047.8 / 8027.8 eV Kα1/Kα2).
        cu = out.positions[np.argmin(np.abs(out.positions - 8040.0))]
        assert cu == pytest.approx(8041.0, abs=15.0)


@pytest.mark.filterwarnings("ignore::scipy.signal._peak_finding_utils.PeakPropertyWarning")
def test_tolerance_follows_detector_resolution():
    inst = instrument(130.0)
    out, _ = prepare_energy_peaks(_peaks("soil", inst), inst)
    w = out.table["fwhm_eV"].to_numpy()
    # FWHM rises with energy as √(noise² + 2.355²·F·ε·E) (Fano statistics).
    order = np.argsort(out.positions)
    assert np.all(np.diff(w[order]) > 0)


def test_tube_scatter_peak_is_not_evidence_and_argon_is_labelled():
    # A hand-made list: Fe Kα/Kβ, Ar Kα from air, Rh Kα Rayleigh (xraylib 4.3 energies).
    e = np.array([2957.7, 6403.8, 7058.0, 20216.1])
    peaks = PeakList(
        pl.DataFrame({"energy_eV": e, "intensity": [300.0, 5000.0, 700.0, 900.0]}), "energy", None
    )
    out, prep = prepare_energy_peaks(peaks, None)
    assert out.positions.tolist() == pytest.approx([6403.8, 7058.0])
    kinds = dict(zip(prep.labels["peak"].to_list(), prep.labels["kinds"].to_list(), strict=True))
    # Rh Lβ3 (2916 eV) scatter also lies within half a FWHM of Ar Kα (xraylib 4.3).
    assert "air" in kinds[0] and kinds[3] == "rayleigh" and set(kinds) == {0, 3}
    assert prep.assumed and prep.warnings[0]["kind"] == "instrument_assumed"


def test_only_artefacts_is_one_clear_error():
    peaks = PeakList(pl.DataFrame({"energy_eV": [20216.1], "intensity": [900.0]}), "energy", None)
    with pytest.raises(InsufficientDataError) as exc:
        prepare_energy_peaks(peaks, None)
    assert "no element lines" in exc.value.remedy


def test_reference_mask_drops_unexcitable_and_unmeasurable():
    _, prep = prepare_energy_peaks(
        PeakList(pl.DataFrame({"energy_eV": [6403.8], "intensity": [1.0]}), "energy", None), None
    )
    # Pb K-L3 74969 eV (edge 88 keV > 40 kV), Pb L3-M5 10551 eV, Mg K-L3 1254 eV
    # (not measurable through 10 mm of air), Fe K-L3 6404 eV (xraylib 4.3).
    keep = prep.reference_mask(
        np.array(["Pb", "Pb", "Mg", "Fe"], dtype=object),
        np.array(["K-L3", "L3-M5", "K-L3", "K-L3"], dtype=object),
        np.array([74969.4, 10551.5, 1253.6, 6403.8]),
    )
    assert keep.tolist() == [False, True, False, True]
    assert "Pb K" in prep.not_excited and "Mg K" in prep.not_measurable


def test_weak_line_measured_narrow_is_kept_a_spike_is_not():
    # Fe Kα with a well-measured width, a weak real line whose width noise made
    # the peak finder measure at 40 % of the detector FWHM (as the Pb Lℓ peak
    # of the GSR case at 180 eV: 98 eV against 240 eV), and a counting spike
    # two channels wide (xraylib 4.3 energies for the lines; widths invented).
    inst = instrument(180.0)
    from workbench.xray.detector import fwhm_eV

    w = fwhm_eV(np.array([6403.8, 9184.5, 7700.0]), inst)
    peaks = PeakList(
        pl.DataFrame(
            {
                "energy_eV": [6403.8, 7700.0, 9184.5],
                "intensity": [5000.0, 150.0, 150.0],
                "fwhm_eV": [float(w[0]), 20.0, 0.4 * float(w[1])],
            }
        ),
        "energy",
        None,
    )
    out, _ = prepare_energy_peaks(peaks, inst)
    assert out.positions.tolist() == pytest.approx([6403.8, 9184.5])


def _sum_artefact(counts_per_channel):
    from workbench.xray.artefacts import Artefact

    # A Fe Kα + Fe Kα pile-up sum (2 × 6404 eV; Fe Kα from the shipped set),
    # 190 eV wide: height in counts per 10 eV channel.
    return Artefact("sum", 12808.0, counts_per_channel, "pile-up sum", 190.0, (0,))


@pytest.mark.parametrize(
    ("height", "listed", "faint"),
    [
        # N = 0.98·1.0645·40·190/10 = 793 counts over ±FWHM on B = 50·2·190/10
        # = 1900 baseline counts: N/√(N + 2B) = 793/√4593 = 11.7 ≥ 3 (the
        # peak finder's own acceptance, counting.not_significant; hand-computed).
        (40.0, True, False),
        # 8 counts per channel: N = 158.6, 158.6/√3958.6 = 2.52, between 2σ
        # and 3σ (hand-computed): no peak of its own, listed as faint.
        (8.0, True, True),
        # 2 counts per channel: N = 40, 40/√3840 = 0.6 < 2 (hand-computed):
        # not a peak anyone could see, not listed.
        (2.0, False, False),
    ],
)
def test_artefact_without_peak_listed_when_it_would_be_significant(height, listed, faint):
    from workbench.xray.prepare import _without_peak

    empty = pl.DataFrame(schema={"observed_eV": pl.Float64})
    grid = np.linspace(1000.0, 25000.0, 2401)  # 10 eV channels
    base = (grid, np.full(grid.size, 50.0))
    # The Fe Kα parent at 6404 eV is a significant peak; a noise maximum at
    # 12850 eV was dropped before (not passed): it does not stand for the sum.
    rows = _without_peak(
        [_sum_artefact(height)], empty, np.array([6404.0]), 10.0, 100.0, (1000.0, 25000.0), base
    )
    assert bool(rows) is listed
    if listed:
        assert rows[0]["kinds"] == "sum" and rows[0]["faint"] is faint
        # Expected counts: Gaussian area 1.0645·height·FWHM/channel (same formula).
        assert rows[0]["expected_counts"] == pytest.approx(1.0645 * height * 190.0 / 10.0)


def test_merged_artefacts_are_listed_as_their_range_not_their_first_member():
    from workbench.xray.artefacts import Artefact
    from workbench.xray.prepare import _without_peak

    # A sum peak 90 eV below a (broad, unpredicted) Compton peak: one row
    # spanning both, placed at the middle, never a faint row (scatter has no
    # predicted intensity). Energies invented.
    arts = [
        Artefact("sum", 19160.0, 40.0, "pile-up sum", 190.0, (0,)),
        Artefact("compton", 19250.0, None, "Rh Kα2 Compton", 580.0),
        Artefact("compton", 19447.0, None, "Rh Kα1 Compton", 580.0),
    ]
    empty = pl.DataFrame(schema={"observed_eV": pl.Float64})
    grid = np.linspace(1000.0, 25000.0, 2401)
    rows = _without_peak(
        arts,
        empty,
        np.array([8632.0]),
        10.0,
        100.0,
        (1000.0, 25000.0),
        (grid, np.full(grid.size, 50.0)),
    )
    assert len(rows) == 1
    assert rows[0]["energy_range_eV"] == [19160.0, 19447.0]
    assert rows[0]["energy_eV"] == pytest.approx(0.5 * (19160.0 + 19447.0))
    assert rows[0]["kinds"] == "compton,sum" and rows[0]["faint"] is False


def test_artefact_warning_names_the_kinds_in_an_analysts_words():
    # The invented demo ground (workbench.demo) has Rayleigh/Compton tube scatter,
    # argon from air and pile-up peaks; the summary warning says so in the words of
    # workbench.xray.wording (no bare engine tags such as "rayleigh" or "air").
    from workbench.demo import demo_file
    from workbench.matching import analyse_input

    rep = analyse_input(demo_file("white_pigment"), name="white_pigment.csv").report
    msg = next(w["message"] for w in rep["warnings"] if w["kind"] == "artefact_peaks")
    assert "tube scatter (Rayleigh)" in msg and "argon in air" in msg
    assert "(air," not in msg and "rayleigh," not in msg


@pytest.mark.filterwarnings("ignore::scipy.signal._peak_finding_utils.PeakPropertyWarning")
@pytest.mark.parametrize("fwhm", [130.0, 180.0])
@pytest.mark.parametrize("case", sorted(CASES))
def test_no_scale_correction_on_a_true_scale(case, fwhm):
    # The forward model has no calibration error (tests/xray/cases.py), so the
    # check must not correct anything. Before anchors were limited to
    # unambiguous K and L families, leaded brass (130 eV) got -21 eV at 2.3 keV
    # from a Pb M blend centroid, and lead white (180 eV) fitted +20 ± 2.7 eV
    # on a Ca Kβ peak taken as Te Lβ1.
    inst = instrument(fwhm)
    _, prep = prepare_energy_peaks(_peaks(case, inst), inst, _reference())
    assert not prep.scale.applied
    assert not any(name.endswith(" M") or " M " in name for name in prep.scale.lines)


def _gauss_counts(grid, centre, n, fwhm):
    """Counts per 10 eV channel of a Gaussian line of n counts (analytic, no noise)."""
    sg = fwhm / 2.3548
    return n * 10.0 * np.exp(-0.5 * ((grid - centre) / sg) ** 2) / (sg * np.sqrt(2 * np.pi))


def test_window_significance_of_a_line_a_spike_and_a_valley():
    from workbench.xray.counting import window_significance

    grid = np.arange(10000.0, 24000.0, 10.0)
    fwhm = 200.0
    flat = np.full(grid.size, 60.0)
    # A line of 1000 counts on 60 counts per channel: the centre (±1.177σ)
    # holds 76.1 % of it, the flanks (to ±2.355σ) 22.0 % (normal integrals),
    # so T = 541 counts; C + F = 0.981·1000 + 60·40 channels (hand-computed).
    line = flat + _gauss_counts(grid, 17700.0, 1000.0, fwhm)
    # A one-channel spike of 60 counts: T = 60 over the same 2400 counts.
    spike = flat.copy()
    spike[np.searchsorted(grid, 17700.0)] += 60.0
    # Halfway between two strong lines 800 eV apart: the counts curve upwards.
    valley = flat + sum(_gauss_counts(grid, c, 20000.0, fwhm) for c in (17300.0, 18100.0))
    x = np.array([17700.0])
    w = np.array([fwhm])
    s_line = window_significance({"spectrum": (grid, line)}, x, w)[0]
    # Channel sums instead of integrals (21 centre, 20 flank channels of
    # 10 eV, flanks scaled by 21/20): within a few per cent.
    assert s_line == pytest.approx(541.0 / np.sqrt(981.0 + 2400.0), rel=0.05)
    assert window_significance({"spectrum": (grid, spike)}, x, w)[0] == pytest.approx(
        60.0 / np.sqrt(2460.0), rel=0.05
    )
    assert window_significance({"spectrum": (grid, valley)}, x, w)[0] < 0.0
    assert window_significance({}, x, w) is None


def test_narrow_maximum_kept_when_the_counts_show_a_line():
    # The Zr Kβ case: a 10σ line whose width noise made the peak finder
    # measure at 31 eV against a 212 eV response (soil, 130 eV, seed
    # 20261202); with the spectrum at hand the counts decide, without it
    # the width rule stands (invented spectrum, analytic line shape).
    inst = instrument(130.0)
    from workbench.xray.detector import fwhm_eV

    grid = np.arange(1000.0, 25000.0, 10.0)
    w = float(fwhm_eV(np.array([17700.0]), inst)[0])
    y = np.full(grid.size, 64.0) + _gauss_counts(grid, 6403.8, 2e5, 140.0)
    y += _gauss_counts(grid, 17700.0, 1000.0, w)
    table = pl.DataFrame(
        {
            "energy_eV": [6403.8, 12000.0, 17700.0],
            "intensity": [float(np.max(y) - 64.0), 40.0, 45.0],
            "fwhm_eV": [140.0, 20.0, 31.0],  # 12000 eV: a spike (no line there)
        }
    )
    extra = {"x_range": (1000.0, 24990.0), "baseline": np.full(grid.size, 64.0)}
    with_sp = PeakList(table, "energy", None, extra=extra | {"spectrum": (grid, y)})
    without = PeakList(table, "energy", None, extra=dict(extra))
    out, _ = prepare_energy_peaks(with_sp, inst)
    assert out.positions.tolist() == pytest.approx([6403.8, 17700.0])
    out, _ = prepare_energy_peaks(without, inst)
    assert out.positions.tolist() == pytest.approx([6403.8])
