"""Line matching: results first (summary, element calls, interferences), then the stick plot.

The engine runs in a worker process (:mod:`workbench.app.runs`); this page
only collects settings, polls the run and shows the result, shaped by
:mod:`workbench.matching.presentation`.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from workbench.app import _ui, figures, forms, runs, store_access
from workbench.app.inputs import apply_peak_edits, table_rows
from workbench.matching import presentation as pr
from workbench.matching import xrf_view

st.title("Line matching")
root = _ui.store_root()
number = _ui.current_case()
work = st.session_state.get("work")

# A result belongs to the input it was made from: a new input clears it.
_view_input = st.session_state.get("view_input_sha")
if work is not None and _view_input is not None and _view_input != work.sha256:
    for _k in ("view", "view_input_sha", "outcome_parameters", "saved_analysis_id", "focus"):
        st.session_state.pop(_k, None)

reopened = st.session_state.get("reopened")
if reopened is not None and reopened.case_number != number:
    st.session_state.pop("reopened", None)  # another case was chosen in the sidebar
    reopened = None
view = reopened.view if reopened is not None else st.session_state.get("view")

with st.expander("Re-open a saved analysis (read-only)", expanded=work is None and view is None):
    with _ui.shown_errors(), store_access.open_store(root) as store:
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
                    st.session_state["reopened"] = store_access.reopen_analysis(store, pick)
                    st.session_state.pop("focus", None)
                    st.rerun()

if reopened is not None:
    st.info(
        f"Showing saved analysis #{reopened.analysis_id} of {_ui.plain(reopened.case_number)}"
        f"/{_ui.plain(reopened.item_number)} (by {_ui.plain(reopened.analyst)}, "
        f"{_ui.plain(reopened.created_at)}), read-only. Reference lines come from the saved result."
    )
    if st.button("Close the saved analysis", key="close_reopened"):
        st.session_state.pop("reopened", None)
        st.session_state.pop("focus", None)
        st.rerun()
elif work is None:
    st.info("Read a measurement first (Measurement page).")
    st.page_link("page_measurement.py", label="Go to Measurement →")
    st.stop()


# ----------------------------------------------------------------------------- settings and run

#: Seconds the page waits for a run before showing progress instead (the run is in a worker).
QUICK_RUN_S = 2.5


@st.fragment
def _settings() -> None:
    """The run settings; a fragment so that changing a field reruns only this part."""
    from workbench.refdata import list_sets

    peaks0 = work.peaks
    axis = peaks0.axis
    u = "nm" if axis == "wavelength" else "eV"
    st.caption(
        f"Input {_ui.plain(work.name)}: {peaks0.table.height} lines, {axis} axis ({u}), "
        f"{len(st.session_state.get('peak_edits', []))} edit(s) to the peak table."
    )
    with _ui.shown_errors():
        sets = [s for s in list_sets() if s["axis"] == axis]
    c1, c2, c3 = st.columns([3, 1, 1])
    ids = [s["id"] for s in sets]
    set_ids = c1.multiselect(
        "Reference sets",
        ids,
        default=ids[:1],
        format_func=lambda i: next(f"{s['id']} — {s['title']}" for s in sets if s["id"] == i),
        key="run_sets",
    )
    mode = c2.selectbox(
        "Line kind",
        ["emission", "absorption"],
        index=0 if peaks0.mode == "emission" else 1,
        key="run_mode",
    )
    medium = None
    if axis == "wavelength":
        media = ["air", "vacuum"]
        medium = c3.selectbox(
            "Medium of the wavelengths",
            media,
            index=media.index(peaks0.medium or "air"),
            key="run_medium",
        )
    else:
        c3.text("Energy axis: no medium")
    rules = runs.tolerance_rules(axis)
    c4, c5 = st.columns([2, 2])
    rule = c4.selectbox(
        "Tolerance rule",
        rules,
        format_func=lambda r: (
            "auto (as the CLI: peak widths, else the axis default)"
            if r == "auto"
            else runs.TOLERANCE_FIELDS[(axis, r)].label
        ),
        key=f"run_rule_{axis}",
    )
    value = None
    if rule != "auto":
        f = runs.TOLERANCE_FIELDS[(axis, rule)]
        # Each rule keeps its own value (its own widget key), so switching rules never
        # carries one rule's number into another's field.
        value = c5.number_input(
            f.label, value=f.default, format="%.6g", key=f"run_tol_{axis}_{rule}",
            help=f"Accepted {f.low:g}–{f.high:g} {f.unit}; {f.hint}.",
        )  # fmt: skip
    else:
        c5.caption("The engine records which rule 'auto' used.")
    temperature = None
    if axis == "wavelength":
        c6, c7 = st.columns(2)
        estimate_t = c6.checkbox(
            "Estimate temperature from the data (Boltzmann plot)", value=True, key="run_est"
        )
        t_in = c7.number_input(
            "Excitation temperature (K)", 500.0, 100000.0, 10000.0, 500.0, key="run_T",
            disabled=estimate_t,
        )  # fmt: skip
        temperature = None if estimate_t else t_in
    elements_txt = st.text_input("Only these elements (comma-separated, optional)", key="run_el")
    if st.button("Run matching", type="primary", key="run_go"):
        with _ui.shown_errors():
            # Bounds and the library's own checks run here, before any worker starts.
            params = runs.build_parameters(
                axis=axis,
                tolerance_rule=rule,
                tolerance_value=value,
                temperature_K=temperature,
                mode=mode,
                elements=forms.parse_elements(elements_txt),
            )
            source = work
            if (medium is not None and medium != peaks0.medium) or mode != peaks0.mode:
                opts = {**work.options, "medium": medium, "mode": mode}
                source = _ui.load_input_cached(work.data, work.name, tuple(sorted(opts.items())))
            edits = st.session_state.get("peak_edits", [])
            peaks = apply_peak_edits(source.peaks, edits)
            parameters = runs.analysis_parameters(
                params, source.options, table_rows(source.peaks.table), edits, set_ids
            )
            key = runs.ResultCache.key(work.sha256, parameters)
            cached = _ui.result_cache().get(key)
            if cached is not None:  # the same input and settings ran before: no new run
                _show_view(cached, parameters, key, "Shown from a run with the same settings.")
            else:
                handle = runs.start_run(
                    runs.RunRequest(peaks, tuple(set_ids), params, source.spectrum)
                )
                # A quick run is shown at once; a longer one gets the progress display.
                state = handle.wait(QUICK_RUN_S)
                if state == "done":
                    _show_view(
                        handle.view, parameters, key, f"Matched in {handle.elapsed_s:.1f} s."
                    )
                elif state == "failed":
                    raise handle.error  # type: ignore[misc]
                else:
                    st.session_state["run"] = handle
                    st.session_state["run_parameters"] = parameters
                    st.session_state["run_key"] = key
            st.rerun()


def _show_view(view: pr.MatchView, parameters: dict, key: str, note: str) -> None:
    """Make a finished run the page's result (and remember it for identical runs)."""
    _ui.result_cache().put(key, view)
    st.session_state["view"] = view
    st.session_state["view_input_sha"] = work.sha256
    st.session_state["outcome_parameters"] = parameters
    st.session_state["run_note"] = note
    for k in ("saved_analysis_id", "focus", "tracks", "el_grid", "last_grid_pick"):
        st.session_state.pop(k, None)


def _cancel_run() -> None:
    """Cancel button callback (runs before the page's rerun, so a click is never lost)."""
    handle = st.session_state.pop("run", None)
    if handle is not None:
        handle.cancel()
        st.session_state["run_note"] = f"Run cancelled after {handle.elapsed_s:.1f} s."


@st.fragment(run_every=0.5)
def _run_status() -> None:
    """Progress and elapsed time of the run in its worker process.

    The fragment alone reruns while the worker goes on. When the run ends it asks for a
    whole-page rerun to show the outcome, and asks again on every tick until a whole-page
    run has taken it (``run_ended`` is cleared only there): a fragment's request for a
    page rerun can be dropped when it meets another rerun, and the page must not stay
    on an empty progress area.
    """
    handle = st.session_state.get("run")
    if handle is not None:
        state = handle.poll()
        if state == "running":
            st.progress(handle.fraction, text=f"{handle.stage} — {handle.elapsed_s:.1f} s elapsed")
            return
        st.session_state.pop("run", None)
        if state == "done":
            _show_view(
                handle.view,
                st.session_state.pop("run_parameters", None),
                st.session_state.pop("run_key", ""),
                f"Matched in {handle.elapsed_s:.1f} s.",
            )
        elif handle.error is not None:
            st.session_state["run_error"] = str(handle.error)
        st.session_state["run_ended"] = True
    if st.session_state.get("run_ended"):
        st.rerun(scope="app")


st.session_state.pop("run_ended", None)  # this whole-page run shows any run's outcome
if reopened is None:
    with st.expander("Run settings", expanded=view is None):
        _settings()
    if st.session_state.get("run") is not None:
        _run_status()
        # Outside the fragment: a click is an ordinary page rerun, which is never merged
        # into the fragment's own timed reruns; the callback stops the worker first.
        st.button("Cancel the run", key="run_cancel", on_click=_cancel_run)
    if st.session_state.get("run_error"):
        st.error(_ui.plain(st.session_state.pop("run_error")), icon=":material/error:")
    if st.session_state.get("run_note"):
        st.caption(st.session_state["run_note"])

if view is None:
    _ui.cautions(expanded=True)
    st.info("Choose the settings and run the matching.")
    st.stop()


# ----------------------------------------------------------------------------- results

report = view.report
summary = pr.result_summary(report)
u = summary.unit
energy_axis = summary.axis == "energy"


def _names(level: str) -> str:
    got = summary.by_verdict.get(level) or []
    return ", ".join(got) if got else "none"


n_possible = len(summary.by_verdict.get("possible") or [])
st.markdown(
    f"**Established:** {_names('established')}  \n**Probable:** {_names('probable')}  \n"
    f"Possible: {n_possible} species (listed in the grid) · {summary.n_peaks} observed lines: "
    f"{summary.n_assigned} assigned, {summary.n_shared} shared, {summary.n_unassigned} "
    f"unassigned"
)
st.caption(
    ("" if energy_axis else f"Working temperature: {summary.temperature_text}. ")
    + f"Wavelength/energy scale: {summary.calibration_text}."
)


def _focus_species() -> list[str]:
    focus = st.session_state.get("focus")
    if focus is None:
        return []
    if focus[0] == "species":
        return [focus[1]]
    return pr.warning_species(report, int(focus[1]))


@st.fragment
def _results() -> None:
    """Element grid, interferences and the plot; a fragment so a selection reruns only this."""
    st.subheader("Element calls")
    show_all = st.toggle("Also list species not supported", value=False, key="grid_all")
    rows = pr.element_rows(report, include_unsupported=show_all)
    frame = pd.DataFrame(rows)
    frame.index = pd.RangeIndex(1, len(rows) + 1, name="#")  # rows counted from 1
    event = st.dataframe(
        frame,
        on_select="rerun",
        selection_mode="single-row",
        key="el_grid",
        hide_index=False,
        height=min(38 + 35 * len(rows), 320),
        width="stretch",
    )
    picked = list(getattr(getattr(event, "selection", None), "rows", []) or [])
    if picked and picked[0] < len(rows):
        sp = rows[picked[0]]["Species"]
        if st.session_state.get("last_grid_pick") != sp:
            st.session_state["last_grid_pick"] = sp
            st.session_state["focus"] = ("species", sp)
            st.session_state["tracks"] = [sp]
    st.caption("Select a row to draw that species' track and zoom the plot to its lines.")

    groups = pr.interference_groups(report)
    warnings = report.get("warnings") or []
    xray = report.get("xray")
    if groups:
        first = [g for g in groups if g.touches_probable]
        rest = [g for g in groups if not g.touches_probable]
        st.subheader(f"Interferences at {len(groups)} observed line(s)")
        st.caption(
            (
                "Lines of different X-ray families in one peak (closer than the detector's FWHM). "
                if energy_axis
                else "Lines of different species within one match window. "
            )
            + "Groups touching a call of probable or better come first; settle each with the "
            "interference-free lines."
        )

        def _group(g: pr.InterferenceGroup, k: int) -> None:
            where = (
                f"{pr.format_position(g.position, u)} {u}"
                if g.position is not None
                else "reference lines"
            )
            c1, c2 = st.columns([9, 1])
            c1.markdown(
                f"**{where}** — "
                + "; ".join(
                    _ui.plain(pr.overlap_text(warnings[i], u, xray)) for i in g.warning_indices
                )
            )
            if c2.button("Show", key=f"show_{k}"):
                st.session_state["focus"] = ("warning", g.warning_indices[0])
                st.session_state["tracks"] = list(g.species)

        for k, g in enumerate(first[:8]):
            _group(g, k)

        more = first[8:] + rest
        if more:
            label = f"{len(more)} more interference group(s)"
            if rest:
                label += f" ({len(rest)} touching only possible or weaker calls)"
            with st.expander(label):
                # One table and one picker instead of a button per group: cheap to redraw.
                st.dataframe(
                    _numbered(
                        [
                            {
                                f"Observed ({u})": pr.format_position(g.position, u),
                                "Species": ", ".join(g.species),
                                "Overlap": "; ".join(
                                    pr.overlap_text(warnings[i], u, xray) for i in g.warning_indices
                                ),
                            }
                            for g in more
                        ]
                    ),
                    width="stretch",
                )
                pick = st.selectbox(
                    "Show group",
                    [None, *range(len(more))],
                    format_func=lambda i: "–" if i is None else f"#{i + 1}",
                    key="show_more",
                )
                if pick is not None and st.session_state.get("last_show_more") != pick:
                    g = more[pick]
                    st.session_state["focus"] = ("warning", g.warning_indices[0])
                    st.session_state["tracks"] = list(g.species)
                st.session_state["last_show_more"] = pick

    ruled_out = xrf_view.ruled_out_lines(warnings)
    if ruled_out:
        with st.expander(f"{len(ruled_out)} element(s) ruled out on their own lines"):
            st.caption(
                "A line of each falls on a peak of an element found, but the family's other "
                "strong lines are missing: not an open interference."
            )
            st.markdown("\n".join(f"- {_ui.plain(t)}" for t in ruled_out))

    st.subheader("Observed and reference lines")
    all_species = [str(e["species"]) for e in report.get("elements") or []]
    if "tracks" not in st.session_state:
        st.session_state["tracks"] = [
            str(e["species"])
            for e in report.get("elements") or []
            if e["verdict_level"] >= pr.PROBABLE_LEVEL
        ]
    st.session_state["tracks"] = [s for s in st.session_state["tracks"] if s in all_species]
    c1, c2, c3 = st.columns([6, 1.2, 1.2])
    chosen = c1.multiselect("Tracks (one per species)", all_species, key="tracks")
    if c2.button("Whole range", key="zoom_reset"):
        st.session_state.pop("focus", None)
    export = c3.selectbox("Export as", ["png", "svg"], key="export_fmt")
    focus = st.session_state.get("focus")
    x_range = None
    if focus is not None and focus[0] == "species":
        x_range = pr.zoom_range(report, species=focus[1])
    elif focus is not None:
        x_range = pr.zoom_range(report, warning_index=int(focus[1]))
    fig = figures.stick_figure(
        pr.observed_sticks(report),
        view.references_of(chosen),
        species=chosen,
        unit=u,
        axis_title=pr.axis_title(summary.axis, u, summary.medium),
        interference=pr.interference_spans(report),
        x_range=x_range,
        artefacts=xrf_view.artefact_marks(report),
    )
    st.plotly_chart(
        fig,
        key="stick_plot",
        config={
            "displaylogo": False,
            "toImageButtonOptions": {"format": export, "filename": "stick-spectra", "scale": 2},
        },
    )
    st.caption(
        "Top: observed lines (height relative to the tallest in view)"
        + (
            "; brown dotted sticks: artefact peaks (escape, sum, scatter, argon), open "
            "triangles: predicted artefacts with no separate peak"
            if energy_axis
            else ""
        )
        + ". Below: one track per species with its expected relative intensities. Grey bands: "
        "interfering pairs. Use the camera button to save the figure."
    )
    if energy_axis:
        _artefacts()
    _evidence_tabs(focus)


def _artefacts() -> None:
    """X-ray artefact peaks (escape, sum, scatter, argon): labelled, not evidence."""
    xray = report.get("xray")
    rows = xrf_view.artefact_table(xray)
    n_peaks = sum(1 for r in xrf_view.artefact_rows(xray) if r["separated"])
    st.subheader(f"Artefact peaks: {n_peaks} labelled, {len(rows) - n_peaks} without a peak")
    if not rows:
        st.caption("No escape, sum, scatter or argon peak predicted in the measured range.")
        return
    st.dataframe(_numbered(rows), width="stretch", key="artefact_table")
    st.caption(
        "Peaks made by the instrument, not the sample: tube lines scattered by the sample "
        "(Rayleigh, Compton), detector escape and pile-up sum peaks, argon of the air path. "
        "They are not evidence for any element; a peak stronger than its prediction keeps only "
        "the excess. Heights are peak heights in the spectrum's own unit; scatter and argon "
        "depend on the sample, so their height is not predicted."
    )


def _evidence_tabs(focus: tuple | None) -> None:
    """Evidence of the focused species, unassigned lines, other warnings, Boltzmann plot."""
    names = ["Evidence", "Unassigned and shared lines", "Other warnings"]
    est = (report.get("temperature") or {}).get("estimate") or {}
    plot = est.get("plot") or {}
    has_boltzmann = not energy_axis and est.get("temperature_K") and plot.get("E_upper_eV")
    if has_boltzmann:
        names.append("Boltzmann plot")
    tabs = st.tabs(names)
    with tabs[0]:
        if focus is None or focus[0] != "species":
            st.caption("Select an element row to see its matched and missing lines.")
        else:
            matched, missing = pr.evidence_rows(report, focus[1])
            st.caption(f"Matched lines of {focus[1]}")
            st.dataframe(_numbered(matched), width="stretch")
            st.caption("Expected but missing")
            st.dataframe(_numbered(missing), width="stretch")
    with tabs[1]:
        st.dataframe(_numbered(pr.unassigned_rows(report)), width="stretch")
    with tabs[2]:
        others = pr.other_warnings(report)
        if not others:
            st.caption("None.")
        for _k, kind, msg in others:
            st.warning(f"{kind}: " + _ui.plain(msg))
    if has_boltzmann:
        with tabs[3]:
            st.plotly_chart(
                figures.boltzmann_figure(
                    plot["E_upper_eV"],
                    plot["ln_I_lambda_over_gA"],
                    pr.boltzmann_fit_line(report),
                    title=f"{est['species']}: T = {est['temperature_K']:.0f} ± "
                    f"{est['uncertainty_K']:.0f} K",
                ),
                key="boltzmann_plot",
            )


def _numbered(rows: list[dict]) -> pd.DataFrame:
    frame = pd.DataFrame(rows)
    frame.index = pd.RangeIndex(1, len(rows) + 1, name="#")
    return frame


# Analyst decisions (accept / reject an element call or a line assignment) go here, once
# the findings library provides their records: one control per grid row, stored with the
# analysis. The page will only call that library API.
_results()
_ui.cautions()


# ----------------------------------------------------------------------------- record


@st.fragment
def _record() -> None:
    """Download and save; a fragment so saving does not redraw the results."""
    st.subheader("Record")
    st.download_button(
        "Download result (JSON)", view.json_bytes, file_name="match-result.json",
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
            with _ui.shown_errors(), store_access.open_store(root) as store:
                rec = store_access.save_analysis(
                    store, mid, view, st.session_state["outcome_parameters"], analyst
                )
                st.session_state["saved_analysis_id"] = rec.id
                st.success(
                    f"Saved as analysis #{rec.id}. Draft a findings sheet on the Findings page."
                )
                st.page_link("page_findings.py", label="Go to Findings →")


_record()
