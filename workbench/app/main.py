"""Entry point of the Streamlit app: ``streamlit run workbench/app/main.py -- --store PATH``.

Pages live next to this file and are registered with ``st.navigation``.
"""

from __future__ import annotations

import streamlit as st

from workbench.app import _ui, store_access

st.set_page_config(page_title="Line-matching workbench", page_icon="🔬", layout="wide")

root = _ui.store_root()
_ui.warm_workers()

pages = [
    st.Page("page_cases.py", title="Cases", icon=":material/folder_open:", default=True),
    st.Page("page_custody.py", title="Items & custody", icon=":material/link:"),
    st.Page("page_measurement.py", title="Measurement", icon=":material/show_chart:"),
    st.Page("page_matching.py", title="Line matching", icon=":material/science:"),
    st.Page("page_findings.py", title="Findings", icon=":material/draw:"),
    st.Page("page_comparison.py", title="Comparison", icon=":material/compare:"),
    st.Page("page_maps.py", title="Element maps", icon=":material/grid_on:"),
]
nav = st.navigation(pages)

with st.sidebar:
    st.caption("Case store")
    st.code(str(root), language=None)
    with _ui.shown_errors(), store_access.open_store(root) as store:
        numbers = [c.case_number for c in store.list_cases()]
    if numbers:
        # A page asks for another case by setting "pending_case" and rerunning;
        # the widget's own key may only be set before the widget is drawn.
        pending = st.session_state.pop("pending_case", None)
        if pending in numbers:
            st.session_state["sidebar_case"] = pending
        elif st.session_state.get("sidebar_case") not in numbers:
            st.session_state["sidebar_case"] = numbers[0]
        st.session_state["case_number"] = st.selectbox(
            "Working on case", numbers, key="sidebar_case"
        )
    else:
        st.info("No cases yet: create one on the Cases page.")

nav.run()
