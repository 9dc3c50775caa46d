"""Measurement: read a spectrum or peak list, check how it was read, correct the peak table."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import streamlit as st

from workbench.app import _ui, figures, forms, inputs, store_access
from workbench.io import INPUT_FORMATS

st.title("Measurement")
root = _ui.store_root()
number = _ui.current_case()

TECHNIQUES = ("LIBS", "spark OES", "ICP-OES", "XRF", "absorption", "other")


def _read(data: bytes, name: str, measurement_id: int | None, item: str | None) -> None:
    _ui.clear_input()
    opts = st.session_state.get("read_options", {})
    work = _ui.load_input_cached(data, name, tuple(sorted(opts.items())))
    st.session_state["work"] = work
    st.session_state["work_measurement_id"] = measurement_id
    st.session_state["work_item"] = item
    st.session_state["editor_generation"] = st.session_state.get("editor_generation", 0) + 1


with st.expander("Reading options", expanded=False):
    c1, c2, c3 = st.columns(3)
    kind = c1.selectbox("File holds", ["detect", "peak_list", "spectrum"], key="opt_kind")
    unit = c2.selectbox(
        "Position unit", ["as stated", "nm", "Å", "µm", "cm-1", "eV", "keV"], key="opt_unit"
    )
    medium = c3.selectbox("Medium of wavelengths", ["as stated", "air", "vacuum"], key="opt_med")
    c4, c5, c6 = st.columns(3)
    mode = c4.selectbox("Line kind", ["emission", "absorption"], key="opt_mode")
    min_snr = c5.number_input("Peak threshold (× noise σ)", 1.0, 100.0, 5.0, 0.5, key="opt_snr")
    cols_txt = c6.text_input(
        "Columns by header (optional)", placeholder="intensity=global", key="opt_cols"
    )
    block_txt = st.text_input(
        "Block or sheet (optional)",
        placeholder="JCAMP-DX block or workbook sheet: 0-based index or name",
        key="opt_block",
    )
    st.session_state["read_options"] = {
        "kind": None if kind == "detect" else kind,
        "unit": None if unit == "as stated" else unit,
        "medium": None if medium == "as stated" else medium,
        "mode": mode,
        "min_snr": float(min_snr),
        "columns": cols_txt.strip() or None,
        "block": block_txt.strip() or None,
    }

with _ui.shown_errors(), store_access.open_store(root) as store:
    items = store.list_items(number) if number else []
    measurements = store.list_measurements(number) if number else []
    src_stored, src_upload, src_paste = st.tabs(
        ["Stored measurement", "Upload a file", "Paste from a spreadsheet"]
    )
    with src_stored:
        if not measurements:
            st.caption("No stored measurement in this case yet.")
        else:
            labels = {
                f"#{m.id} item {m.item_number}: {m.filename} ({m.technique})": m.id
                for m in measurements
            }
            chosen = st.selectbox("Measurement", list(labels), key="pick_measurement")
            if st.button("Read stored measurement", key="read_stored"):
                with _ui.shown_errors():
                    m = store.get_measurement(labels[chosen])
                    _read(
                        store.file_bytes(m.sha256),
                        m.filename,
                        m.id,
                        f"{m.case_number}/{m.item_number}",
                    )
    with src_upload:
        up = st.file_uploader(
            f"Spectrum or peak list ({INPUT_FORMATS})",
            key="upload",
        )
        if up is not None and st.button("Read uploaded file", key="read_upload"):
            with _ui.shown_errors():
                _read(up.getvalue(), up.name, None, None)
    with src_paste:
        pasted = st.text_area(
            "Paste cells copied from a spreadsheet (with the header row)", key="paste", height=150
        )
        if st.button("Read pasted table", key="read_paste"):
            with _ui.shown_errors():
                _read(pasted.encode("utf-8"), "<pasted>", None, None)

    work = st.session_state.get("work")
    if work is None:
        st.info("Read a measurement to continue.")
        st.stop()

    peaks = work.peaks
    unit_txt = "nm" if peaks.axis == "wavelength" else "eV"
    st.subheader("Input: " + _ui.plain(work.name))
    medium_txt = peaks.medium or "n/a (energy axis)"
    st.text(
        f"SHA-256 {work.sha256}\n{peaks.axis} axis in {unit_txt}, medium {medium_txt}, "
        f"{peaks.mode}; {'spectrum' if work.spectrum is not None else 'peak list'} "
        f"with {peaks.table.height} lines"
    )
    with st.expander("How the file was read (column mapping, units, assumptions)", expanded=True):
        for note in work.notes:
            if "assum" in note.lower():
                st.warning(_ui.plain(note))
            else:
                st.text("• " + note)
        if work.mapping:
            st.dataframe(
                [
                    {"column in file": k, "used as": v.get("role"), "unit": v.get("unit") or "",
                     "match score": v.get("score")}
                    for k, v in work.mapping.items()
                ],
                hide_index=True,
            )  # fmt: skip

    # Storing an uploaded or pasted input as a measurement of an item.
    mid = st.session_state.get("work_measurement_id")
    if mid is None:
        if not items:
            st.caption("Not stored. Register an item to store this input as its measurement.")
        else:
            with st.expander("Store this input as a measurement", expanded=True):
                with st.form("store_measurement"):
                    c1, c2 = st.columns(2)
                    item = c1.selectbox("Item measured", [i.item_number for i in items])
                    technique = c2.selectbox("Technique", TECHNIQUES)
                    c3, c4 = st.columns(2)
                    instrument = c3.text_input("Instrument")
                    operator = c4.text_input("Operator")
                    measured_at = st.datetime_input(
                        "Measured at (laboratory time)", value=forms.lab_now(), key="measured_at"
                    )
                    settings_txt = st.text_area("Instrument settings (JSON object)", "{}")
                    go = st.form_submit_button("Store measurement")
                if go:
                    with _ui.shown_errors():
                        try:
                            settings = json.loads(settings_txt or "{}")
                        except ValueError as exc:
                            from workbench.errors import InputError

                            raise InputError(
                                f"instrument settings are not JSON ({exc})",
                                'write them as {"name": value, ...}',
                            ) from exc
                        rec = store.add_measurement(
                            (number, item), work.data, work.name, technique, instrument,
                            settings, operator, forms.lab_time(measured_at, "measurement time"),
                        )  # fmt: skip
                        st.session_state["work_measurement_id"] = rec.id
                        st.session_state["work_item"] = f"{number}/{item}"
                        st.success(f"Stored as measurement #{rec.id}.")
    else:
        st.success(f"Stored measurement #{mid} of {_ui.plain(st.session_state.get('work_item'))}.")

    if work.spectrum is not None:
        sp = work.spectrum
        px = peaks.positions
        py = np.interp(px, sp.x, sp.y) if px.size else px
        base = peaks.extra.get("baseline") if isinstance(peaks.extra, dict) else None
        st.plotly_chart(
            figures.spectrum_figure(
                sp.x, sp.y, unit=unit_txt, peaks_x=px, peaks_y=py, baseline=base,
                y_label=sp.y_label,
            ),
            key="spectrum_preview",
        )  # fmt: skip
        st.caption(
            f"{sp.x.size:,} points; the plot shows at most {2 * figures.DEFAULT_BUCKETS:,} "
            "(minimum and maximum per pixel). Peak finding and matching use every point."
        )

    st.subheader("Peak table")
    st.caption(
        "Add, delete or correct rows. The original table and every edit (old and new value) "
        "are kept with the analysis when it is saved."
    )
    original = inputs.table_rows(peaks.table)
    frame = pd.DataFrame(original, columns=list(peaks.table.columns))
    key = f"peak_editor_{st.session_state.get('editor_generation', 0)}"
    st.data_editor(frame, num_rows="dynamic", key=key, hide_index=False)
    edits = inputs.peak_edits(original, st.session_state.get(key))
    st.session_state["peak_edits"] = edits
    with _ui.shown_errors():
        edited = inputs.apply_peak_edits(peaks, edits)
        st.caption(f"{len(edits)} edit(s); {edited.table.height} lines go to matching.")
    if edits:
        st.dataframe(
            [
                {
                    "edit": e["action"],
                    "row": e.get("row", ""),
                    "column": e.get("column", ""),
                    "old": json.dumps(e.get("old"), ensure_ascii=False),
                    "new": json.dumps(e.get("new"), ensure_ascii=False),
                }
                for e in edits
            ],
            hide_index=True,
        )
    st.page_link("page_matching.py", label="Go to line matching →")
