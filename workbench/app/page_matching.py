"""Line matching: element calls with evidence, interference warnings, stick spectra."""

from __future__ import annotations

import streamlit as st

from workbench.app import _display, _ui
from workbench.app import _services as sv

st.title("Line matching")
root = _ui.store_root()
number = _ui.current_case()
work = st.session_state.get("work")

# A saved analysis can be re-opened to look at, never changed (the store keeps it as saved).
with st.expander("Re-open a saved analysis (read-only)", expanded=work is None):
    with _ui.shown_errors(), sv.open_store(root) as store:
        saved_list = store.list_analyses(number) if number else []
        if not saved_list:
            st.caption("No saved analysis in this case.")
        else:
            by_id = {a.id: a for a in saved_list}
            pick = st.selectbox(
                "Saved analysis",
                list(by_id),
                index=len(by_id) - 1,
                format_func=lambda i: (
                    f"#{i} item {by_id[i].item_number}, by "
                    f"{by_id[i].analyst}, {by_id[i].created_at}"
                ),
                key="reopen_pick",
            )
            if st.button("Open read-only", key="reopen"):
                with _ui.shown_errors():
                    st.session_state["reopened"] = sv.reopen_analysis(store, pick)
reopened = st.session_state.get("reopened")
if reopened is not None and reopened.case_number != number:
    st.session_state.pop("reopened", None)  # another case was chosen in the sidebar
    reopened = None

if reopened is not None:
    st.info(
        f"Showing saved analysis #{reopened.analysis_id} of {sv.md_escape(reopened.case_number)}"
        f"/{sv.md_escape(reopened.item_number)} (by {sv.md_escape(reopened.analyst)}, "
        f"{reopened.created_at}), read-only. Reference lines come from the saved result."
    )
    if st.button("Close the saved analysis", key="close_reopened"):
        st.session_state.pop("reopened", None)
        st.rerun()
elif work is None:
    st.info("Read a measurement first (Measurement page).")
    st.page_link("page_measurement.py", label="Go to Measurement →")
    st.stop()

if reopened is None:
    from workbench.refdata import list_sets

    peaks0 = work.peaks
    axis = peaks0.axis
    u = "nm" if axis == "wavelength" else "eV"
    st.caption(
        f"Input {sv.md_escape(work.name)}: {peaks0.table.height} lines, {axis} axis ({u}), "
        f"{len(st.session_state.get('peak_edits', []))} edit(s) to the peak table."
    )
    _run_form = True
else:
    _run_form = False

if _run_form:
    with _ui.shown_errors():
        sets = [s for s in list_sets() if s["axis"] == axis]
    with st.form("match_settings"):
        c1, c2 = st.columns([2, 1])
        set_ids = c1.multiselect(
            "Reference sets",
            [s["id"] for s in sets],
            default=[s["id"] for s in sets][:1],
            format_func=lambda i: next(f"{s['id']} — {s['title']}" for s in sets if s["id"] == i),
        )
        mode = c2.selectbox(
            "Line kind", ["emission", "absorption"], index=0 if peaks0.mode == "emission" else 1
        )
        c3, c4, c5 = st.columns(3)
        tol_kind = c3.selectbox(
            "Tolerance rule",
            ["resolving_power", "fixed", "fwhm"],
            format_func={
                "resolving_power": "resolving power R (window λ/R)",
                "fixed": f"fixed half-window ({u})",
                "fwhm": "factor × each peak's FWHM",
            }.get,
        )
        tol_value = c4.number_input(
            "Tolerance value (R, half-window or factor)",
            min_value=0.0,
            value=5000.0 if axis == "wavelength" else 50.0,
            format="%.6g",
        )
        if axis == "wavelength":
            media = ["air", "vacuum"]
            medium = c5.selectbox(
                "Medium of the wavelengths", media, index=media.index(peaks0.medium or "air")
            )
        else:
            medium = None
            c5.text("Energy axis: no medium")
        c6, c7 = st.columns(2)
        estimate_t = c6.checkbox("Estimate temperature from the data (Boltzmann plot)", value=True)
        temperature = c7.number_input("Excitation temperature (K)", 500.0, 100000.0, 10000.0, 500.0)
        elements_txt = st.text_input("Only these elements (comma-separated, optional)")
        run = st.form_submit_button("Run matching", type="primary")

    if run:
        with _ui.shown_errors(), st.spinner("Matching against the reference sets…"):
            if (medium is not None and medium != peaks0.medium) or mode != peaks0.mode:
                source = sv.load_input(
                    work.data, work.name, **{**work.options, "medium": medium, "mode": mode}
                )
            else:
                source = work
            edits = st.session_state.get("peak_edits", [])
            peaks = sv.apply_peak_edits(source.peaks, edits)
            params = sv.build_parameters(
                tolerance_kind=tol_kind,
                tolerance_value=tol_value,
                temperature_K=None if estimate_t else temperature,
                mode=mode,
                elements=[e.strip() for e in elements_txt.split(",") if e.strip()] or None,
            )
            outcome = sv.run_matching(peaks, set_ids, params, spectrum=source.spectrum)
            st.session_state["outcome"] = outcome
            st.session_state["outcome_parameters"] = sv.analysis_parameters(
                params, source.options, sv.table_rows(source.peaks.table), edits, set_ids
            )
            st.session_state.pop("saved_analysis_id", None)
            st.session_state.pop("zoom_choice", None)

outcome = reopened if reopened is not None else st.session_state.get("outcome")
if outcome is None:
    _ui.cautions()
    st.info("Choose the settings and run the matching.")
    st.stop()

report = outcome.report
u = report["input"]["unit"]
warnings = report.get("warnings") or []
interf = [(k, w) for k, w in enumerate(warnings) if w.get("kind") in sv.INTERFERENCE_KINDS]
other = [(k, w) for k, w in enumerate(warnings) if w.get("kind") not in sv.INTERFERENCE_KINDS]

# Warnings first, counted, so that they cannot be missed.
if interf:
    st.error(
        f"{len(interf)} INTERFERENCE WARNING(S): lines of different elements overlap within "
        "the match window. Settle each with the interference-free lines named.",
    )
    for k, w in interf[:6]:
        cols = st.columns([8, 1])
        cols[0].error(sv.md_escape(w["message"]))
        if cols[1].button("Show", key=f"zoom_warning_{k}"):
            st.session_state["zoom_choice"] = f"warning {k + 1}"
    if len(interf) > 6:
        with st.expander(f"{len(interf) - 6} more interference warning(s)"):
            for k, w in interf[6:]:
                st.text(f"[{k + 1}] {w['message']}")
if other:
    st.warning(f"{len(other)} other warning(s):")
    for _k, w in other:
        st.warning(f"[{sv.md_escape(w['kind'])}] " + sv.md_escape(w["message"]))
_ui.cautions()

t = report.get("temperature") or {}
est = t.get("estimate") or {}
if est.get("temperature_K"):
    st.info(
        f"Working temperature {t['working_temperature_K']:.0f} K — Boltzmann plot of "
        f"{sv.md_escape(est['species'])}: {est['temperature_K']:.0f} ± "
        f"{est['uncertainty_K']:.0f} K (R² {est['r_squared']:.3f}, {est['n_lines']} lines)"
    )
else:
    st.info(f"Working temperature {t.get('working_temperature_K', 0):.0f} K")

s = report["summary"]
st.subheader("Element calls")
st.caption(
    f"{s['n_peaks']} observed lines: {s['n_assigned']} assigned, {s['n_shared']} shared, "
    f"{s['n_unassigned']} unassigned. Select a row to zoom the plot to its lines."
)
elements = report.get("elements") or []
show_all = st.checkbox("Also list species not supported", value=False)
listed = [el for el in elements if show_all or el["verdict_level"] > 0]
grid_rows = [
    {
        "species": el["species"],
        "verdict": el["verdict"],
        "score": el["score"],
        "strong found": f"{el['n_strong_found']}/{el['n_strong_in_range']}",
        "unique lines": el["n_unique_found"],
        "missing": len(el["missing_lines"]),
        "shared": len(el["shared_lines"]),
        "pattern r": el["pattern_r"],
        f"best lines ({u})": ", ".join(
            f"{m[f'reference_{u}']:.4f}"
            for m in sorted(el["matched_lines"], key=lambda m: -(m["expected_rel"] or 0))[:3]
        ),
    }
    for el in listed
]
event = st.dataframe(
    grid_rows, hide_index=True, on_select="rerun", selection_mode="single-row", key="el_grid"
)
picked_rows = list(getattr(getattr(event, "selection", None), "rows", []) or [])
if picked_rows:
    sp = listed[picked_rows[0]]["species"]
    if st.session_state.get("last_grid_pick") != sp:
        st.session_state["last_grid_pick"] = sp
        st.session_state["zoom_choice"] = f"element {sp}"

st.subheader("Observed and reference lines")
probable = [el["species"] for el in elements if el["verdict_level"] >= 2][:4]
all_species = [el["species"] for el in elements]
chosen = st.multiselect("Reference lines of", all_species, default=probable, key="stick_species")
zoom_options = ["whole range"] + [f"element {sp}" for sp in all_species]
zoom_options += [f"warning {k + 1}" for k in range(len(warnings))]
if st.session_state.get("zoom_choice") not in zoom_options:
    st.session_state["zoom_choice"] = "whole range"
zoom = st.selectbox("Zoom to", zoom_options, key="zoom_choice")
x_range = None
if zoom.startswith("element "):
    x_range = sv.zoom_range(report, species=zoom[len("element ") :])
elif zoom.startswith("warning "):
    x_range = sv.zoom_range(report, warning_index=int(zoom.split()[1]) - 1)
refs = (
    sv.report_reference_lines(report, chosen)
    if outcome.result is None
    else sv.reference_lines(outcome.result, chosen)
)
fig = _display.stick_figure(
    sv.observed_sticks(report), refs, unit=u, interference=sv.interference_spans(report),
    x_range=x_range,
)  # fmt: skip
st.plotly_chart(fig, key="stick_plot")
st.caption(
    "Observed lines point up (height relative to the strongest); reference lines of the chosen "
    "species point down (expected relative intensity at the working temperature). Shaded bands "
    "mark interfering pairs. Drag to zoom, double-click to reset."
)

if zoom.startswith("element "):
    sp = zoom[len("element ") :]
    el = next((e for e in elements if e["species"] == sp), None)
    if el is not None:
        st.markdown("**Evidence for " + sv.md_escape(sp) + "** — " + sv.md_escape(el["verdict"]))
        c1, c2 = st.columns(2)
        c1.caption("Matched lines")
        c1.dataframe(
            [
                {k: m.get(k) for k in (f"observed_{u}", f"reference_{u}", f"delta_{u}",
                                       "expected_rel", "observed_rel", "shared", "line_id")}
                for m in el["matched_lines"]
            ],
            hide_index=True,
        )  # fmt: skip
        c2.caption("Expected but missing")
        c2.dataframe(
            [
                {k: m.get(k) for k in (f"reference_{u}", "expected_rel", "line_id")}
                for m in el["missing_lines"]
            ],
            hide_index=True,
        )

plot = est.get("plot") or {}
if est.get("temperature_K") and plot.get("E_upper_eV"):
    st.subheader("Boltzmann plot")
    st.plotly_chart(
        _display.boltzmann_figure(
            plot["E_upper_eV"],
            plot["ln_I_lambda_over_gA"],
            sv.boltzmann_fit_line(report),
            title=f"{est['species']}: T = {est['temperature_K']:.0f} ± "
            f"{est['uncertainty_K']:.0f} K",
        ),
        key="boltzmann_plot",
    )

with st.expander("Unassigned and shared lines"):
    st.dataframe(
        [
            {f"observed_{u}": ln[f"observed_{u}"], "status": ln["status"],
             "assigned to": ", ".join(ln["assigned_to"]), "candidates": ln["n_candidates"]}
            for ln in report.get("lines") or [] if ln["status"] != "assigned"
        ],
        hide_index=True,
    )  # fmt: skip

st.subheader("Record")
st.download_button(
    "Download result (JSON)", outcome.json_bytes, file_name="match-result.json",
    mime="application/json",
)  # fmt: skip
mid = st.session_state.get("work_measurement_id")
saved = st.session_state.get("saved_analysis_id")
if reopened is not None:
    st.caption("Saved analyses cannot be changed; run a new analysis to revise it.")
elif saved:
    st.success(f"Saved as analysis #{saved}. Draft a findings sheet on the Findings page.")
    st.page_link("page_findings.py", label="Go to Findings →")
elif mid is None:
    st.info("Store the input as a measurement (Measurement page) to save this analysis.")
else:
    analyst = st.text_input("Analyst (your name)", key="analysis_analyst")
    if st.button("Save analysis to the case", key="save_analysis"):
        with _ui.shown_errors(), sv.open_store(root) as store:
            rec = sv.save_analysis(
                store, mid, outcome, st.session_state["outcome_parameters"], analyst
            )
            st.session_state["saved_analysis_id"] = rec.id
            st.rerun()
