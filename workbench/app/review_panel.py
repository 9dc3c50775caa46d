"""Technical review of an issued findings sheet, on the Findings page.

Thin glue over :func:`workbench.findings.review.review_sheet`, the same call
as ``workbench findings review``: a second registered analyst either
countersigns the sheet (an Ed25519 signature over the same PDF and JSON
bytes) or returns it with comments. Every refusal is the library's own
(self-review, a sheet naming another reviewer, an unknown, untrusted or
revoked key, a second approval, a return without comments, a sheet whose
own signature fails). The passphrase field is emptied after every attempt.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import streamlit as st

from workbench.app import _ui, store_access
from workbench.errors import WorkbenchError

__all__ = ["review_panel"]


def _submit(root: Path, sheet_id: int, approve: bool, key_up: Any) -> None:
    """Record the review (a button callback, so the passphrase is cleared before drawing)."""
    passphrase = st.session_state.get("review_passphrase", "")
    st.session_state["review_passphrase"] = ""
    st.session_state.pop("review_outcome", None)
    try:
        from workbench.errors import KeyFileError
        from workbench.findings.review import review_sheet

        pem = key_up.getvalue() if key_up is not None else b""
        if not pem:
            raise KeyFileError(
                "no reviewer's private key given", "upload the reviewer's private key PEM"
            )
        with store_access.open_store(root) as store:
            out = review_sheet(
                store,
                sheet_id,
                private_key_pem=pem,
                passphrase=passphrase,
                approve=approve,
                comments=st.session_state.get("review_comments", ""),
            )
        st.session_state["review_outcome"] = out
        st.session_state["review_comments"] = ""
    except WorkbenchError as exc:
        st.session_state["review_error"] = str(exc)
    except Exception as exc:  # a lab user gets a message, not a traceback
        st.session_state["review_error"] = (
            f"The review failed unexpectedly ({type(exc).__name__}: {exc}); nothing was "
            "stored. Fix: report this to the workbench maintainers with the sheet number"
        )


def review_panel(store: Any, root: Path, case_number: str | None) -> None:
    """List the sheets of ``case_number`` with their reviews and a form to review one."""
    from workbench.casefile.decisions import list_reviews

    st.caption(
        "A second analyst checks the evidence, the decisions and the wording of an "
        "issued sheet, then countersigns it or returns it with comments. Review follows "
        "the laboratory's accredited procedure; the countersignature records that the "
        "review happened, not that the conclusion is beyond question."
    )
    if not case_number:
        st.info("Choose a case first.")
        return
    sheets = store.list_findings_sheets(case_number)
    if not sheets:
        st.info("No sheet has been issued in this case yet (Draft and sign tab).")
        return
    by_id = {s.id: s for s in sheets}
    sid = st.selectbox(
        "Issued sheet",
        list(by_id),
        index=len(by_id) - 1,
        key="review_sheet",
        format_func=lambda i: (
            f"#{i} item {by_id[i].item_number}, by {by_id[i].analyst}, {by_id[i].issued_at}"
        ),
    )
    sheet = by_id[sid]
    reviews = list_reviews(store, sheet.id)
    if reviews:
        st.dataframe(
            [
                {"outcome": r.outcome, "reviewer": r.reviewer,
                 "reviewed (UTC)": r.reviewed_at, "comments": r.comments,
                 "reviewer key": r.reviewer_fingerprint}
                for r in reviews
            ],
            hide_index=True,
        )  # fmt: skip
    else:
        st.caption(f"Sheet #{sheet.id} has not been reviewed yet.")
    if any(r.outcome == "approved" for r in reviews):
        st.success(f"Sheet #{sheet.id} is approved and countersigned.")
    else:
        key_up = st.file_uploader("Reviewer's private key (PEM)", key="review_key")
        st.text_input("Reviewer's passphrase", type="password", key="review_passphrase")
        st.text_area(
            "Comments (printed verbatim in the review record; required to return a sheet)",
            key="review_comments",
        )
        c1, c2 = st.columns(2)
        c1.button(
            "Approve and countersign", type="primary", key="review_approve",
            on_click=_submit, args=(root, sheet.id, True, key_up),
        )  # fmt: skip
        c2.button(
            "Return to the analyst", key="review_return",
            on_click=_submit, args=(root, sheet.id, False, key_up),
        )  # fmt: skip
    if st.session_state.get("review_error"):
        st.error(_ui.plain(st.session_state.pop("review_error")), icon=":material/error:")
    out = st.session_state.get("review_outcome")
    if out is not None and out.review.sheet_id == sheet.id:
        r = out.review
        if r.outcome == "approved":
            st.success(
                f"Sheet #{r.sheet_id} approved and countersigned by {_ui.plain(r.reviewer)}."
            )
            stem = f"findings-{sheet.case_number}-{sheet.id}"
            d1, d2 = st.columns(2)
            d1.download_button(
                "Review signature record", out.signature_record, f"{stem}.review.sig.json",
                "application/json", key="dl_review_json",
            )  # fmt: skip
            d2.download_button(
                "Review signature (.sig)", out.signature_raw, f"{stem}.review.sig",
                key="dl_review_sig",
            )  # fmt: skip
        else:
            st.warning(
                f"Sheet #{r.sheet_id} returned to the analyst by {_ui.plain(r.reviewer)}; "
                "the analyst issues a new sheet after the changes."
            )
