"""Element maps: map a cube, look at one family or three as RGB, match a drawn region.

All decisions are made by :mod:`workbench.maps`; the page collects choices.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import streamlit as st

from workbench.app import _ui

st.title("Element maps")

from workbench.maps import Runner, load_instrument, open_cube, run_maps  # noqa: E402
from workbench.maps import figures as fg  # noqa: E402
from workbench.maps.region import region_csv, region_spectrum  # noqa: E402

st.caption(
    "Maps show fitted counts per element family, not concentrations. A family is mapped only "
    "when the engine calls it in the sum or maximum-pixel spectrum and it passes the "
    "detection screen."
)

source = st.radio(
    "Cube", ["Demo painting (invented)", "Path on this machine", "Upload"], horizontal=True
)
cube_path: Path | None = None
instrument = None
with _ui.shown_errors():
    if source.startswith("Demo"):
        from workbench.maps.demo import DEMO_INSTRUMENT, DEMO_TITLE, write_demo_cube

        st.info(DEMO_TITLE, icon=":material/palette:")
        tmp = Path(st.session_state.setdefault("maps_tmp", tempfile.mkdtemp(prefix="wb-maps-")))
        cube_path = tmp / "demo_painting.h5"
        if not cube_path.exists():
            write_demo_cube(cube_path)
        instrument = DEMO_INSTRUMENT
    else:
        if source == "Upload":
            up = st.file_uploader("Cube file (.h5, .hdf5, .nxs, .npy)", key="maps_upload")
            if up is not None:
                tmp = Path(
                    st.session_state.setdefault("maps_tmp", tempfile.mkdtemp(prefix="wb-maps-"))
                )
                cube_path = tmp / Path(up.name).name
                cube_path.write_bytes(up.getvalue())
        else:
            text = st.text_input("Path of the cube (file or Zarr directory)", key="maps_path")
            cube_path = Path(text) if text else None
        inst_text = st.text_input("Instrument description (JSON path, optional)", key="maps_inst")
        instrument = load_instrument(inst_text or None)

    if cube_path is not None and st.button("Make maps", type="primary"):
        bar = st.progress(0.0, text="starting")

        def _progress(done: int, total: int, label: str) -> None:
            bar.progress(done / max(total, 1), text=f"{label}: {done}/{total} chunks")

        cube = open_cube(cube_path, instrument=instrument)
        with Runner("threads", progress=_progress) as runner:
            st.session_state["maps_result"] = run_maps(cube, runner, instrument=instrument)
        st.session_state["maps_cube"] = cube

result = st.session_state.get("maps_result")
cube = st.session_state.get("maps_cube")
if result is None or cube is None:
    st.stop()
if not result.families:
    st.warning("No element family passed identification and the detection screen.")
    st.stop()

single, rgb = st.tabs(["One family", "RGB overlay"])
with single, _ui.shown_errors():
    c1, c2, c3 = st.columns(3)
    species = c1.selectbox("Family", result.families, key="maps_family")
    layer = c2.selectbox("Show", list(fg.LAYERS), key="maps_layer")
    scale = c3.selectbox("Colour scale", ["Viridis", "Cividis", "Inferno", "Greys"])
    z = getattr(result, fg.LAYERS[layer])[result.family_index(species)]
    lo, hi = float(z.min()), float(z.max())
    zr = st.slider("Colour range", lo, max(hi, lo + 1.0), (lo, max(hi, lo + 1.0)))
    event = st.plotly_chart(
        fg.map_figure(result, species, layer=layer, colorscale=scale, zrange=zr),
        on_select="rerun",
        selection_mode="box",
        key="maps_chart",
    )
    boxes = (event or {}).get("selection", {}).get("box", []) if event else []
    if boxes:
        y0, y1, x0, x1 = fg.box_to_pixels(boxes[0], result.chi2.shape)
        counts = region_spectrum(cube, y0, y1, x0, x1)
        st.plotly_chart(
            fg.spectrum_figure(
                result.energy_eV, counts, f"Sum of pixels y {y0}–{y1 - 1}, x {x0}–{x1 - 1}"
            )
        )
        if st.button("Send this region to line matching"):
            name, data = region_csv(cube, y0, y1, x0, x1)
            _ui.clear_input()
            st.session_state["work"] = _ui.load_input_cached(data, name, ())
            st.switch_page("page_matching.py")
    else:
        st.caption("Draw a rectangle on the map (box select) to see that region's sum spectrum.")

with rgb, _ui.shown_errors():
    fams = result.families
    cols = st.columns(3)
    picks = [
        cols[i].selectbox(c, fams, index=min(i, len(fams) - 1), key=f"maps_rgb_{c}")
        for i, c in enumerate(("Red", "Green", "Blue"))
    ]
    st.plotly_chart(fg.rgb_figure(result, picks))

with st.expander("Identification and screening"):
    st.json(result.screening)
    st.caption(
        f"Ran on {result.runner}; stage times (s): "
        + ", ".join(f"{k} {v:.2f}" for k, v in result.timings_s.items())
    )
