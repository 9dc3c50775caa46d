"""The analyst's decisions on an analysis, on the Findings page.

Thin glue: the decisions are recorded by
:func:`workbench.findings.decisions.decide` (the same call as ``workbench
findings decide``) and listed with
:func:`~workbench.findings.decisions.list_decisions` and
:func:`~workbench.findings.decisions.effective_calls`. A decision is never
edited or deleted: "take back" records a later decision that reverses an
earlier one, and both stay on record and on the sheet.
"""

from __future__ import annotations

from typing import Any

import streamlit as st

from workbench.app import _ui

__all__ = ["VERB_LABELS", "decisions_panel"]

#: What the form offers, in the analyst's words, keyed by the library's verbs.
VERB_LABELS: dict[str, str] = {
    "accept": "Accept a call or a line assignment",
    "reject": "Reject a call or a line assignment",
    "add": "Add an element by hand, with its lines",
    "show": "Print an element on the sheet",
    "leave-off": "Leave an element off the sheet",
    "reverse": "Take back an earlier decision",
}


def decisions_panel(store: Any, analysis_id: int) -> None:
    """Show the decisions on ``analysis_id`` and a form to record one."""
    from workbench.findings.decisions import (
        decide,
        effective_calls,
        list_decisions,
        stored_result,
    )

    decisions = list_decisions(store, analysis_id)
    with st.expander(f"The analyst's decisions ({len(decisions)} on record)", expanded=False):
        if decisions:
            st.dataframe(
                [
                    {
                        "No.": d.seq,
                        "Decision": d.action.replace("_", " "),
                        "About": d.target,
                        "Reason": d.reason,
                        "By": d.analyst,
                        "When (UTC)": d.decided_at,
                    }
                    for d in decisions
                ],
                hide_index=True,
            )
        calls = effective_calls(stored_result(store, analysis_id), decisions)
        st.dataframe(
            [
                {
                    "Element": c.element,
                    "Program's call": c.verdict,
                    "Concluded present": "yes" if c.concluded else "no",
                    "On the sheet": "yes" if c.on_sheet else "no",
                }
                for c in calls
            ],
            hide_index=True,
        )
        with st.form(f"decide_{analysis_id}", clear_on_submit=True):
            verb = st.selectbox(
                "Decision", list(VERB_LABELS), format_func=VERB_LABELS.get, key="decision_verb"
            )
            target = st.text_input(
                "About (element 'Fe', species 'Fe I', line 'Fe I|line id', or the number "
                "of the decision to take back)",
                key="decision_target",
            )
            lines = st.text_area(
                "Lines of an element added by hand, one per row: position[:label] in the axis unit",
                key="decision_lines",
            )
            reason = st.text_input("Reason (required)", key="decision_reason")
            analyst = st.text_input("Analyst", key="decision_analyst")
            if st.form_submit_button("Record the decision"):
                with _ui.shown_errors():
                    rec = decide(
                        store,
                        analysis_id,
                        verb,
                        target,
                        reason=reason,
                        analyst=analyst,
                        line_texts=lines.splitlines(),
                    )
                    st.success(
                        _ui.plain(f"Decision {rec.seq} recorded: {rec.action} {rec.target}")
                        + ". Preview the draft again so that the sheet carries it."
                    )
