"""Comparison: a questioned item against known samples, and elements to candidate materials.

Everything is decided by :mod:`workbench.compare`; this page collects the
choices and shows the library's outcome in plain trade language. The wording
never claims identity: an item that cannot be distinguished from a known
sample is not thereby shown to share its origin.
"""

from __future__ import annotations

import json

import streamlit as st

from workbench.app import _ui, forms, inputs, store_access
from workbench.matching import presentation as pr

st.title("Comparison")
root = _ui.store_root()
number = _ui.current_case()

from workbench.compare import (  # noqa: E402  (after the title: heavy import)
    CAUTION,
    MATERIALS_CAUTIONS,
    Tolerance,
    candidate_materials,
    compare_to_collection,
    compare_to_exemplar,
    list_collections,
    load_collection,
)

st.warning(CAUTION, icon=":material/balance:")

# Default pairing tolerances (common practice, no source; as `workbench compare`).
_DEFAULT_TOL = {"wavelength": 0.05, "energy": 100.0}


def _show_comparison(d: dict) -> None:
    """One questioned-vs-known result (the library's dict)."""
    known = d["known"]
    outcome = d["overall"]["outcome"]
    # Sample ids and material names are user text: shown literally, never as Markdown.
    text = (
        f"Questioned item against {_ui.plain(known['exemplar'])} "
        f"({_ui.plain(known['material'] or 'material not recorded')}): **{outcome.upper()}**"
    )
    # Neutral colours on purpose: neither outcome is good or bad news in itself.
    if outcome == "distinguishable":
        st.warning(text, icon=":material/call_split:")
    elif outcome == "cannot be distinguished":
        st.info(text, icon=":material/drag_handle:")
    else:
        st.warning(text + " (no criterion could be applied)")
    for reason in d["overall"]["distinguishing"]:
        st.caption("• " + _ui.plain(reason))
    el = d["elements"]
    st.markdown("**Elements**")
    if el["evaluated"]:
        st.dataframe(
            [
                {"element": r["element"], "questioned": r["questioned"], "known": r["known"],
                 "outcome": r["outcome"]}
                for r in el["per_element"]
            ],
            hide_index=True,
        )  # fmt: skip
        st.caption(_ui.plain(el.get("note", "")))
    else:
        st.caption("Not evaluated: " + _ui.plain(el["reason"]) + ".")
    st.markdown("**Line-intensity ratios**")
    if d["ratios"]:
        st.dataframe(
            [
                {"ratio": r["label"], "questioned mean": r["questioned_mean"],
                 "known mean": r["known_mean"], "s used": r["s_used"], "k": r["k"],
                 "interval low": r["interval_low"], "interval high": r["interval_high"],
                 "known replicates": r["n_known"], "rule": r["rule"], "outcome": r["outcome"]}
                for r in d["ratios"]
            ],
            hide_index=True,
        )  # fmt: skip
    else:
        st.caption("No ratio chosen.")
    sim = d["line_similarity"]
    agree = sim["mean_intensity_agreement"]
    st.caption(
        f"Line overlap (descriptive only, not a criterion): mean {sim['mean_line_overlap']:.3f} "
        f"(range {sim['min_line_overlap']:.3f}–{sim['max_line_overlap']:.3f}); log-intensity "
        f"correlation {'n/a' if agree is None else f'{agree:.3f}'}."
    )


def _manage_collections(coll_root, *, expanded: bool) -> None:
    """Create a collection in this store and add known samples (replicate peak lists) to it."""
    from workbench.compare import add_exemplar, create_collection

    with st.expander("Create a collection or add a known sample", expanded=expanded):
        with st.form("new_collection", clear_on_submit=True):
            c1, c2 = st.columns([1, 2])
            new_id = c1.text_input("Collection id (e.g. glass-2026)", key="new_coll_id")
            new_title = c2.text_input("Title", key="new_coll_title")
            make = st.form_submit_button("Create collection")
        if make:
            with _ui.shown_errors():
                coll_id = forms.check_collection_id(new_id)
                create_collection(coll_root, coll_id, new_title)
                st.success(f"Created collection {_ui.plain(coll_id)}.")
        existing = [r["id"] for r in list_collections(coll_root) if "error" not in r]
        if not existing:
            return
        with st.form("new_exemplar", clear_on_submit=True):
            c1, c2, c3 = st.columns(3)
            target = c1.selectbox("Add to collection", existing, key="new_ex_coll")
            ex_id = c2.text_input("Known sample id (e.g. K-01)", key="new_ex_id")
            material = c3.text_input("Material (optional)", key="new_ex_material")
            files = st.file_uploader(
                "Replicate peak lists of the known sample (one file each)",
                accept_multiple_files=True,
                key="new_ex_files",
            )
            add = st.form_submit_button("Add known sample")
        if add:
            with _ui.shown_errors():
                from workbench.errors import InputError

                if not files:
                    raise InputError("no replicate file given", "upload one file per replicate")
                add_exemplar(
                    coll_root, target, forms.check_collection_id(ex_id),
                    [f.getvalue() for f in files], material=material,
                )  # fmt: skip
                st.success(f"Added {_ui.plain(ex_id)} to {_ui.plain(target)}.")


def _known_tab(store) -> None:
    """Questioned vs known: choices, the library call, the outcome."""
    st.caption(
        "Compare replicate peak lists of a questioned item with a known sample from a "
        "collection (or with every known sample of it), by element presence and by "
        "line-intensity ratios within ±k·s of the known replicates."
    )
    source = st.radio(
        "Questioned measurement",
        ["stored", "upload", "paste"],
        format_func={
            "stored": "stored measurement(s) of this case",
            "upload": "upload peak list(s)",
            "paste": "paste a peak list",
        }.get,
        horizontal=True,
        key="cmp_source",
    )
    measurements = store.list_measurements(number) if number else []
    chosen_ids: list[int] = []
    uploads = []
    pasted = ""
    if source == "stored":
        if not measurements:
            st.caption("No stored measurement in this case.")
        else:
            labels = {m.id: f"#{m.id} item {m.item_number}: {m.filename}" for m in measurements}
            chosen_ids = st.multiselect(
                "Replicates (one or more stored measurements)",
                list(labels),
                format_func=labels.get,
                key="cmp_measurements",
            )
    elif source == "upload":
        uploads = st.file_uploader(
            "Questioned peak lists (one file per replicate)",
            accept_multiple_files=True,
            key="cmp_upload",
        )
    else:
        pasted = st.text_area(
            "Peak list with its header row (one replicate)", height=140, key="cmp_paste"
        )
    c1, c2, c3 = st.columns(3)
    where = c1.radio(
        "Collections",
        ["store", "shared"],
        format_func={
            "store": "this store's collections",
            "shared": "shared (reference_sets/collections)",
        }.get,
        key="cmp_where",
    )
    coll_root = forms.collections_root(where, root)
    rows = list_collections(coll_root)
    usable = [r for r in rows if "error" not in r]
    for r in rows:
        if "error" in r:
            st.error(f"Collection {_ui.plain(r['id'])} is unusable: " + _ui.plain(r["error"]))
    if where == "store":
        _manage_collections(coll_root, expanded=not usable)
    if not usable:
        st.info(
            f"No collection in {_ui.plain(coll_root)} yet: create one above (this store's "
            "collections) and add known samples to it, or choose the shared collections."
        )
        return
    coll_id = c2.selectbox(
        "Collection",
        [r["id"] for r in usable],
        format_func=lambda i: next(
            f"{r['id']} — {r['title']} (v{r['version']}, {r['exemplars']} known samples)"
            for r in usable
            if r["id"] == i
        ),
        key="cmp_collection",
    )
    collection = load_collection(coll_root, coll_id)
    whole = "(every known sample, ranked)"
    exemplar = c3.selectbox(
        "Known sample",
        [whole] + [e.id for e in collection.exemplars],
        format_func=lambda i: i
        if i == whole
        else next(f"{e.id} — {e.material or 'material not recorded'}"
                  for e in collection.exemplars if e.id == i),
        key="cmp_exemplar",
    )  # fmt: skip
    c4, c5, c6 = st.columns(3)
    tol_kind = c4.selectbox(
        "Pairing tolerance",
        ["fixed", "resolving_power"],
        format_func={"fixed": "fixed half-window", "resolving_power": "resolving power R"}.get,
        key="cmp_tol_kind",
    )
    tol_value = c5.number_input(
        "Tolerance (nm or eV, or R)", min_value=0.0, value=0.0, format="%.6g", key="cmp_tol",
        help="0 takes the default: 0.05 nm for wavelengths, 100 eV for energies",
    )  # fmt: skip
    rule = c6.selectbox(
        "Interval rule",
        ["4s", "4s-floor"],
        format_func={"4s": "mean ± k·s", "4s-floor": "mean ± k·max(s, floor × mean)"}.get,
        key="cmp_rule",
    )
    c7, c8, c9 = st.columns(3)
    k = c7.number_input("k (multiplier of s)", 0.5, 10.0, 4.0, 0.5, key="cmp_k")
    floor_rsd = c8.number_input(
        "Floor (relative s, 4s-floor only)", 0.0, 0.5, 0.03, 0.01, key="cmp_floor"
    )
    ratio_medium = c9.selectbox("Medium of nm ratio lines", ["air", "vacuum"], key="cmp_medium")
    ratios_txt = st.text_area(
        "Ratios, one per line (element:position/element:position)",
        placeholder="Sr:407.771/Ca:393.366",
        key="cmp_ratios",
    )
    el_source = st.radio(
        "Elements of the questioned item",
        ["none", "analysis", "typed"],
        format_func={
            "none": "leave out the element criterion",
            "analysis": "from the latest saved analysis of the chosen stored measurement",
            "typed": "type them",
        }.get,
        horizontal=True,
        key="cmp_el_source",
    )
    typed_elements = ""
    if el_source == "typed":
        typed_elements = st.text_input("Elements present (e.g. Na, Mg, Ca, Sr)", key="cmp_els")

    if st.button("Compare", type="primary", key="cmp_run"):
        with _ui.shown_errors(), st.spinner("Comparing…"):
            from workbench.errors import InputError

            questioned = []
            if source == "stored":
                if not chosen_ids:
                    raise InputError("no questioned measurement chosen", "choose at least one")
                for mid in chosen_ids:
                    m = store.get_measurement(mid)
                    got = inputs.load_input(store.file_bytes(m.sha256), m.filename)
                    questioned.append(got.peaks)
            elif source == "upload":
                if not uploads:
                    raise InputError("no questioned file uploaded", "upload one file per replicate")
                questioned = [inputs.load_input(u.getvalue(), u.name).peaks for u in uploads]
            else:
                questioned = [inputs.load_input(pasted.encode("utf-8"), "<pasted>").peaks]
            axis = questioned[0].axis
            value = float(tol_value) or (
                _DEFAULT_TOL[axis] if tol_kind == "fixed" else 5000.0 if axis == "wavelength"
                else 50.0
            )  # fmt: skip
            tolerance = (
                Tolerance(fixed=value) if tol_kind == "fixed" else Tolerance(resolving_power=value)
            )
            q_elements = None
            if el_source == "typed":
                if not typed_elements.strip():
                    raise InputError("no elements typed", "type symbols such as Na, Ca, Sr")
                q_elements = typed_elements
            elif el_source == "analysis":
                if source != "stored":
                    raise InputError(
                        "elements from an analysis need a stored questioned measurement",
                        "choose stored measurements, or type the elements",
                    )
                a = store_access.latest_analysis(store, number, chosen_ids)
                if a is None:
                    raise InputError(
                        "no saved analysis of the chosen measurement(s)",
                        "save an analysis of it first, or type the elements",
                    )
                q_elements = store_access.analysis_report(a)
            common = {
                "tolerance": tolerance,
                "ratios": forms.parse_ratios(ratios_txt, ratio_medium),
                "rule": rule,
                "k": float(k),
                "floor_rsd": float(floor_rsd),
                "questioned_elements": q_elements,
            }
            if exemplar == whole:
                res = compare_to_collection(questioned, collection, **common)
            else:
                res = compare_to_exemplar(questioned, collection, exemplar, **common)
            st.session_state["cmp_result"] = res.to_dict()
            st.session_state["cmp_result_json"] = res.to_json()

    d = st.session_state.get("cmp_result")
    if d is not None:
        st.divider()
        if d["kind"] == "questioned-vs-collection comparison":
            st.subheader(f"Against every known sample of {_ui.plain(d['collection'])}")
            st.caption(
                "Ranked by line overlap, which only orders the list; the outcome of each row "
                "comes from the element and ratio criteria."
            )
            st.dataframe(
                [
                    {"rank": e.get("rank", ""), "known sample": e["exemplar"],
                     "material": e.get("material", ""),
                     "line overlap": e.get("mean_line_overlap"),
                     "outcome": e.get("outcome", "not compared"),
                     "why": "; ".join(e.get("distinguishing") or []) or e.get("reason", "")}
                    for e in d["entries"]
                ],
                hide_index=True,
            )  # fmt: skip
            for ex_id, rep in d["reports"].items():
                with st.expander(f"Details: {_ui.plain(ex_id)}"):
                    _show_comparison(rep)
        else:
            st.subheader("Outcome")
            _show_comparison(d)
        st.warning(d["caution"], icon=":material/balance:")
        st.download_button(
            "Download the comparison (JSON)", st.session_state["cmp_result_json"],
            file_name="comparison.json", mime="application/json", key="cmp_download",
        )  # fmt: skip


def _materials_tab(store) -> None:
    """Elements to candidate materials with anachronism flags."""
    st.caption(
        "Pigments and materials whose key elements were detected, with a flag on those "
        "first available after the date claimed for the object."
    )
    m_source = st.radio(
        "Elements",
        ["analysis", "typed"],
        format_func={
            "analysis": "from the latest saved analysis of this case",
            "typed": "type them",
        }.get,
        horizontal=True,
        key="mat_source",
    )
    elements_arg = None
    if m_source == "analysis":
        a = store_access.latest_analysis(store, number) if number else None
        if a is None:
            st.info("No saved analysis in this case: type the elements instead.")
        else:
            levels = pr.element_levels(store_access.analysis_report(a))
            seen = [e for e, v in levels.items() if v["level"] >= 1]
            present = [e for e, v in levels.items() if v["level"] >= 2]
            st.caption(
                f"Analysis #{a.id} of item {_ui.plain(a.item_number)} "
                f"({_ui.plain(a.created_at)}). Elements called probable or better are "
                "chosen; add a 'possible' one only after checking its lines."
            )
            elements_arg = st.multiselect(
                "Elements taken as present",
                seen,
                default=present,
                format_func=lambda e: f"{e} ({levels[e]['verdict']})",
                key=f"mat_elements_{a.id}",
            )
    else:
        elements_arg = st.text_input("Elements present (e.g. Pb, Zn, Ti)", key="mat_typed")
    year_txt = st.text_input(
        "Claimed date of the object (year; negative for BC; optional)", key="mat_year"
    )
    if st.button("List candidate materials", type="primary", key="mat_run"):
        with _ui.shown_errors():
            from workbench.errors import InputError

            if not elements_arg:
                raise InputError("no elements given", "choose or type the detected elements")
            rep = candidate_materials(elements_arg, forms.parse_year(year_txt))
            st.session_state["mat_result"] = rep.to_dict()

    r = st.session_state.get("mat_result")
    if r is not None:
        st.divider()
        st.text(
            f"Elements: {', '.join(r['present_elements']) or 'none'}; claimed date: "
            f"{r['claimed_year'] if r['claimed_year'] is not None else 'not given'}"
        )
        for flag in r["anachronisms"]:
            st.error("Possible anachronism: " + _ui.plain(flag))
        if r["candidates"]:
            st.dataframe(
                [
                    {"rank": c["rank"], "material": c["name"], "formula": c["formula"],
                     "key elements found": ", ".join(c["key_elements_present"]),
                     "key elements not detected": ", ".join(c["key_elements_not_detected"]),
                     "associated found": ", ".join(c["associated_elements_present"]),
                     "first available": c["first_available_text"],
                     "after the claimed date": "yes" if c["anachronism"] else "",
                     "date basis": c["date_basis"]}
                    for c in r["candidates"]
                ],
                hide_index=True,
            )  # fmt: skip
        else:
            st.info("No material in the table has all its key elements present.")
        if r["unexplained_elements"]:
            st.caption(
                "Not accounted for by any candidate: " + ", ".join(r["unexplained_elements"])
            )
        for c in MATERIALS_CAUTIONS:
            st.caption("• " + c)
        st.download_button(
            "Download the candidates (JSON)", json.dumps(r, sort_keys=True, indent=2),
            file_name="materials.json", mime="application/json", key="mat_download",
        )  # fmt: skip


tab_known, tab_materials = st.tabs(["Questioned vs known", "Elements to materials"])
with tab_known, _ui.shown_errors(), store_access.open_store(root) as store:
    _known_tab(store)
with tab_materials, _ui.shown_errors(), store_access.open_store(root) as store:
    _materials_tab(store)
