import numpy as np
import pytest
from scipy import stats

from workbench.demo import demo_file
from workbench.matching import analyse_input
from workbench.matching.chance import fisher_combined, simes_combined


@pytest.mark.parametrize("p", [[0.5], [0.01, 0.2], [4e-4, 2.4e-2], [1e-6, 0.3, 0.9], [1.0, 1.0]])
def test_fisher_combined_agrees_with_scipy(p):
    # Oracle: scipy.stats.combine_pvalues(method="fisher") (chi-square with 2m dof).
    expected = stats.combine_pvalues(p, method="fisher").pvalue
    assert fisher_combined(p) == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    "p", [[0.5], [0.01, 0.2], [4e-4, 2.4e-2], [1e-6, 0.3, 0.9], [1.0, 1.0], [0.04, 0.03, 0.02]]
)
def test_simes_combined_is_the_smallest_bh_adjusted_p(p):
    # Oracle: scipy.stats.false_discovery_control (Benjamini-Hochberg); Simes' p is
    # the smallest adjusted p-value (Simes 1986, from memory).
    assert simes_combined(p) == pytest.approx(min(stats.false_discovery_control(p)), rel=1e-12)


def test_simes_is_never_below_fisher_for_two_stages_of_unequal_strength():
    # One strong, one weak stage: Fisher rewards the product (independence assumed),
    # Simes only twice the smaller p. The demo's Mg II / Mg I figures.
    assert simes_combined([4e-4, 2e-2]) == pytest.approx(8e-4)
    assert fisher_combined([4e-4, 2e-2]) < simes_combined([4e-4, 2e-2])


def test_ion_stages_are_pooled_in_the_invented_libs_demo():
    # workbench.demo's invented paint chip is synthesised with Mg I and Mg II lines. Both
    # stages are seen, so they are pooled and the pooled figures are reported on both.
    # Simes' combination (stop 25) of Mg II's p (about 3e-4, the doublet) and Mg I's
    # (about 3e-3, one line) is twice the smaller, 1.49 dex over the elements tried:
    # Mg I is not raised (Fisher's method, which assumes independent stages, gave
    # 2.2 dex and raised it). Mg II is "probable" on its own.
    rep = analyse_input(demo_file("paint_chip"), name="paint_chip.csv").report
    by = {e["species"]: e for e in rep["elements"]}
    assert by["Mg II"]["verdict_level"] >= 2
    for sp, other in (("Mg I", "Mg II"), ("Mg II", "Mg I")):
        assert by[sp]["pooled_with"] == [other]
    p = simes_combined([by["Mg I"]["chance_probability"], by["Mg II"]["chance_probability"]])
    assert p == pytest.approx(2 * by["Mg II"]["chance_probability"])
    assert by["Mg I"]["pooled_evidence_dex"] < 1.5
    assert by["Mg I"]["verdict"] == "possible"
    # a stage that is not seen is never raised (no Mg III lines are in the set used)
    assert np.all([e["pooled_with"] == [] for e in rep["elements"] if e["element"] == "Ar"])


def test_demo_paint_chip_lists_no_element_it_does_not_hold():
    # workbench.demo's invented paint chip is synthesised from Ti, Ba, Ca, Fe, Cr, Si
    # and Mg lines only (SCENARIOS["paint_chip"].species). A species whose every found
    # line sits on a peak that a better-supported species explains has nothing of
    # the spectrum left to it: it is "not supported" (before: Cd I, As I, Ga I, Hg I,
    # Os II ... were "possible" with 0 own groups, Cd I with its 5 strongest missing).
    from workbench.demo import SCENARIOS

    held = {sp.split()[0] for sp in SCENARIOS["paint_chip"].species}
    rep = analyse_input(demo_file("paint_chip"), name="paint_chip.csv").report
    listed = [e for e in rep["elements"] if e["verdict_level"] >= 1]
    assert all(e["n_groups_found"] >= 1 for e in listed), [
        e["species"] for e in listed if e["n_groups_found"] == 0
    ]
    cd = next(e for e in rep["elements"] if e["species"] == "Cd I")
    assert cd["verdict"] == "not supported" and cd["explained_by"]
    assert {e["element"] for e in listed if e["verdict_level"] >= 2} <= held


def _stage(code, label, ion, p, level, groups=3):
    from workbench.matching.scoring import SpeciesEvidence

    return SpeciesEvidence(
        code=code,
        label=label,
        element="Qa",
        ion=ion,
        family=None,
        chance_probability=p,
        net_evidence_dex=-np.log10(p),
        missing_evidence=True,
        n_groups_found=groups,
        n_groups_matched=groups,
        n_groups_counted=groups,
        n_unique_peaks=groups,
        level=level,
    )


@pytest.mark.parametrize(
    ("p_weak", "raised"), [(0.01, True), (0.05, True), (0.5, False), (0.95, False)]
)
def test_a_stage_is_raised_only_on_data_of_its_own(p_weak, raised):
    # Invented element "Qa": stage I alone gives p = 1e-20 (established on its own),
    # stage II has three matched groups with chance probability p_weak. Fisher's
    # combination is dominated by stage I whatever p_weak is; a stage whose own
    # coincidences are as likely as not by chance (p 0.5, 0.95: Ar II beside Ar I
    # in an Ar-Ne-Kr-Xe-Hg arc) shows nothing of itself and keeps its class; a
    # stage significant as one pre-specified test (p <= 0.05, PRIOR_DATA_P, as for
    # an abundance prior: the element being present names the stage) is raised.
    from types import SimpleNamespace

    from workbench.matching.pooling import pool_ion_stages

    strong, weak = _stage(0, "Qa I", 1, 1e-20, 3), _stage(1, "Qa II", 2, p_weak, 1)
    pool_ion_stages(SimpleNamespace(evidence={0: strong, 1: weak}))
    assert weak.pooled_with == ["Qa I"]  # pooled figures are reported either way
    assert (weak.level == 3) is raised
    assert strong.level == 3
    # A raised stage keeps the class of its own evidence, for every face to show.
    assert weak.raised_by_pooling is raised
    assert weak.own_level == (1 if raised else None)
    assert not strong.raised_by_pooling


def test_pooling_alone_raises_to_probable_at_most():
    # Invented element "Qa": stage II alone "probable" (p 3e-5), stage I "possible"
    # (p 0.008). Simes gives p 6e-5, which over one element is well past the
    # "established" threshold (3 decades; workbench.matching.scoring). Under chance
    # the two stages' hits are not independent (their lines crowd into the same
    # stretches), so the top class needs a stage established on its own: both
    # stages end "probable" (the Nd of a five-gas invented lamp at R 1000).
    from types import SimpleNamespace

    from workbench.matching.pooling import pool_ion_stages

    one, two = _stage(0, "Qa I", 1, 8e-3, 1), _stage(1, "Qa II", 2, 3e-5, 2)
    pool_ion_stages(SimpleNamespace(evidence={0: one, 1: two}))
    assert simes_combined([8e-3, 3e-5]) == pytest.approx(6e-5)
    assert two.pooled_evidence_dex >= 3.0
    assert (one.level, two.level) == (2, 2)


def _ca_three_lines_and_h_k():
    # Invented emission spectrum: Gaussian lines at Ca II K and H and Ca I 422.673 nm
    # (air; NIST ASD positions, from memory, as in the shipped set) on a flat,
    # noisy baseline (seeded). Ca I has one line: alone it is at most "possible".
    rng = np.random.default_rng(7)
    x = np.linspace(380.0, 440.0, 3000)
    y = rng.normal(100.0, 5.0, x.size)
    for centre, height in ((393.366, 5000.0), (396.847, 4000.0), (422.673, 3000.0)):
        y += height * np.exp(-0.5 * ((x - centre) / 0.05) ** 2)
    text = "wavelength_nm,intensity\n" + "".join(
        f"{a:.4f},{b:.2f}\n" for a, b in zip(x, y, strict=True)
    )
    return analyse_input(text.encode(), name="ca.csv", medium="air").report


def test_a_raised_stage_is_marked_in_the_report_and_every_face():
    # The class of a stage raised by pooling is not its own: the report keeps the
    # own class, and the CLI table, the app's grid ("Class note") and the findings sheet say
    # which stages were pooled (workbench.matching.presentation.verdict_basis).
    from workbench.matching.presentation import element_rows, verdict_basis
    from workbench.matching.textsummary import summary_text

    rep = _ca_three_lines_and_h_k()
    by = {e["species"]: e for e in rep["elements"]}
    ca1, ca2 = by["Ca I"], by["Ca II"]
    raised = ca1["own_verdict"] is not None
    if raised:
        assert ca1["own_verdict_level"] < ca1["verdict_level"]
        assert ca1["pooled_with"] == ["Ca II"]
        basis = verdict_basis(ca1)
        assert basis.startswith("pooled with Ca II: ") and f"alone {ca1['own_verdict']}" in basis
        text = summary_text(rep)
        assert f"Ca I: {basis}" in text
        assert any(ln.startswith("Ca I ") and "*" in ln for ln in text.splitlines())
        row = next(r for r in element_rows(rep, include_unsupported=True) if r["Species"] == "Ca I")
        assert row["Class note"] == basis
    assert ca2["own_verdict"] is None and verdict_basis(ca2) == ""
    assert raised  # the case this test is about (Ca I alone is one line)
