"""Findings: draft a sheet from an analysis, preview it, sign it, and verify sheets."""

from __future__ import annotations

import streamlit as st

from workbench.app import _ui, store_access
from workbench.app.decisions_panel import decisions_panel
from workbench.app.review_panel import review_panel
from workbench.errors import WorkbenchError

st.title("Findings")
root = _ui.store_root()
number = _ui.current_case()
_ui.cautions()


def _sign(root, aid: int, made_from: tuple, key_up) -> None:
    """Sign the previewed draft (a button callback: it runs before the page is drawn).

    Running as a callback lets it empty the passphrase field after every attempt,
    successful or not, so the secret never stays on screen.
    """
    passphrase = st.session_state.get("passphrase", "")
    st.session_state["passphrase"] = ""
    draft = st.session_state.get("draft")
    try:
        from workbench.errors import InputError, KeyFileError
        from workbench.findings.issue import sign_and_store_sheet

        if draft is None:
            raise InputError("no draft to sign", "press 'Preview draft' and check it first")
        if st.session_state.get("draft_made_from") != made_from:
            raise InputError(
                "the analysis, analyst, laboratory, notes or limitations changed after the "
                "draft was previewed",
                "press 'Preview draft' again and check the new draft",
            )
        pem = key_up.getvalue() if key_up is not None else None
        if not pem and st.session_state.get("new_private_key"):
            if not st.session_state.get("new_key_downloaded"):
                raise KeyFileError(
                    "the key created in this session has not been downloaded yet",
                    "download the private key on the Signing keys tab and keep it safe first",
                )
            pem = st.session_state["new_private_key"]
        if not pem:
            raise KeyFileError("no private key given", "upload the analyst's private key PEM")
        with store_access.open_store(root) as store:
            issued = sign_and_store_sheet(
                store, aid, draft, private_key_pem=pem, passphrase=passphrase
            )
        st.session_state["issued"] = issued
        for k in ("draft", "draft_pdf", "draft_made_from"):
            st.session_state.pop(k, None)
    except WorkbenchError as exc:
        st.session_state["sign_error"] = str(exc)
    except Exception as exc:  # a lab user gets a message, not a traceback
        st.session_state["sign_error"] = (
            f"Signing the sheet failed unexpectedly ({type(exc).__name__}: {exc}); nothing "
            "was stored. Fix: report this to the workbench maintainers with the case number"
        )


def _key_downloaded() -> None:
    st.session_state["new_key_downloaded"] = True


with _ui.shown_errors(), store_access.open_store(root) as store:
    tab_issue, tab_review, tab_keys, tab_verify = st.tabs(
        ["Draft and sign", "Technical review", "Signing keys", "Verify a sheet"]
    )

    with tab_review:
        review_panel(store, root, number)

    with tab_keys:
        analysts = store.list_analysts()
        if analysts:
            st.dataframe(
                [
                    {"name": a.name, "role": a.role, "fingerprint": a.fingerprint,
                     "status": a.status, "registered (UTC)": a.registered_at}
                    for a in analysts
                ],
                hide_index=True,
            )  # fmt: skip
        st.subheader("Create and register a signing key")
        with st.form("new_key", clear_on_submit=True):
            c1, c2 = st.columns(2)
            name = c1.text_input("Analyst name")
            role = c2.text_input("Role", value="Analyst")
            p1 = st.text_input("Passphrase (at least 8 characters)", type="password")
            p2 = st.text_input("Repeat the passphrase", type="password")
            make = st.form_submit_button("Create key")
        if make:
            with _ui.shown_errors():
                from workbench.errors import KeyFileError
                from workbench.findings import generate_key_pair

                if p1 != p2:
                    raise KeyFileError(
                        "the two passphrases differ", "type the same passphrase twice"
                    )
                pair = generate_key_pair(p1)
                rec = store.register_analyst(name, role, pair.public_key_pem)
                st.session_state["new_private_key"] = pair.private_key_pem
                st.session_state["new_key_downloaded"] = False
                st.session_state["new_key_fingerprint"] = rec.fingerprint
                st.success("Registered key " + _ui.plain(rec.fingerprint))
        if st.session_state.get("new_private_key"):
            if not st.session_state.get("new_key_downloaded"):
                st.warning(
                    "Download the private key now and keep it safe: the store keeps only the "
                    "public key, and the key cannot sign until it has been downloaded. It is "
                    "encrypted with the passphrase."
                )
            st.download_button(
                "Download private key (PEM)",
                st.session_state["new_private_key"],
                file_name="signing-key.pem",
                mime="application/x-pem-file",
                key="dl_private_key",
                on_click=_key_downloaded,
            )

    with tab_issue:
        # The analyst's decisions sit between choosing the analysis and previewing the
        # draft (the draft carries them). The technical review has its own tab.
        if not number:
            st.info("Choose a case first.")
        else:
            analyses = store.list_analyses(number)
            if not analyses:
                st.info("No analysis saved in this case yet (Line matching page).")
            else:
                ids = [a.id for a in analyses]
                saved = st.session_state.get("saved_analysis_id")
                aid = st.selectbox(
                    "Analysis",
                    ids,
                    index=ids.index(saved) if saved in ids else len(ids) - 1,
                    format_func=lambda i: next(
                        f"#{a.id} item {a.item_number}, by {a.analyst}, {a.created_at}"
                        for a in analyses
                        if a.id == i
                    ),
                )
                decisions_panel(store, aid)
                active = [a for a in store.list_analysts() if a.status == "active"]
                if not active:
                    st.info("Register a signing key first (Signing keys tab).")
                else:
                    fps = [a.fingerprint for a in active]
                    new_fp = st.session_state.get("new_key_fingerprint")
                    fp = st.selectbox(
                        "Signing analyst",
                        fps,
                        index=fps.index(new_fp) if new_fp in fps else 0,
                        format_func=lambda f: next(
                            f"{a.name} ({a.role}) {a.fingerprint[:19]}…"
                            for a in active
                            if a.fingerprint == f
                        ),
                    )
                    c1, c2 = st.columns(2)
                    lab_name = c1.text_input("Laboratory", key="lab_name")
                    lab_acc = c2.text_input("Accreditation", key="lab_acc")
                    notes = st.text_area("Notes (printed verbatim)", key="sheet_notes")
                    limitations = st.text_area(
                        "Limitations (printed verbatim)", key="sheet_limitations"
                    )
                    lab = {"name": lab_name}
                    if lab_acc:
                        lab["accreditation"] = lab_acc
                    made_from = store_access.draft_key(aid, fp, lab, notes, limitations)
                    if st.button("Preview draft", key="preview"):
                        with _ui.shown_errors():
                            content = store_access.draft_sheet(
                                store, aid, lab=lab, analyst_fingerprint=fp, notes=notes,
                                limitations=limitations,
                            )  # fmt: skip
                            st.session_state["draft"] = content
                            st.session_state["draft_made_from"] = made_from
                            st.session_state.pop("draft_pdf", None)
                    draft = st.session_state.get("draft")
                    if draft is not None:
                        st.caption(
                            f"Draft content (unsigned), issue time {draft['issued_at']}: "
                            f"{len(draft['findings'])} finding(s), "
                            f"{len(draft['warnings'])} warning(s)."
                        )
                        st.json(
                            {k: draft[k] for k in ("case", "item", "findings", "warnings",
                                                   "notes", "limitations", "cautions")},
                            expanded=False,
                        )  # fmt: skip
                        # A long sheet takes a while to lay out, so the PDF is made on request.
                        if st.button("Render the draft PDF", key="render_draft"):
                            with (
                                _ui.guarded_step("Laying out the draft PDF"),
                                st.spinner("Laying out the PDF…"),
                            ):
                                from workbench.findings import render_pdf

                                st.session_state["draft_pdf"] = render_pdf(draft)
                        if st.session_state.get("draft_pdf"):
                            st.download_button(
                                "Download draft PDF (unsigned)", st.session_state["draft_pdf"],
                                file_name="draft-findings.pdf", mime="application/pdf",
                                key="dl_draft",
                            )  # fmt: skip
                    st.subheader("Sign and issue")
                    key_up = st.file_uploader(
                        "Private key (PEM); a key created in this session is used if none is given",
                        key="key_upload",
                    )
                    st.text_input("Passphrase", type="password", key="passphrase")
                    st.caption(
                        "The previewed draft is what gets signed, with its issue time; change "
                        "anything above and preview again before signing. The passphrase "
                        "field is emptied after every attempt."
                    )
                    st.button(
                        "Sign and issue the sheet", type="primary", key="sign",
                        on_click=_sign, args=(root, aid, made_from, key_up),
                    )  # fmt: skip
                    if st.session_state.get("sign_error"):
                        st.error(_ui.plain(st.session_state.pop("sign_error")),
                                 icon=":material/error:")  # fmt: skip
                    issued = st.session_state.get("issued")
                    if issued is not None:
                        st.success(
                            f"Issued findings sheet #{issued.record.id}, signed by "
                            f"{_ui.plain(issued.record.analyst)}."
                        )
                        stem = f"findings-{issued.record.case_number}-{issued.record.id}"
                        c1, c2, c3, c4 = st.columns(4)
                        c1.download_button("Sheet PDF", issued.pdf_bytes, f"{stem}.pdf",
                                           "application/pdf", key="dl_pdf")  # fmt: skip
                        c2.download_button("Sheet JSON", issued.json_bytes, f"{stem}.json",
                                           "application/json", key="dl_json")  # fmt: skip
                        c3.download_button("Signature (.sig)", issued.signature_raw,
                                           f"{stem}.pdf.sig", key="dl_sig")  # fmt: skip
                        c4.download_button("Signature record", issued.signature_record,
                                           f"{stem}.sig.json", "application/json",
                                           key="dl_sigjson")  # fmt: skip
            sheets = store.list_findings_sheets(number)
            if sheets:
                st.subheader("Issued sheets in this case")
                st.dataframe(
                    [
                        {"sheet": f.id, "analysis": f.analysis_id, "item": f.item_number,
                         "analyst": f.analyst, "issued (UTC)": f.issued_at,
                         "PDF SHA-256": f.pdf_sha256}
                        for f in sheets
                    ],
                    hide_index=True,
                )  # fmt: skip

    with tab_verify:
        st.caption(
            "Give the sheet's PDF, its JSON and its signature record; the signer's key is "
            "looked up in this store."
        )
        v_pdf = st.file_uploader("Sheet PDF", key="v_pdf")
        v_json = st.file_uploader("Sheet JSON", key="v_json")
        v_rec = st.file_uploader("Signature record (.sig.json)", key="v_rec")
        v_rev = st.file_uploader(
            "Reviewer's signature record (.review.sig.json), if the sheet was reviewed",
            key="v_rev",
        )
        if st.button("Verify", key="verify"):
            if v_pdf is None or v_json is None or v_rec is None:
                st.error("Give all three files: the PDF, the JSON and the signature record.")
            else:
                with _ui.shown_errors():
                    from workbench.findings import verify_sheet_with_store

                    res = verify_sheet_with_store(
                        store, v_pdf.getvalue(), v_json.getvalue(), v_rec.getvalue()
                    )
                    st.success(
                        f"VALID: signed by {_ui.plain(res.signer)} at {res.signed_at} "
                        f"with key {res.key_fingerprint[:19]}…"
                    )
                    st.text("\n".join("✓ " + c for c in res.checks))
                    if v_rev is not None:
                        from workbench.findings.review import verify_review_with_store

                        rev = verify_review_with_store(
                            store, v_pdf.getvalue(), v_json.getvalue(), v_rec.getvalue(),
                            v_rev.getvalue(),
                        )  # fmt: skip
                        st.success(
                            f"REVIEW VALID: countersigned by {_ui.plain(rev.signer)} at "
                            f"{rev.signed_at} with key {rev.key_fingerprint[:19]}…"
                        )
                        st.text("\n".join("✓ " + c for c in rev.checks))
