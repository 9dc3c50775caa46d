"""Cases: list, approximate search, create, and an overview of the working case."""

from __future__ import annotations

import streamlit as st

from workbench.app import _ui, forms, store_access

st.title("Cases")
root = _ui.store_root()

with _ui.shown_errors(), store_access.open_store(root) as store:
    cases = store.list_cases()
    left, right = st.columns([3, 2])
    with left:
        st.subheader("All cases")
        if cases:
            st.dataframe(
                [
                    {
                        "case": c.case_number,
                        "title": c.title,
                        "requested by": c.requesting_party,
                        "status": c.status,
                        "created (UTC)": c.created_at,
                    }
                    for c in cases
                ],
                hide_index=True,
            )
        else:
            st.info("The store holds no cases yet.")
        query = st.text_input("Search cases (approximate: number, title, party, item text)")
        if query.strip():
            hits = store.search_cases(query)
            if hits:
                st.dataframe(
                    [
                        {
                            "case": h.case_number,
                            "title": h.title,
                            "score": h.score,
                            "matched in": h.field,
                            "matched text": h.matched_text,
                        }
                        for h in hits
                    ],
                    hide_index=True,
                )
                open_hit = st.selectbox("Open a hit", [h.case_number for h in hits], key="hit")
                if st.button("Open this case", key="open_hit"):
                    _ui.choose_case(open_hit)
            else:
                st.caption("No case resembles that text.")
    with right:
        st.subheader("New case")
        with st.form("new_case", clear_on_submit=True):
            number = st.text_input(
                "Case number",
                placeholder="LAB-2026-0001",
                help="Letters and digits in groups joined by single '-', '.' or '_'.",
            )
            title = st.text_input("Title")
            party = st.text_input("Requesting party")
            submitted = st.form_submit_button("Create case")
        if submitted:
            with _ui.shown_errors():
                rec = store.create_case(forms.check_case_number(number), title, party)
                st.success("Case created: " + _ui.plain(rec.case_number))
                _ui.choose_case(rec.case_number)

    number = _ui.current_case()
    if number:
        st.divider()
        case = store.get_case(number)
        st.subheader("Overview: " + _ui.plain(case.case_number))
        st.text(f"{case.title}\nRequested by {case.requesting_party}; status {case.status}")
        items = store.list_items(number)
        status = store_access.chain_status(store, number)
        if status["ok"]:
            st.success(f"Custody chains and records of this case verify ({len(items)} items).")
        else:
            n_breaks = len(status["breaks"])
            st.error(f"Integrity check found {n_breaks} break(s); see Items & custody.")
        if items:
            measurements = store.list_measurements(number)
            analyses = store.list_analyses(number)
            sheets = store.list_findings_sheets(number)
            per_item = {
                i.item_number: {
                    "m": sum(m.item_number == i.item_number for m in measurements),
                    "a": sum(a.item_number == i.item_number for a in analyses),
                    "s": sum(s.item_number == i.item_number for s in sheets),
                }
                for i in items
            }
            st.dataframe(
                [
                    {
                        "item": i.item_number,
                        "description": i.description,
                        "sub-sample of": i.parent_item_number or "",
                        "holder": i.holder or "",
                        "seal": i.seal_state,
                        "disposed": i.disposed,
                        "events": i.event_count,
                        "measurements": per_item[i.item_number]["m"],
                        "analyses": per_item[i.item_number]["a"],
                        "sheets": per_item[i.item_number]["s"],
                        "chain": "broken" if i.item_number in status["items"] else "verified",
                    }
                    for i in items
                ],
                hide_index=True,
            )
        else:
            st.caption("No items yet: register them on the Items & custody page.")
