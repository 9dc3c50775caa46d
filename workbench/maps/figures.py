"""Plotly figures of map results (used by the app's maps page; no Streamlit here)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from workbench.errors import InputError
from workbench.maps.pipeline import MapResult
from workbench.maps.store import rgb_overlay

__all__ = ["LAYERS", "box_to_pixels", "map_figure", "rgb_figure", "spectrum_figure"]

#: What a map can show, by label → MapResult attribute.
LAYERS: dict[str, str] = {
    "fitted counts": "maps",
    "standard uncertainty": "sigma",
    "ROI preview (net counts)": "roi",
}


def map_figure(
    result: MapResult,
    species: str,
    *,
    layer: str = "fitted counts",
    colorscale: str = "Viridis",
    zrange: tuple[float, float] | None = None,
) -> Any:
    """Heat map of one family; hover shows pixel (x, y), value and its uncertainty.

    Parameters
    ----------
    result : MapResult
        Pipeline output.
    species : str
        Family label (``"Pb L"``).
    layer : str
        A key of :data:`LAYERS`.
    colorscale : str
        A Plotly colour scale name.
    zrange : (float, float), optional
        Colour-scale limits (default: data range).

    Returns
    -------
    plotly.graph_objects.Figure
    """
    import plotly.graph_objects as go

    if layer not in LAYERS:
        raise InputError(f"unknown layer {layer!r}", f"choose one of {list(LAYERS)}")
    k = result.family_index(species)
    z = getattr(result, LAYERS[layer])[k]
    sigma = result.sigma[k]
    fig = go.Figure(
        go.Heatmap(
            z=z,
            customdata=sigma,
            colorscale=colorscale,
            zmin=zrange[0] if zrange else None,
            zmax=zrange[1] if zrange else None,
            colorbar={"title": "counts"},
            hovertemplate="x %{x}, y %{y}<br>%{z:.1f} (σ of fit %{customdata:.1f})"
            "<extra>" + species + "</extra>",
        )
    )
    fig.update_yaxes(autorange="reversed", scaleanchor="x", title="y (pixel)")
    fig.update_xaxes(title="x (pixel)")
    fig.update_layout(title=f"{species}: {layer}", dragmode="select", height=520)
    return fig


def rgb_figure(result: MapResult, families: Sequence[str]) -> Any:
    """Three families as red, green and blue (each scaled to its own 1st–99.5th percentile)."""
    import plotly.graph_objects as go

    if len(families) != 3:
        raise InputError(
            f"an RGB overlay needs three families, got {len(families)}",
            "choose one family each for red, green and blue",
        )
    img = rgb_overlay(*(result.maps[result.family_index(s)] for s in families))
    fig = go.Figure(go.Image(z=img, hovertemplate="x %{x}, y %{y}<extra></extra>"))
    fig.update_layout(title=f"R {families[0]} · G {families[1]} · B {families[2]}", height=520)
    return fig


def box_to_pixels(box: Mapping[str, Any], shape: tuple[int, int]) -> tuple[int, int, int, int]:
    """Pixel bounds ``(y0, y1, x0, x1)`` (half-open) of a Plotly box selection.

    Plotly reports the box in axis units with pixel centres at integers, so a
    pixel is inside when its centre is.
    """
    xs, ys = box.get("x") or [], box.get("y") or []
    if len(xs) < 2 or len(ys) < 2:
        raise InputError("the selection is not a rectangle", "draw a box on the map")
    x0, x1 = sorted(float(v) for v in xs[:2])
    y0, y1 = sorted(float(v) for v in ys[:2])
    ny, nx = shape
    xa, xb = max(int(np.ceil(x0)), 0), min(int(np.floor(x1)) + 1, nx)
    ya, yb = max(int(np.ceil(y0)), 0), min(int(np.floor(y1)) + 1, ny)
    return ya, yb, xa, xb


def spectrum_figure(energy_eV: np.ndarray, counts: np.ndarray, title: str) -> Any:
    """Line plot of a spectrum (keV, counts, logarithmic counts axis)."""
    import plotly.graph_objects as go

    fig = go.Figure(
        go.Scatter(
            x=np.asarray(energy_eV) / 1000, y=np.maximum(counts, 0.5), mode="lines", name="counts"
        )
    )
    fig.update_layout(
        title=title, xaxis_title="energy (keV)", yaxis_title="counts", yaxis_type="log", height=320
    )
    return fig
