"""AppTest tests of the Findings page's refusals: the library's checks hold through the app.

The page signs the previewed draft with workbench.findings.issue.sign_and_store_sheet;
these tests drive it against the invented store of tests/app/conftest.py.
"""

from __future__ import annotations

import pytest

from tests.app.conftest import ANALYST, CASE
from tests.app.test_pages import _run_matching, _texts

pytestmark = pytest.mark.slow

PASSPHRASE = "correct horse 1"  # invented
OTHER = "Bo Otherkey (invented)"


def _saved_analysis_and_key(app) -> None:
    _run_matching(app)
    app.text_input(key="analysis_analyst").input(ANALYST).run()
    app.button(key="save_analysis").click().run()
    app.switch_page("page_findings.py").run()
    labels = {t.label: t for t in app.text_input}
    labels["Analyst name"].input(ANALYST)
    labels["Passphrase (at least 8 characters)"].input(PASSPHRASE)
    labels["Repeat the passphrase"].input(PASSPHRASE)
    next(b for b in app.button if b.label == "Create key").click().run()
    assert not app.exception and not app.error, _texts(app.error)
    # AppTest cannot press a download button; the page's on_click callback sets this flag.
    app.session_state["new_key_downloaded"] = True
    app.text_input(key="lab_name").input("Invented Test Laboratory").run()


def test_a_new_key_cannot_sign_before_it_is_downloaded_and_the_passphrase_is_cleared(
    app, store_root
):
    _saved_analysis_and_key(app)
    app.session_state["new_key_downloaded"] = False  # as after "Create key"
    app.run()
    assert any("cannot sign until it has been downloaded" in t for t in _texts(app.warning))
    app.button(key="preview").click().run()
    app.text_input(key="passphrase").input(PASSPHRASE).run()
    app.button(key="sign").click().run()
    assert not app.exception
    assert any("has not been downloaded" in t for t in _texts(app.error))
    assert app.text_input(key="passphrase").value == ""  # the secret left the field
    assert "issued" not in app.session_state
    app.session_state["new_key_downloaded"] = True  # what the download button's callback sets
    app.run()
    app.text_input(key="passphrase").input(PASSPHRASE).run()
    app.button(key="sign").click().run()
    assert not app.error, _texts(app.error)
    assert app.session_state["issued"].record.id == 1
    assert app.text_input(key="passphrase").value == ""  # cleared after success too


def test_a_key_not_matching_the_chosen_analyst_is_refused_through_the_app(app, store_root):
    _saved_analysis_and_key(app)
    # A second analyst registered with another key; the session holds only the first key.
    from workbench.casefile.store import CaseStore
    from workbench.findings import generate_key_pair

    other = generate_key_pair(PASSPHRASE)
    with CaseStore.open(store_root) as store:
        other_fp = store.register_analyst(OTHER, "Analyst", other.public_key_pem).fingerprint
    app.run()
    signer = next(s for s in app.selectbox if s.label == "Signing analyst")
    signer.set_value(other_fp).run()
    app.button(key="preview").click().run()
    assert not app.exception and app.session_state["draft"]["analyst"]["name"] == OTHER
    app.text_input(key="passphrase").input(PASSPHRASE).run()
    app.button(key="sign").click().run()
    assert not app.exception
    # The refusal is the library's (workbench/findings/issue.py message).
    assert any("does not match the registered key" in t for t in _texts(app.error))
    assert "issued" not in app.session_state
    with CaseStore.open(store_root) as store:
        assert store.list_findings_sheets(CASE) == []  # nothing stored
        assert store.verify(CASE).ok


def test_signing_needs_a_preview_and_an_unchanged_form(app, store_root):
    _saved_analysis_and_key(app)
    app.text_input(key="passphrase").input(PASSPHRASE).run()
    app.button(key="sign").click().run()
    assert any("no draft to sign" in t for t in _texts(app.error))
    app.button(key="preview").click().run()
    app.text_area(key="sheet_notes").input("changed after the preview").run()
    app.button(key="sign").click().run()
    assert any("changed after the draft was previewed" in t for t in _texts(app.error))
    from workbench.casefile.store import CaseStore

    with CaseStore.open(store_root) as store:
        assert store.list_findings_sheets(CASE) == []


def _decide(app, verb: str, target: str, reason: str) -> None:
    app.selectbox(key="decision_verb").set_value(verb)
    app.text_input(key="decision_target").input(target)
    app.text_input(key="decision_reason").input(reason)
    app.text_input(key="decision_analyst").input(ANALYST)
    next(b for b in app.button if b.label == "Record the decision").click().run()
    assert not app.exception and not app.error, _texts(app.error)


def test_decisions_are_recorded_from_the_app_and_reach_the_signed_sheet(app, store_root):
    import json

    from workbench.casefile.store import CaseStore
    from workbench.findings.decisions import list_decisions

    _saved_analysis_and_key(app)
    _decide(app, "reject", "Cu", "Cu lines also in the blank (invented reason)")
    _decide(app, "reverse", "1", "blank re-measured: no Cu (invented reason)")
    with CaseStore.open(store_root) as store:
        (analysis,) = store.list_analyses(CASE)
        got = [(d.seq, d.action, d.target, d.reverses) for d in list_decisions(store, analysis.id)]
    assert got == [(1, "reject_element", "Cu", None), (2, "reverse", "decision 1", 1)]
    # a bad decision is one clear error and nothing is stored
    app.selectbox(key="decision_verb").set_value("reverse")
    app.text_input(key="decision_target").input("first one")
    app.text_input(key="decision_reason").input("typo (invented)")
    app.text_input(key="decision_analyst").input(ANALYST)
    next(b for b in app.button if b.label == "Record the decision").click().run()
    assert any("needs a decision number" in t for t in _texts(app.error))
    app.button(key="preview").click().run()
    app.text_input(key="passphrase").input(PASSPHRASE).run()
    app.button(key="sign").click().run()
    assert not app.error, _texts(app.error)
    issued = app.session_state["issued"]
    sheet = json.loads(issued.json_bytes)
    assert len(sheet["decisions"]) == 2  # both decisions, the reversal included, are signed


REVIEWER = "Cy Reviewer (invented)"


def _issue_sheet(app) -> None:
    _saved_analysis_and_key(app)
    app.button(key="preview").click().run()
    app.text_input(key="passphrase").input(PASSPHRASE).run()
    app.button(key="sign").click().run()
    assert not app.error, _texts(app.error)


def _review(app, key_pem: bytes, passphrase: str, approve: bool, comments: str = "") -> None:
    app.file_uploader(key="review_key").set_value(
        [("reviewer.pem", key_pem, "application/x-pem-file")]
    ).run()
    app.text_input(key="review_passphrase").input(passphrase)
    app.text_area(key="review_comments").input(comments)
    app.button(key="review_approve" if approve else "review_return").click().run()
    assert not app.exception
    assert app.session_state["review_passphrase"] == ""  # the secret left the field


def test_technical_review_from_the_app_refuses_self_review_then_countersigns(app, store_root):
    """The review tab calls workbench.findings.review.review_sheet, as the CLI does."""
    from workbench.casefile.decisions import list_reviews
    from workbench.casefile.store import CaseStore
    from workbench.findings import generate_key_pair
    from workbench.findings.review import verify_review_with_store

    _issue_sheet(app)
    sheet_id = app.session_state["issued"].record.id
    analyst_key = app.session_state["new_private_key"]
    reviewer = generate_key_pair(PASSPHRASE)
    with CaseStore.open(store_root) as store:
        store.register_analyst(REVIEWER, "Reviewer", reviewer.public_key_pem)
    app.run()
    # the analyst cannot review their own sheet (refusal worded by workbench/findings/review.py)
    _review(app, analyst_key, PASSPHRASE, approve=True)
    assert any("cannot review their own analysis" in t for t in _texts(app.error))
    # a return needs comments
    _review(app, reviewer.private_key_pem, PASSPHRASE, approve=False)
    assert any("needs the reviewer's comments" in t for t in _texts(app.error))
    # a wrong passphrase is one clear error
    _review(app, reviewer.private_key_pem, "not the passphrase", approve=True)
    (err,) = _texts(app.error)  # one clear error, worded by workbench/findings/keys.py
    assert "wrong passphrase" in err
    with CaseStore.open(store_root) as store:
        assert list_reviews(store, sheet_id) == []  # nothing stored by any refusal
    _review(app, reviewer.private_key_pem, PASSPHRASE, approve=True)
    assert not app.error, _texts(app.error)
    assert any("approved and countersigned" in t for t in _texts(app.success))
    out = app.session_state["review_outcome"]
    with CaseStore.open(store_root) as store:
        (rev,) = list_reviews(store, sheet_id)
        assert (rev.outcome, rev.reviewer) == ("approved", REVIEWER)
        issued = app.session_state["issued"]
        res = verify_review_with_store(
            store, issued.pdf_bytes, issued.json_bytes, issued.signature_record,
            out.signature_record, review_raw=out.signature_raw,
        )  # fmt: skip
    assert res.signer == REVIEWER
    assert "reviewer is not the analyst" in res.checks
    # once approved, the form is gone: a second approval cannot be attempted from the app
    assert not [b for b in app.button if b.key == "review_approve"]
