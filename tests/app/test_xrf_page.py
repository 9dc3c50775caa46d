"""AppTest of the Line matching page on an X-ray fluorescence result (issue 10).

The invented XRF demo case (NRFL-2026-0502, a painting's white ground,
workbench/demo.py) is matched once in one session; the page must show its
artefact peaks (escape, sum, scatter, argon) in a table and on the plot, the
overlaps in eV of detector resolution, and no plasma wording.
"""

from __future__ import annotations

import json

import pytest

from tests.app.test_pages import _demo_case_matched, _texts

pytestmark = pytest.mark.slow

XRF_CASE = "NRFL-2026-0502"  # invented (workbench.demo)


@pytest.fixture(scope="module")
def xrf_app(tmp_path_factory):
    yield from _demo_case_matched(tmp_path_factory, XRF_CASE)


def _artefact_frame(at):
    frames = [d.value for d in at.dataframe if "Kind" in d.value.columns]
    assert len(frames) == 1
    return frames[0]


def test_every_artefact_of_the_result_is_listed_with_kind_and_origin(xrf_app):
    report = xrf_app.session_state["view"].report
    assert report["input"]["axis"] == "energy"
    xray = report["xray"]
    frame = _artefact_frame(xrf_app)
    shown = list(zip(frame["Energy (eV)"], frame["Origin"], strict=True))
    want = [(f"{int(a['observed_eV'] + 0.5)}", a["origin"]) for a in xray["artefact_peaks"]]
    for a in xray["artefacts_without_peak"]:
        # A merged prediction is shown as its range, to 1 eV half up.
        lo, hi = (int(v + 0.5) for v in a["energy_range_eV"])
        want.append((f"{lo}–{hi}" if a["energy_range_eV"][1] - a["energy_range_eV"][0] >= 1.0
                     else f"{int(a['energy_eV'] + 0.5)}", a["origin"]))  # fmt: skip
    assert len(shown) == len(want)
    for item in want:
        assert item in shown
    # The demo's forward model makes escape, sum and scatter peaks (workbench.demo): each
    # kind named as an analyst names it, and none of them used as evidence.
    kinds = " ".join(frame["Kind"])
    for word in ("escape", "sum (pile-up)", "(Rayleigh)", "(Compton)", "Ar K"):
        assert word in kinds, word
    labelled = frame[frame["Observed peak height"] != "no separate peak"]
    assert len(labelled) == len(xray["artefact_peaks"])
    assert set(labelled["Used as evidence"]) <= {
        "no (artefact)",
        "only the excess over the prediction",
    }
    heads = _texts(xrf_app.subheader)
    assert any(h.startswith("Artefact peaks:") for h in heads)


def test_artefacts_are_marked_on_the_plot_apart_from_element_lines(xrf_app):
    fig = json.loads(xrf_app.get("plotly_chart")[0].proto.spec)
    traces = {t["name"]: t for t in fig["data"]}
    peaks = traces["artefact peak"]
    assert peaks["line"]["dash"] == "dot"
    assert peaks["line"]["color"] != traces["observed"]["line"]["color"]
    report = xrf_app.session_state["view"].report
    n_peaks = len(report["xray"]["artefact_peaks"])
    assert len(peaks["hovertext"]) == 3 * n_peaks  # base, top and gap per stick
    hidden = traces["artefact, no separate peak"]
    assert len(hidden["x"]) == len(report["xray"]["artefacts_without_peak"])
    assert any("escape" in t for t in hidden["hovertext"])


def test_xrf_wording_on_screen(xrf_app):
    captions = " ".join(_texts(xrf_app.caption))
    assert "Working temperature" not in captions
    assert not [t for t in xrf_app.tabs if "Boltzmann" in str(t.label)]
    markdown = " ".join(_texts(xrf_app.markdown))
    # Overlaps in eV against the detector's FWHM, never as a resolving power.
    assert "at this detector, whose FWHM is" in markdown
    assert "R ≥" not in markdown
    # Families called by their line family (Pb L, Ti K) in the element grid.
    grid = xrf_app.dataframe[0].value
    assert {"Pb L", "Ti K", "Zn K"} <= set(grid["Species"])
    assert all("." not in s for s in grid["Strongest matched (eV)"])  # energies to 1 eV


def test_ruled_out_families_are_one_note_not_interferences(xrf_app):
    report = xrf_app.session_state["view"].report
    ruled = {w["ruled_out"] for w in report["warnings"] if w["kind"] == "overlap_ruled_out"}
    assert "Ba L" in ruled  # no Ba in the invented ground; Ba Lβ missing (test_interference)
    labels = [e.label for e in xrf_app.expander]
    assert f"{len(ruled)} element(s) ruled out on their own lines" in labels
    markdown = " ".join(_texts(xrf_app.markdown)).replace("\\", "")  # markdown escapes
    assert "Ba L: a line under the Ti K peak at" in markdown
    warned = " ".join(_texts(xrf_app.warning))
    assert "ruled out on its own lines" not in warned  # not repeated as warnings
