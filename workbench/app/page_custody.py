"""Items & custody: register items and sub-samples, record custody events, see the chain."""

from __future__ import annotations

import streamlit as st

from workbench.app import _ui, figures, forms, store_access

st.title("Items & custody")
root = _ui.store_root()
number = _ui.current_case()
if not number:
    st.info("Choose or create a case first (Cases page).")
    st.stop()

KINDS = ("transferred", "sealed", "opened", "returned", "note", "correction", "disposed")

with _ui.shown_errors(), store_access.open_store(root) as store:
    st.caption("Case " + _ui.plain(number))
    items = store.list_items(number)
    status = store_access.chain_status(store, number)
    if status["ok"]:
        st.success("Chain of custody verified: every event hash, link and rule checks out.")
    else:
        st.error(
            f"Chain of custody BROKEN: {len(status['breaks'])} problem(s). The first per item:"
        )
        for text in status["breaks"][:20]:
            st.text(text)

    tab_items, tab_event, tab_timeline = st.tabs(["Items", "Record an event", "Timeline"])
    with tab_items:
        if items:
            st.dataframe(
                [
                    {
                        "item": i.item_number,
                        "description": i.description,
                        "sub-sample of": i.parent_item_number or "",
                        "holder": i.holder or "",
                        "seal state": i.seal_state,
                        "seals": ", ".join(i.seals),
                        "location": i.storage_location or "",
                        "events": i.event_count,
                        "chain": "broken at event #" + str(status["items"][i.item_number]["seq"])
                        if i.item_number in status["items"]
                        else "verified",
                    }
                    for i in items
                ],
                hide_index=True,
            )
        st.subheader("Register an item or sub-sample")
        with st.form("new_item", clear_on_submit=True):
            c1, c2 = st.columns(2)
            item_number = c1.text_input(
                "Item number", help="Letters and digits, e.g. 1, 1a, 2.3 (no spaces or '/')."
            )
            parent = c2.selectbox(
                "Sub-sample of (leave empty for a new item)",
                [""] + [i.item_number for i in items],
            )
            description = st.text_input("Description")
            c3, c4 = st.columns(2)
            received_by = c3.text_input("Received by (becomes the holder)")
            received_from = c4.text_input("Received from (required for a new item)")
            c5, c6 = st.columns(2)
            seals = c5.text_input("Seal numbers (comma-separated)")
            location = c6.text_input("Storage location")
            note = st.text_input("Note (optional)")
            received_at = st.datetime_input(
                "Received at (laboratory time)", value=forms.lab_now(), key="item_at"
            )
            add = st.form_submit_button("Register")
        if add:
            with _ui.shown_errors():
                rec = store.add_item(
                    number,
                    forms.check_item_number(item_number),
                    description,
                    parent_item=parent or None,
                    seal_numbers=[s.strip() for s in seals.split(",") if s.strip()],
                    storage_location=location or None,
                    received_by=received_by,
                    received_from=received_from or None,
                    note=note or None,
                    at=forms.lab_time(received_at, "time received"),
                )
                st.success("Registered " + _ui.plain(rec.label))
                st.rerun()

    with tab_event:
        if not items:
            st.info("Register an item first.")
        else:
            labels = [i.item_number for i in items]
            with st.form("new_event", clear_on_submit=True):
                c1, c2 = st.columns(2)
                which = c1.selectbox("Item", labels)
                kind = c2.selectbox("Event", KINDS)
                c3, c4, c5 = st.columns(3)
                actor = c3.text_input("Actor (who did it)")
                from_party = c4.text_input("From")
                to_party = c5.text_input("To")
                c6, c7 = st.columns(2)
                seal_number = c6.text_input("Seal number (sealed / opened)")
                location = c7.text_input("Location")
                corrects = st.number_input(
                    "Corrects event # (corrections only)", min_value=0, step=1, value=0
                )
                note = st.text_area("Note")
                event_at = st.datetime_input(
                    "When (laboratory time)", value=forms.lab_now(), key="event_at"
                )
                record = st.form_submit_button("Record event")
            if record:
                with _ui.shown_errors():
                    ev = store.add_custody_event(
                        (number, which),
                        kind,
                        actor,
                        from_party=from_party or None,
                        to_party=to_party or None,
                        location=location or None,
                        seal_number=seal_number or None,
                        note=note or None,
                        corrects=int(corrects) if kind == "correction" and corrects else None,
                        at=forms.lab_time(event_at, "event time"),
                    )
                    st.success(f"Recorded event #{ev.seq} ({ev.kind}).")
                    st.rerun()

    with tab_timeline:
        events = []
        for i in items:
            events += [e.to_dict() for e in store.custody_events(i, own_only=True)]
        if events:
            broken = {k: v["seq"] for k, v in status["items"].items() if k and v["seq"] is not None}
            st.plotly_chart(figures.timeline_figure(events, broken), key="timeline")
            pick = st.selectbox("Show the full history of", [i.item_number for i in items])
            hist = store.custody_events((number, pick))
            st.dataframe(
                [
                    {
                        "#": e.seq,
                        "item": e.item_number,
                        "event": e.kind,
                        "at (UTC)": e.at,
                        "actor": e.actor,
                        "from": e.from_party or "",
                        "to": e.to_party or "",
                        "seal": e.seal_state,
                        "seal no.": e.seal_number or "",
                        "note": e.note or "",
                        "hash": e.hash[:16] + "…",
                    }
                    for e in hist
                ],
                hide_index=True,
            )
        else:
            st.caption("No custody events yet.")
