"""Display-only helpers for the app: decimation for plotting and plotly figures.

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
_INTERFERENCE_FILL = "rgba(213, 94, 0, 0.18)"
_BROKEN = "#c0392b"


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


def _stick_xy(pos: np.ndarray, height: np.ndarray) -> tuple[list, list]:
    xs: list[float | None] = []
    ys: list[float | None] = []
    for p, h in zip(pos.tolist(), height.tolist(), strict=True):
        xs += [p, p, None]
        ys += [0.0, h, None]
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
        xaxis_title=f"position ({unit})",
        yaxis_title=_esc(y_label),
        height=380,
        margin={"l": 60, "r": 20, "t": 30, "b": 50},
        legend={"orientation": "h", "y": 1.08},
    )
    return fig


def stick_figure(
    observed: Sequence[Mapping[str, Any]],
    references: Sequence[Mapping[str, Any]],
    *,
    unit: str,
    interference: Sequence[tuple[float, float, str]] = (),
    x_range: tuple[float, float] | None = None,
) -> Any:
    """Observed lines above the axis and chosen species' reference lines mirrored below.

    Parameters
    ----------
    observed : sequence of mapping
        One per observed line: ``position``, ``height`` (0–1), ``status``,
        ``assigned_to`` (text).
    references : sequence of mapping
        One per reference line: ``species``, ``ion_stage``, ``position``,
        ``expected_rel`` (0–1), ``line_id``, ``transition``.
    unit : str
        Axis unit (``"nm"`` or ``"eV"``).
    interference : sequence of (lo, hi, label)
        Position spans to shade (interfering pairs).
    x_range : (float, float), optional
        Initial zoom.

    Returns
    -------
    plotly.graph_objects.Figure
    """
    import plotly.graph_objects as go

    fig = go.Figure()
    for lo, hi, label in interference:
        fig.add_vrect(x0=lo, x1=hi, fillcolor=_INTERFERENCE_FILL, line_width=0, layer="below")
        fig.add_trace(
            go.Scatter(
                x=[(lo + hi) / 2.0],
                y=[1.08],
                mode="markers",
                marker={"symbol": "diamond", "color": "#d55e00", "size": 9},
                name="interference",
                showlegend=False,
                hovertext=[_esc(label)],
                hoverinfo="text",
            )
        )
    if observed:
        pos = np.array([float(o["position"]) for o in observed])
        h = np.array([float(o["height"]) for o in observed])
        xs, ys = _stick_xy(pos, h)
        fig.add_trace(
            go.Scatter(
                x=xs, y=ys, mode="lines", line={"color": _OBSERVED, "width": 1.6},
                name="observed", hoverinfo="skip",
            )
        )  # fmt: skip
        fig.add_trace(
            go.Scatter(
                x=pos,
                y=h,
                mode="markers",
                marker={"color": _OBSERVED, "size": 5},
                showlegend=False,
                name="observed",
                hovertext=[
                    f"observed {o['position']:.4f} {unit}<br>relative height {o['height']:.3f}"
                    f"<br>{_esc(o.get('status'))}: {_esc(o.get('assigned_to') or '-')}"
                    for o in observed
                ],
                hoverinfo="text",
            )
        )
    species = sorted({str(r["species"]) for r in references})
    for k, sp in enumerate(species):
        rows = [r for r in references if str(r["species"]) == sp]
        pos = np.array([float(r["position"]) for r in rows])
        h = -np.array([float(r["expected_rel"]) for r in rows])
        colour = _REF_COLOURS[k % len(_REF_COLOURS)]
        xs, ys = _stick_xy(pos, h)
        fig.add_trace(
            go.Scatter(
                x=xs, y=ys, mode="lines", line={"color": colour, "width": 1.4},
                name=f"{sp} (reference)", legendgroup=sp, hoverinfo="skip",
            )
        )  # fmt: skip
        fig.add_trace(
            go.Scatter(
                x=pos,
                y=h,
                mode="markers",
                marker={"color": colour, "size": 5},
                legendgroup=sp,
                showlegend=False,
                name=sp,
                hovertext=[
                    f"{_esc(r['species'])} (ion stage {_esc(r.get('ion_stage'))})"
                    f"<br>λ/E {float(r['position']):.4f} {unit}"
                    f"<br>expected relative intensity {float(r['expected_rel']):.3f}"
                    f"<br>{_esc(r.get('line_id'))} {_esc(r.get('transition') or '')}"
                    for r in rows
                ],
                hoverinfo="text",
            )
        )
    fig.add_hline(y=0.0, line={"color": "#666666", "width": 1})
    fig.update_layout(
        xaxis_title=f"position ({unit})",
        yaxis_title="observed (up) / expected reference (down), relative",
        yaxis={"range": [-1.15, 1.15]},
        height=460,
        margin={"l": 60, "r": 20, "t": 30, "b": 50},
        legend={"orientation": "h", "y": 1.1},
        hovermode="closest",
    )
    if x_range is not None:
        fig.update_xaxes(range=[float(x_range[0]), float(x_range[1])])
    return fig


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
