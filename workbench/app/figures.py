"""Figures of the app (display only): decimation for plotting and plotly figures.

Nothing here changes data used for computation. :func:`decimate_minmax`
thins a long spectrum for the screen only (the engine and peak finder always
get every point). The figure builders take plain arrays and dicts (report
fragments, store records turned into dicts) and return plotly figures; any
text a user typed is HTML-escaped before plotly sees it, because plotly
interprets a subset of HTML in hover text.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from workbench.errors import ValueRangeError

__all__ = [
    "DEFAULT_BUCKETS",
    "boltzmann_figure",
    "decimate_minmax",
    "spectrum_figure",
    "stick_figure",
    "timeline_figure",
]

#: Buckets used for a spectrum preview: about one per screen pixel of a wide plot.
DEFAULT_BUCKETS: int = 2000

# Our own palette (colour-blind-safe hues after Okabe & Ito 2008; common practice).
_OBSERVED = "#1b1b1b"
_REF_COLOURS = ("#0072b2", "#d55e00", "#009e73", "#cc79a7", "#e69f00", "#56b4e9", "#7f6d00")
_INTERFERENCE_FILL = "rgba(120, 120, 120, 0.16)"
_INTERFERENCE_MARK = "#6b4c9a"  # not one of the species colours
_BROKEN = "#c0392b"
_ARTEFACT = "#8c510a"  # brown: not a species colour, not the interference mark


def _esc(value: Any) -> str:
    """Escape text for plotly hover labels (which render a subset of HTML)."""
    return html.escape("" if value is None else str(value), quote=True)


def decimate_minmax(
    x: np.ndarray, y: np.ndarray, n_buckets: int = DEFAULT_BUCKETS
) -> tuple[np.ndarray, np.ndarray]:
    """Thin a spectrum for display by keeping the minimum and maximum of each bucket.

    The x range is cut into ``n_buckets`` equal-width buckets (one per
    display pixel); for each non-empty bucket the points holding its minimum
    and its maximum y are kept, in their original order. Every peak and dip
    taller than one bucket therefore stays visible, which plain striding
    would not guarantee. For display only: never feed the result to
    peak finding or matching.

    Parameters
    ----------
    x, y : numpy.ndarray
        Positions (increasing) and values, same length. Non-finite values are dropped.
    n_buckets : int
        Number of buckets (at least 1).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        At most ``2 * n_buckets`` points, in increasing x order. Inputs with
        no more than ``2 * n_buckets`` finite points are returned unchanged
        (as copies, non-finite points removed).

    Raises
    ------
    ValueRangeError
        If the arrays differ in length or ``n_buckets`` is not positive.
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    if x.shape != y.shape or x.ndim != 1:
        raise ValueRangeError(
            f"x and y differ in shape ({x.shape} vs {y.shape})", "give one y value per x value"
        )
    if int(n_buckets) < 1:
        raise ValueRangeError(f"n_buckets must be at least 1, got {n_buckets}", "use e.g. 2000")
    keep = np.isfinite(x) & np.isfinite(y)
    x, y = x[keep], y[keep]
    n = int(n_buckets)
    if x.size <= 2 * n:
        return x.copy(), y.copy()
    lo, hi = float(x[0]), float(x[-1])
    if hi <= lo:
        return x[[int(np.argmin(y)), int(np.argmax(y))]], y[[int(np.argmin(y)), int(np.argmax(y))]]
    bucket = np.minimum(((x - lo) / (hi - lo) * n).astype(np.int64), n - 1)
    # Sort by (bucket, y): the first row of a bucket is its minimum, the last its maximum.
    order = np.lexsort((y, bucket))
    b_sorted = bucket[order]
    starts = np.flatnonzero(np.r_[True, b_sorted[1:] != b_sorted[:-1]])
    ends = np.r_[starts[1:], b_sorted.size] - 1
    picked = np.unique(np.concatenate([order[starts], order[ends]]))
    return x[picked], y[picked]


def _stick_xy(pos: np.ndarray, height: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sticks as one polyline: (p, 0) → (p, h) then a NaN gap, for every position."""
    p = np.asarray(pos, dtype=np.float64)
    h = np.asarray(height, dtype=np.float64)
    xs = np.repeat(p, 3)
    ys = np.column_stack([np.zeros_like(h), h, np.full_like(h, np.nan)]).ravel()
    xs[2::3] = np.nan
    return xs, ys


def spectrum_figure(
    x: np.ndarray,
    y: np.ndarray,
    *,
    unit: str,
    peaks_x: np.ndarray | None = None,
    peaks_y: np.ndarray | None = None,
    baseline: np.ndarray | None = None,
    y_label: str = "intensity",
    x_label: str | None = None,
    n_buckets: int = DEFAULT_BUCKETS,
) -> Any:
    """Spectrum preview (decimated for display) with detected peaks marked.

    Parameters
    ----------
    x, y : numpy.ndarray
        The full spectrum.
    unit : str
        Axis unit for the label (``"nm"`` or ``"eV"``).
    peaks_x, peaks_y : numpy.ndarray, optional
        Peak positions and the raw signal at them (for the markers).
    baseline : numpy.ndarray, optional
        Baseline on the same grid as ``x`` (decimated the same way).
    y_label : str
        Y axis title.
    x_label : str, optional
        X axis title naming quantity, medium and unit (default ``position (unit)``).
    n_buckets : int
        Display buckets.

    Returns
    -------
    plotly.graph_objects.Figure
    """
    import plotly.graph_objects as go

    xd, yd = decimate_minmax(x, y, n_buckets)
    fig = go.Figure()
    fig.add_trace(
        go.Scattergl(x=xd, y=yd, mode="lines", name="spectrum", line={"color": "#3d4f63"})
    )
    if baseline is not None and np.shape(baseline) == np.shape(x):
        bx, by = decimate_minmax(x, np.asarray(baseline, dtype=np.float64), n_buckets)
        fig.add_trace(
            go.Scattergl(
                x=bx, y=by, mode="lines", name="baseline", line={"color": "#9a9a9a", "dash": "dot"}
            )
        )
    if peaks_x is not None and len(peaks_x):
        fig.add_trace(
            go.Scatter(
                x=np.asarray(peaks_x),
                y=np.asarray(peaks_y) if peaks_y is not None else None,
                mode="markers",
                name=f"detected peaks ({len(peaks_x)})",
                marker={"color": "#d55e00", "symbol": "triangle-down", "size": 8},
                hovertemplate=f"%{{x:.4f}} {unit}<extra>peak</extra>",
            )
        )
    fig.update_layout(
        xaxis_title=_esc(x_label or f"position ({unit})"),
        yaxis_title=_esc(y_label),
        height=380,
        margin={"l": 60, "r": 20, "t": 30, "b": 50},
        legend={"orientation": "h", "y": 1.08},
    )
    return fig


def _visible(pos: np.ndarray, x_range: tuple[float, float] | None) -> np.ndarray:
    if x_range is None:
        return np.ones(pos.shape, dtype=bool)
    return (pos >= float(x_range[0])) & (pos <= float(x_range[1]))


def _scaled(pos: np.ndarray, h: np.ndarray, x_range: tuple[float, float] | None) -> np.ndarray:
    """Heights rescaled to the tallest stick in the visible range (all when nothing is visible)."""
    vis = _visible(pos, x_range)
    top = float(np.max(h[vis])) if np.any(vis) else 0.0
    return h / top if top > 0 else h


def _merged(spans: Sequence[tuple[float, float, str]]) -> list[tuple[float, float, str]]:
    """Overlapping bands joined into one, labels listed once.

    Stacked translucent bands would otherwise darken the plot and hide the sticks.
    """
    out: list[tuple[float, float, list[str]]] = []
    for lo, hi, label in sorted(spans, key=lambda s: (s[0], s[1])):
        if out and lo <= out[-1][1]:
            prev = out[-1]
            labels = prev[2] if label in prev[2] else [*prev[2], label]
            out[-1] = (prev[0], max(prev[1], hi), labels)
        else:
            out.append((lo, hi, [label]))
    return [(lo, hi, "<br>".join(_esc(x) for x in labels)) for lo, hi, labels in out]


def stick_figure(
    observed: Sequence[Mapping[str, Any]],
    references: Sequence[Mapping[str, Any]],
    *,
    species: Sequence[str],
    unit: str,
    axis_title: str,
    interference: Sequence[tuple[float, float, str]] = (),
    x_range: tuple[float, float] | None = None,
    artefacts: Sequence[Mapping[str, Any]] = (),
) -> Any:
    """Observed sticks on top and one thin labelled track per chosen species, shared x axis.

    Heights in every panel are rescaled to the tallest stick inside
    ``x_range`` (the visible range), so a zoomed view is never flattened by
    a strong line outside it.

    Parameters
    ----------
    observed : sequence of mapping
        One per observed line: ``position``, ``height`` (0–1), ``status``,
        ``assigned_to`` (text).
    references : sequence of mapping
        One per reference line: ``species``, ``ion_stage``, ``position``,
        ``expected_rel`` (0–1), ``line_id``, ``transition``.
    species : sequence of str
        The tracks to draw, in order (one per species, even if it has no line
        in view).
    unit : str
        Position unit (``"nm"`` or ``"eV"``), for hover text.
    axis_title : str
        X axis title naming quantity, medium and unit.
    interference : sequence of (lo, hi, label)
        Position spans of interfering pairs (marked in every panel).
    x_range : (float, float), optional
        The visible range.
    artefacts : sequence of mapping
        X-ray artefacts (:func:`workbench.matching.xrf_view.artefact_marks`):
        ``position``, ``height`` (on the observed sticks' scale; ``None``
        without a separate peak), ``separated``, ``text``. Drawn in the
        observed panel as dotted sticks, or open triangles at the axis.

    Returns
    -------
    plotly.graph_objects.Figure
        Trace names: ``observed``, ``artefact peak``, ``artefact, no separate peak``,
        one ``<species>`` per track, ``interfering pair``.
    """
    import plotly.graph_objects as go

    tracks = list(dict.fromkeys(str(s) for s in species))
    fmt = ".0f" if unit == "eV" else ".4f"
    # One x axis shared by every panel; each panel is a y axis with its own domain
    # (built as plain dicts in one go: per-subplot updates are slow in plotly).
    # Panel sizes in pixels (observed 190, each track 44, gaps 8), as domain fractions.
    height = 270 + 52 * len(tracks)
    plot_px = float(height - 80)
    gap, track_h = 8 / plot_px, 44 / plot_px
    bottom = (52 * len(tracks)) / plot_px
    layout: dict[str, Any] = {
        "yaxis": {"domain": [bottom, 1.0], "range": [0, 1.08], "title": {"text": "observed"},
                  "fixedrange": True},
    }  # fmt: skip
    data: list[dict[str, Any]] = []

    def _hover(rows_text: list[str]) -> np.ndarray:
        return np.repeat(np.array(rows_text, dtype=object), 3) if rows_text else np.array([])

    peaks = [a for a in artefacts if a.get("separated") and a.get("height") is not None]
    a_pos = np.array([float(a["position"]) for a in peaks])
    a_h = np.array([float(a["height"]) for a in peaks])
    if observed:
        pos = np.array([float(o["position"]) for o in observed])
        raw = np.array([float(o["height"]) for o in observed])
        # One scale for element lines and artefact peaks in the observed panel.
        both = _scaled(np.concatenate([pos, a_pos]), np.concatenate([raw, a_h]), x_range)
        h, a_h = both[: pos.size], both[pos.size :]
        xs, ys = _stick_xy(pos, h)
        data.append(
            {
                "type": "scatter", "x": xs, "y": ys, "mode": "lines", "name": "observed",
                "line": {"color": _OBSERVED, "width": 1.5}, "hoverinfo": "text",
                "hovertext": _hover([
                    f"observed {o['position']:{fmt}} {unit}<br>{_esc(o.get('status'))}: "
                    f"{_esc(o.get('assigned_to') or '-')}"
                    for o in observed
                ]),
                "xaxis": "x", "yaxis": "y",
            }
        )  # fmt: skip
    elif peaks:
        a_h = _scaled(a_pos, a_h, x_range)
    if peaks:
        xs, ys = _stick_xy(a_pos, a_h)
        data.append(
            {
                "type": "scatter", "x": xs, "y": ys, "mode": "lines", "name": "artefact peak",
                "line": {"color": _ARTEFACT, "width": 2.0, "dash": "dot"}, "hoverinfo": "text",
                "hovertext": _hover([_esc(a["text"]) for a in peaks]), "xaxis": "x", "yaxis": "y",
            }
        )  # fmt: skip
    hidden = [a for a in artefacts if not a.get("separated")]
    if hidden:
        data.append(
            {
                "type": "scatter", "x": [float(a["position"]) for a in hidden],
                "y": [0.03] * len(hidden), "mode": "markers", "name": "artefact, no separate peak",
                "marker": {"symbol": "triangle-up-open", "color": _ARTEFACT, "size": 8},
                "hovertext": [_esc(a["text"]) for a in hidden], "hoverinfo": "text",
                "xaxis": "x", "yaxis": "y",
            }
        )  # fmt: skip
    for k, sp in enumerate(tracks):
        axis = f"y{k + 2}"
        hi = bottom - gap - k * (track_h + gap)
        layout[f"yaxis{k + 2}"] = {
            "domain": [max(hi - track_h, 0.0), hi], "range": [0, 1.1], "showticklabels": False,
            "fixedrange": True, "title": {"text": _esc(sp), "standoff": 4, "font": {
                "size": 12, "color": _REF_COLOURS[k % len(_REF_COLOURS)]}},
        }  # fmt: skip
        rows = [r for r in references if str(r["species"]) == sp]
        pos = np.array([float(r["position"]) for r in rows])
        h = _scaled(pos, np.array([float(r["expected_rel"]) for r in rows]), x_range)
        xs, ys = _stick_xy(pos, h)
        data.append(
            {
                "type": "scatter", "x": xs, "y": ys, "mode": "lines", "name": sp,
                "line": {"color": _REF_COLOURS[k % len(_REF_COLOURS)], "width": 1.4},
                "showlegend": False, "hoverinfo": "text",
                "hovertext": _hover([
                    f"{_esc(r['species'])} {float(r['position']):{fmt}} {unit}"
                    f"<br>expected relative intensity {float(r['expected_rel']):.3f}"
                    f"<br>{_esc(r.get('line_id'))} {_esc(r.get('transition') or '')}"
                    for r in rows
                ]),
                "xaxis": "x", "yaxis": axis,
            }
        )  # fmt: skip
    shapes = []
    interference = _merged(interference)
    if interference:
        # Bands across every panel (paper coordinates) and one legend entry for them all.
        shapes = [
            {"type": "rect", "xref": "x", "yref": "paper", "x0": lo, "x1": hi, "y0": 0,
             "y1": 1, "fillcolor": _INTERFERENCE_FILL, "line": {"width": 0}, "layer": "below"}
            for lo, hi, _ in interference
        ]  # fmt: skip
        data.append(
            {
                "type": "scatter", "x": [(lo + hi) / 2.0 for lo, hi, _ in interference],
                "y": [1.04] * len(interference), "mode": "markers", "name": "interfering pair",
                "marker": {"symbol": "diamond-tall", "color": _INTERFERENCE_MARK, "size": 8},
                "hovertext": [lbl for *_, lbl in interference], "hoverinfo": "text",
                "xaxis": "x", "yaxis": "y",
            }
        )  # fmt: skip
    last = f"y{len(tracks) + 1}" if tracks else "y"
    layout.update(
        {
            "xaxis": {"title": {"text": _esc(axis_title)}, "anchor": last, "showgrid": True,
                      "gridcolor": "#eeeeee", "tickformat": ",.0f" if unit == "eV" else None,
                      **({"range": [float(x_range[0]), float(x_range[1])]} if x_range else {})},
            "shapes": shapes,
            "height": height,
            "margin": {"l": 80, "r": 20, "t": 30, "b": 50},
            "legend": {"orientation": "h", "y": 1.06, "x": 0},
            "hovermode": "closest",
            "plot_bgcolor": "#ffffff",
        }
    )  # fmt: skip
    return go.Figure({"data": data, "layout": layout})


def timeline_figure(
    events: Sequence[Mapping[str, Any]], broken_seq: dict[str, int] | None = None
) -> Any:
    """Custody timeline: one row per item, one marker per event.

    Parameters
    ----------
    events : sequence of mapping
        Custody events as dicts (``item_number``, ``seq``, ``kind``, ``at``,
        ``actor``, ``from_party``, ``to_party``, ``seal_state``, ``note``).
    broken_seq : dict, optional
        Item number → sequence number of the first broken event (drawn in red).

    Returns
    -------
    plotly.graph_objects.Figure
    """
    import plotly.graph_objects as go

    broken_seq = broken_seq or {}
    symbols = {
        "received": "circle",
        "transferred": "arrow-right",
        "sealed": "square",
        "opened": "square-open",
        "sub-sampled": "triangle-down",
        "analysed": "star",
        "reported": "diamond",
        "returned": "arrow-left",
        "disposed": "x",
        "note": "circle-open",
        "correction": "hexagon-open",
    }
    fig = go.Figure()
    kinds = sorted({str(e["kind"]) for e in events})
    for kind in kinds:
        rows = [e for e in events if e["kind"] == kind]
        colours = [
            _BROKEN if broken_seq.get(str(e["item_number"])) == e["seq"] else "#0072b2"
            for e in rows
        ]
        fig.add_trace(
            go.Scatter(
                x=[str(e["at"]).replace("Z", "") for e in rows],
                y=[f"item {e['item_number']}" for e in rows],
                mode="markers",
                name=kind,
                marker={"symbol": symbols.get(kind, "circle"), "size": 12, "color": colours},
                hovertext=[
                    f"#{e['seq']} {_esc(e['kind'])} at {_esc(e['at'])}<br>by {_esc(e['actor'])}"
                    f"<br>from {_esc(e.get('from_party') or '-')} to "
                    f"{_esc(e.get('to_party') or '-')}<br>seal {_esc(e.get('seal_state'))}"
                    f"<br>{_esc((e.get('note') or '')[:160])}"
                    for e in rows
                ],
                hoverinfo="text",
            )
        )
    fig.update_layout(
        height=max(220, 80 + 50 * len({e["item_number"] for e in events})),
        margin={"l": 80, "r": 20, "t": 30, "b": 40},
        xaxis_title="time (UTC)",
        legend={"orientation": "h", "y": 1.15},
    )
    return fig


def boltzmann_figure(
    energy_eV: Sequence[float],
    ln_values: Sequence[float],
    fit_line: tuple[list[float], list[float]] | None,
    *,
    title: str,
) -> Any:
    """Boltzmann plot: ln(Iλ/gA) against upper-level energy, with the fitted line.

    Parameters
    ----------
    energy_eV, ln_values : sequence of float
        The plotted points.
    fit_line : (list, list) or None
        Two or more (x, y) points of the fitted line.
    title : str
        Plot title (species and temperature).

    Returns
    -------
    plotly.graph_objects.Figure
    """
    import plotly.graph_objects as go

    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=list(energy_eV), y=list(ln_values), mode="markers", name="lines",
            marker={"size": 9, "color": "#0072b2"},
        )
    )  # fmt: skip
    if fit_line is not None:
        fig.add_trace(
            go.Scatter(
                x=fit_line[0], y=fit_line[1], mode="lines", name="fit",
                line={"color": "#d55e00"},
            )
        )  # fmt: skip
    fig.update_layout(
        title=_esc(title),
        xaxis_title="upper-level energy E_k (eV)",
        yaxis_title="ln(I λ / g A)",
        height=360,
        margin={"l": 60, "r": 20, "t": 50, "b": 50},
    )
    return fig
