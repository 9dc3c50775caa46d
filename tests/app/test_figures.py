"""Tests of workbench/app/figures.py: display decimation and figure builders."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.app.figures import decimate_minmax, stick_figure, timeline_figure
from workbench.errors import ValueRangeError


def test_small_input_is_returned_unchanged():
    x = np.linspace(1.0, 2.0, 100)
    y = np.sin(x)
    xd, yd = decimate_minmax(x, y, n_buckets=50)  # 100 ≤ 2·50: nothing to thin
    np.testing.assert_array_equal(xd, x)
    np.testing.assert_array_equal(yd, y)


def test_million_points_keep_a_one_sample_spike_and_the_bounds():
    rng = np.random.default_rng(20261202)
    n = 1_000_000
    x = np.linspace(200.0, 900.0, n)
    y = rng.normal(0.0, 1.0, n)
    y[123_457] = 1000.0  # a single-sample spike: plain striding would drop it
    y[765_432] = -500.0  # a single-sample dip
    xd, yd = decimate_minmax(x, y, n_buckets=2000)
    assert xd.size <= 4000  # two points per bucket at most (definition of the method)
    assert np.all(np.diff(xd) > 0)  # x order kept
    assert yd.max() == 1000.0 and yd.min() == -500.0  # global extremes survive
    assert x[123_457] in xd and x[765_432] in xd


def test_each_bucket_keeps_its_minimum_and_maximum():
    rng = np.random.default_rng(20261202)
    x = np.sort(rng.uniform(0.0, 10.0, 5000))
    y = rng.normal(size=5000)
    n = 40
    xd, yd = decimate_minmax(x, y, n_buckets=n)
    # Brute force over the same equal-width buckets (common practice, no source).
    b = np.minimum(((x - x[0]) / (x[-1] - x[0]) * n).astype(int), n - 1)
    bd = np.minimum(((xd - x[0]) / (x[-1] - x[0]) * n).astype(int), n - 1)
    for k in range(n):
        sel = b == k
        if not sel.any():
            continue
        assert yd[bd == k].max() == y[sel].max()
        assert yd[bd == k].min() == y[sel].min()
        assert np.sum(bd == k) <= 2


def test_non_finite_points_are_dropped():
    x = np.arange(10.0)
    y = np.array([1, 2, np.nan, 4, 5, np.inf, 7, 8, 9, 10], dtype=float)
    xd, yd = decimate_minmax(x, y, n_buckets=100)
    assert xd.size == 8 and np.all(np.isfinite(yd))  # 10 points, 2 non-finite


def test_bad_input_is_refused_with_a_workbench_error():
    with pytest.raises(ValueRangeError, match="differ in shape"):
        decimate_minmax(np.arange(3.0), np.arange(4.0))
    with pytest.raises(ValueRangeError, match="n_buckets"):
        decimate_minmax(np.arange(3.0), np.arange(3.0), n_buckets=0)


def _sticks():
    # Invented positions and heights.
    observed = [
        {"position": 500.0, "height": 0.2, "status": "assigned", "assigned_to": "Qa I"},
        {"position": 600.0, "height": 1.0, "status": "assigned", "assigned_to": "Zz I"},
    ]
    refs = [
        {"species": "<b>Qa I</b>", "ion_stage": "I", "position": 500.01, "expected_rel": 0.4,
         "line_id": "t:1", "transition": None},
        {"species": "<b>Qa I</b>", "ion_stage": "I", "position": 650.0, "expected_rel": 1.0,
         "line_id": "t:2", "transition": None},
        {"species": "Zz I", "ion_stage": "I", "position": 600.0, "expected_rel": 1.0,
         "line_id": "t:3", "transition": None},
    ]  # fmt: skip
    return observed, refs


def test_stick_figure_draws_one_labelled_track_per_species_below_the_observed_panel():
    observed, refs = _sticks()
    fig = stick_figure(
        observed, refs, species=["<b>Qa I</b>", "Zz I"], unit="nm",
        axis_title="wavelength in air (nm)", interference=[(499.9, 500.1, "x<y")],
    )  # fmt: skip
    names = {t.name for t in fig.data}
    assert {"observed", "<b>Qa I</b>", "Zz I", "interfering pair"} <= names
    axes = {t.name: t.yaxis for t in fig.data}
    assert axes["observed"] == "y" and axes["<b>Qa I</b>"] == "y2" and axes["Zz I"] == "y3"
    assert fig.layout.yaxis2.title.text == "&lt;b&gt;Qa I&lt;/b&gt;"  # track label, escaped
    assert fig.layout.xaxis.title.text == "wavelength in air (nm)"  # quantity, medium, unit
    assert fig.layout.xaxis.anchor == "y3"  # drawn below the last track
    legend = [t.name for t in fig.data if t.showlegend is not False]
    assert legend == ["observed", "interfering pair"]  # its own legend entry
    track = next(t for t in fig.data if t.name == "<b>Qa I</b>")
    assert "<b>" not in track.hovertext[0]


def test_sticks_are_rescaled_to_the_visible_range():
    observed, refs = _sticks()
    fig = stick_figure(
        observed, refs, species=["<b>Qa I</b>"], unit="nm", axis_title="x",
        x_range=(499.0, 501.0),
    )  # fmt: skip
    obs = next(t for t in fig.data if t.name == "observed")
    ref = next(t for t in fig.data if t.name == "<b>Qa I</b>")
    # In view only the 500 nm sticks: each becomes the tallest (0.2/0.2 and 0.4/0.4);
    # sticks are drawn as (0, h, gap) triples.
    assert list(obs.y)[1::3] == [1.0, 5.0] and list(ref.y)[1::3] == [1.0, 2.5]
    assert tuple(fig.layout.xaxis.range) == (499.0, 501.0)


def test_timeline_marks_the_broken_event():
    events = [
        {"item_number": "1", "seq": 1, "kind": "received", "at": "2026-01-01T00:00:00Z",
         "actor": "A", "seal_state": "sealed"},
        {"item_number": "1", "seq": 2, "kind": "note", "at": "2026-01-02T00:00:00Z",
         "actor": "A", "seal_state": "sealed", "note": "<script>"},
    ]  # fmt: skip
    fig = timeline_figure(events, {"1": 2})
    note = next(t for t in fig.data if t.name == "note")
    assert list(note.marker.color) == ["#c0392b"]  # the broken event is drawn in red
    assert "&lt;script&gt;" in note.hovertext[0]


def test_overlapping_interference_bands_are_drawn_once():
    observed, refs = _sticks()
    # Three invented spans, the first two overlapping: two bands, labels joined.
    spans = [(499.9, 500.1, "A / B"), (500.0, 500.2, "A / C"), (600.0, 600.1, "D / E")]
    fig = stick_figure(observed, refs, species=[], unit="nm", axis_title="x", interference=spans)
    assert [(sh.x0, sh.x1) for sh in fig.layout.shapes] == [(499.9, 500.2), (600.0, 600.1)]
    marks = next(t for t in fig.data if t.name == "interfering pair")
    assert marks.hovertext[0] == "A / B<br>A / C"
