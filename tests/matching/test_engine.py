"""Engine mechanics on an invented reference set (data invented; expectations derived here)."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from scipy import constants as sc

from tests.matching.invented import FakeSet, invented_table, peaks_from
from workbench.datamodel import PeakList
from workbench.errors import ValueRangeError
from workbench.matching import MatchParameters, ToleranceSpec, match_peaks, result_json
from workbench.matching.expected import GF_TO_GA, expected_strengths
from workbench.matching.reference import ReferenceIndex

FIXED = ToleranceSpec("fixed", 0.02)


def _params(**kw):
    kw.setdefault("tolerance", FIXED)
    kw.setdefault("estimate_temperature", False)
    return MatchParameters(**kw)


def _lines_of(fake: FakeSet, label: str, T=10_000.0):
    idx = ReferenceIndex.from_sets([fake], "wavelength", "vacuum")
    e = expected_strengths(idx, T)
    m = idx.species == idx.species_names.index(label)
    return idx.position[m], e[m]


def _by_species(report):
    return {el["species"]: el for el in report["elements"]}


def test_gf_to_gA_constant():
    # g_k A_ki = 6.6702e15 gf / λ[Å]² (standard oscillator-strength relation,
    # e.g. Hilborn, Am. J. Phys. 50, 982 (1982); value from memory).
    assert GF_TO_GA == pytest.approx(6.6702e15, rel=1e-4)


def test_expected_ratio_is_boltzmann(invented_set):
    # Two Qa I lines: ratio must equal (g1A1/λ1)/(g2A2/λ2)·exp(-(E1-E2)/kT), derived analytically.
    pos, e = _lines_of(invented_set, "Qa I", T=8000.0)
    i300, i320 = e[np.argmin(abs(pos - 300))], e[np.argmin(abs(pos - 320))]
    kT = sc.k / sc.e * 8000.0
    expected = (5 * 1.0e8 / 300.0) / (3 * 6.0e7 / 320.0) * np.exp(-(4.2 - 3.9) / kT)
    assert i300 / i320 == pytest.approx(expected, rel=1e-12)


def test_single_species_is_established_and_overlap_warned(invented_set):
    pos, e = _lines_of(invented_set, "Qa I")
    report = match_peaks(peaks_from(pos + 0.001, 1000 * e), [invented_set], _params()).report()
    sp = _by_species(report)
    assert sp["Qa I"]["verdict"] == "established"
    assert sp["Qa I"]["verdict_level"] == 3
    # Qb I's only line in range sits 0.010 nm from Qa I 300.000 (invented set): ambiguous.
    assert sp["Qb I"]["verdict_level"] <= 1
    overlaps = [w for w in report["warnings"] if w["kind"] == "unresolved_overlap"]
    assert len(overlaps) == 1
    w = overlaps[0]
    assert w["elements"] == ["Qa I", "Qb I"]
    assert w["separation"] == pytest.approx(0.010, abs=1e-9)
    # R needed = mean λ / Δλ = 300.005 / 0.010 (derived).
    assert w["resolving_power_needed"] == pytest.approx(30000.5, abs=0.1)
    assert "Qa I" in w["settle"] and w["settle"]["Qa I"]["found"]


def test_missing_strongest_line_counts_against(invented_set):
    # Issue 9 replaced the old veto (one missing strong line blocked the top
    # class) by soft evidence: the missing line lowers the net evidence by
    # log10 P(not seen | present) and is listed first.
    pos, e = _lines_of(invented_set, "Qb I")
    full = match_peaks(peaks_from(pos + 0.001, 1000 * e), [invented_set], _params()).report()
    keep = np.abs(pos - 450.0) > 0.1  # drop Qb I 450.000, its strongest line (invented set)
    peaks = peaks_from(pos[keep] + 0.001, 1000 * e[keep])
    report = match_peaks(peaks, [invented_set], _params()).report()
    qb = _by_species(report)["Qb I"]
    qb_full = _by_species(full)["Qb I"]
    assert qb["missing_lines"][0]["reference_nm"] == pytest.approx(450.0)
    # Predicted far above the detection limit, so a present Qb I misses it with
    # the loss probability ε = 0.2 (workbench.matching.scoring.LOSS_PROBABILITY).
    # The penalty is the chance that a present species leaves a record of
    # misses at least this bad (chance.misses_tail_probability): Qb I 450 and
    # 470 are both surely visible (m = 0.2 each), so "one surely-visible group
    # missed" has probability 1 − 0.8² = 0.36 (derived here), log10 = −0.44;
    # never harsher than the single-line term log10(0.2).
    assert qb["missing_penalty_dex"] == pytest.approx(np.log10(1.0 - 0.8**2), abs=0.01)
    assert qb["net_evidence_dex"] < qb_full["net_evidence_dex"]


def test_species_with_strong_lines_missing_is_at_most_possible(invented_set):
    # Only Qb I's weakest line 500.000 present, strong; its two strongest lines in
    # range (450, 470; invented set) are missing. Issue 9: no veto; one found
    # group can never reach "probable" (two are needed), and the evidence does
    # not favour Qb I. (The censored scale puts the missing lines at the
    # detection limit — two upper bounds out of three ratios — so the found
    # line is the anomaly and the misses themselves cost little:
    # chance.misses_tail_probability.)
    peaks = peaks_from([300.5, 500.001, 510.0], [1000.0, 1000.0, 1000.0], snr=[100.0] * 3)
    report = match_peaks(peaks, [invented_set], _params()).report()
    qb = _by_species(report)["Qb I"]
    assert qb["verdict_level"] <= 1
    assert len(qb["missing_lines"]) >= 2
    assert qb["net_evidence_dex"] < 0.5
    statuses = [ln["status"] for ln in report["lines"]]
    assert statuses.count("unassigned") >= 2


def test_deterministic_bytes(invented_set):
    pos, e = _lines_of(invented_set, "Qa I")
    peaks = peaks_from(pos + 0.001, 1000 * e)
    a = result_json(match_peaks(peaks, [invented_set], _params()).report())
    b = result_json(match_peaks(peaks, [invented_set], _params()).report())
    assert a == b


def _many_line_set():
    rng = np.random.default_rng(20261202)
    vac = np.sort(rng.uniform(300, 700, 12))
    rows = [
        ("Qd", 1, float(v), 5, float(a), float(E))
        for v, a, E in zip(vac, rng.uniform(2e7, 1e8, 12), rng.uniform(3.0, 5.0, 12), strict=True)
    ]
    return FakeSet("many", invented_table(rows))


def test_scale_shift_estimated_and_applied():
    fake = _many_line_set()
    pos, e = _lines_of(fake, "Qd I")
    shift = 0.006  # nm, imposed on every peak (invented test condition)
    peaks = peaks_from(pos + shift, 1000 * e)
    rep = match_peaks(peaks, [fake], _params(apply_calibration=False)).report()
    cal = rep["calibration"]
    assert cal["shift"] == pytest.approx(shift, abs=1e-6)
    assert not cal["applied"]
    # Default: 0.006 nm > a quarter of the 0.02 nm window, so it is applied.
    rep2 = match_peaks(peaks, [fake], _params()).report()
    assert rep2["calibration"]["applied"]
    deltas = [m["delta_nm"] for m in _by_species(rep2)["Qd I"]["matched_lines"]]
    assert max(abs(d) for d in deltas) < 1e-6


def test_axis_ends_and_gaps_move_with_an_applied_scale_correction():
    # The axis' ends and sampling gaps are positions on the same axis as the
    # peaks: when a significant shift is applied, they move with them (one
    # sampling-gaps note, not one per run). Invented shift and gap.
    fake = _many_line_set()
    pos, e = _lines_of(fake, "Qd I")
    shift = 0.006
    peaks = peaks_from(pos + shift, 1000 * e)
    lo, hi = float(pos.min()) - 1.0 + shift, float(pos.max()) + 1.0 + shift
    gap = (float(pos.min()) + 0.3 + shift, float(pos.min()) + 0.4 + shift)
    peaks.extra.update(x_range=(lo, hi), x_gaps=(gap,))
    res = match_peaks(peaks, [fake], _params())
    assert res.report()["calibration"]["applied"]
    assert res.observed.axis_range == pytest.approx((lo - shift, hi - shift), abs=1e-6)
    assert res.observed.axis_gaps[0] == pytest.approx((gap[0] - shift, gap[1] - shift), abs=1e-6)
    kinds = [w["kind"] for w in res.report()["warnings"]]
    assert kinds.count("sampling_gaps") == 1


@pytest.mark.parametrize(
    ("kind", "value", "x", "expected"),
    [
        ("fixed", 0.05, 500.0, 0.05),  # definition
        ("resolving_power", 5000.0, 500.0, 0.1),  # λ/R = 500/5000 (derived)
        ("resolving_power", 20000.0, 300.0, 0.015),  # 300/20000 (derived)
    ],
)
def test_half_window(kind, value, x, expected):
    assert ToleranceSpec(kind, value).half_window(np.array([x]))[0] == pytest.approx(expected)


def test_fwhm_tolerance_uses_widths_and_floor():
    spec = ToleranceSpec("fwhm", 0.5, min_value=0.01)
    tol = spec.half_window(np.array([400.0, 500.0]), np.array([0.1, np.nan]))
    assert tol.tolist() == pytest.approx([0.05, 0.01])  # 0.5 × 0.1; NaN width → floor


def test_bad_inputs_are_refused(invented_set):
    with pytest.raises(ValueRangeError, match="not sorted"):
        t = pl.DataFrame({"wavelength_nm": [400.0, 300.0], "intensity": [1.0, 1.0]})
        from workbench.datamodel import PeakList

        match_peaks(PeakList(t, "wavelength", "vacuum"), [invented_set], _params())
    with pytest.raises(ValueRangeError, match="empty"):
        match_peaks(peaks_from([], []), [invented_set], _params())
    with pytest.raises(ValueRangeError, match="absorption"):
        match_peaks(peaks_from([300.0], [1.0]), [invented_set], _params(mode="absorption"))
    xray = FakeSet("x", invented_table(), axis="energy")
    with pytest.raises(ValueRangeError, match="energy axis"):
        match_peaks(peaks_from([300.0], [1.0]), [xray], _params())
    with pytest.raises(ValueRangeError, match="temperature"):
        MatchParameters(temperature_K=50.0)


def test_report_has_schema_fields(invented_set):
    pos, e = _lines_of(invented_set, "Qa I")
    rep = match_peaks(peaks_from(pos, e), [invented_set], _params()).report()
    for key in (
        "schema_version",
        "input",
        "parameters",
        "reference_sets",
        "calibration",
        "temperature",
        "elements",
        "lines",
        "warnings",
        "software_version",
    ):
        assert key in rep
    el = rep["elements"][0]
    for key in (
        "element",
        "ion",
        "verdict",
        "verdict_level",
        "score",
        "matched_lines",
        "missing_lines",
    ):
        assert key in el
    assert rep["input"]["medium"] == "vacuum"


# --- Issue 9/11: input robustness and guard rails -------------------------------


@pytest.fixture(scope="module")
def optical_set():
    from workbench.refdata import load_set

    return load_set("optical")


def test_peak_outside_reference_range_gives_a_clean_result(optical_set):
    # One line at 1501 nm (air; 1501.4 nm vacuum): the shipped optical set
    # ends at 1500 nm vacuum (its manifest title).
    peaks = PeakList(pl.DataFrame({"wavelength_nm": [1501.0]}), "wavelength", "air")
    rep = match_peaks(peaks, [optical_set]).report()
    assert [e for e in rep["elements"] if e["verdict_level"] >= 1] == []
    assert any(w["kind"] == "out_of_reference_range" for w in rep["warnings"])


def test_a_million_identical_rows_are_merged(optical_set):
    n = 1_000_000
    t = pl.DataFrame({"wavelength_nm": np.full(n, 393.366), "intensity": np.full(n, 5.0)})
    rep = match_peaks(PeakList(t, "wavelength", "air"), [optical_set]).report()
    assert rep["input"]["n_peaks"] == 1
    assert any(w["kind"] == "duplicate_peaks" for w in rep["warnings"])


def test_too_wide_tolerance_is_refused_at_once(optical_set):
    # ±5000 nm compares every peak with every line (issue 9: 15 minutes, 15 GB).
    peaks = PeakList(
        pl.DataFrame({"wavelength_nm": np.linspace(300.0, 700.0, 200)}), "wavelength", "air"
    )
    params = MatchParameters(tolerance=ToleranceSpec("fixed", 5000.0))
    with pytest.raises(ValueRangeError, match="pairs would be compared"):
        match_peaks(peaks, [optical_set], params)


def test_three_calcium_lines_give_calcium_and_nothing_above_possible(optical_set):
    # Ca II K 393.366, Ca II H 396.847, Ca I 422.673 nm (air; NIST ASD, from memory).
    peaks = PeakList(
        pl.DataFrame({"wavelength_nm": [393.366, 396.847, 422.673]}), "wavelength", "air"
    )
    rep = match_peaks(peaks, [optical_set]).report()
    lv = {e["species"]: e["verdict_level"] for e in rep["elements"]}
    assert max(lv.get("Ca I", 0), lv.get("Ca II", 0)) >= 1
    assert all(v <= 1 for s, v in lv.items() if not s.startswith("Ca "))
    # No intensities: missing-line evidence unavailable, so at most "probable".
    assert max(lv.values()) <= 2
    assert any(w["kind"] == "no_missing_line_evidence" for w in rep["warnings"])


def test_tolerance_per_peak_and_excluded_peaks(invented_set):
    pos, e = _lines_of(invented_set, "Qa I")
    peaks = peaks_from(pos + 0.001, 1000 * e)
    tol = np.full(pos.size, 0.02)
    rep = match_peaks(
        peaks,
        [invented_set],
        _params(),
        tolerance_per_peak=tol,
        excluded_peaks=[0],
        peak_labels={0: "artefact (test)"},
    ).report()
    first = rep["lines"][0]
    assert first["label"] == "artefact (test)" and first["n_candidates"] == 0
    assert rep["lines"][1]["tolerance_nm"] == pytest.approx(0.02)


def test_line_inside_an_excluded_peak_is_masked_not_missing(invented_set):
    # A peak set aside is never matched; a line whose window holds it, at least
    # as strong as the line's prediction, may hide in it: it must not count as
    # missing (it would if the peak were simply absent). Data invented.
    pos, e = _lines_of(invented_set, "Qa I")
    inner = (pos > pos.min()) & (pos < pos.max())  # inside the observed range
    strongest = int(np.argmax(np.where(inner, e, -1.0)))
    # Noise 1 per peak (snr = height): a detection limit of 3, so a missing
    # line predicted at 1000 counts against the species.
    peaks = peaks_from(pos + 0.001, 1000 * e, snr=1000 * e)
    keep = np.arange(pos.size) != strongest
    absent = match_peaks(
        peaks_from(pos[keep] + 0.001, 1000 * e[keep], snr=1000 * e[keep]), [invented_set], _params()
    )
    row_of = int(np.argsort(np.argsort(pos))[strongest])  # peaks_from sorts by position
    set_aside = match_peaks(peaks, [invented_set], _params(), excluded_peaks=[row_of])

    def missing_nm(result):
        row = _by_species(result.report())["Qa I"]
        return [m["reference_nm"] for m in row["missing_lines"]], row

    gone, row_absent = missing_nm(absent)
    hidden, row_hidden = missing_nm(set_aside)
    assert any(abs(w - pos[strongest]) < 1e-6 for w in gone)
    assert not any(abs(w - pos[strongest]) < 1e-6 for w in hidden)
    assert row_hidden["n_masked"] == row_absent["n_masked"] + 1
    assert row_hidden["missing_penalty_dex"] > row_absent["missing_penalty_dex"]


def test_missing_line_at_the_end_of_the_axis_is_masked(invented_set):
    # A line whose profile the end of the spectrum cuts may leave no peak: it
    # is masked, not missing; one resolution element further in it counts.
    # Data invented; fixed windows ±0.02 nm stand for a resolution of 0.02 nm.
    pos, e = _lines_of(invented_set, "Qa I")
    last = int(np.argmax(pos))
    keep = np.arange(pos.size) != last

    def row(end_nm):
        peaks = peaks_from(pos[keep] + 0.001, 1000 * e[keep], snr=1000 * e[keep])
        peaks.extra["x_range"] = (float(pos.min()) - 1.0, end_nm)
        return _by_species(match_peaks(peaks, [invented_set], _params()).report())["Qa I"]

    at_end, inside = row(float(pos[last]) + 0.01), row(float(pos[last]) + 1.0)
    assert [m["reference_nm"] for m in inside["missing_lines"]] == [pytest.approx(pos[last])]
    assert at_end["missing_lines"] == []
    assert at_end["n_masked"] == inside["n_masked"] + 1
