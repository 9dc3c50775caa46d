"""Bundles carry the analyst's decisions and the technical reviews (format 3).

An invented case (tests/findings/findings_data.py) with four decisions, an issued
sheet, a returned review and an approval is exported, imported into a store that
already holds another case (so every row id differs), and verified there as
``findings verify --store`` does; then forged bundles are refused naming the record.
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import pytest

from tests.casefile.attack_harness import rehash_records
from tests.casefile.helpers import populate
from tests.findings.findings_data import issue_sheet, make_store
from workbench.casefile import CaseStore, export_bundle, import_bundle
from workbench.casefile.bundle_format import FORMAT_VERSION
from workbench.casefile.decisions import REVIEW_HASH_FIELDS, list_reviews, stored_decisions
from workbench.casefile.hashing import canonical_json, record_hash, sha256_hex
from workbench.errors import BundleError, SignatureInvalidError
from workbench.findings import generate_key_pair, review_sheet
from workbench.findings.decisions import check_sheet_decisions, decide
from workbench.findings.review import verify_review_with_store
from workbench.findings.signing import verify_sheet_with_store

PASS = "bundle-quay-31"  # invented passphrase
CASE = "HFC-2026-0042"  # the invented case of tests/findings/findings_data.py
ZOE, BJORN = "Zoë Ångström", "Bjørn Łukasz"  # invented analyst and reviewer


@pytest.fixture(scope="module")
def source(tmp_path_factory) -> dict:
    """A reviewed sheet with decisions, exported once for the whole module."""
    tmp = tmp_path_factory.mktemp("src")
    zoe, bjorn = generate_key_pair(PASS), generate_key_pair(PASS)
    st = make_store(tmp / "store", {ZOE: zoe.public_key_pem, BJORN: bjorn.public_key_pem})
    try:
        aid = st.list_analyses(CASE)[0].id
        # Fixture result: Pb I with lines "Pb I 405.78" and "Pb I 368.35"; Ba II.
        decide(st, aid, "reject", "Ba", reason="455.40 nm is explained by Ti here", analyst=ZOE)
        decide(st, aid, "reject", "Pb I|Pb I 368.35", reason="saturated on the bench", analyst=ZOE)
        decide(st, aid, "add", "Sr", reason="by eye", analyst=ZOE, line_texts=["500.1:Sr I"])
        decide(st, aid, "reverse", "1", reason="Ti excluded after all", analyst=ZOE)
        issued = issue_sheet(st, aid, zoe, PASS, tmp / "out")
        for approve, comments in ((False, "Ti I line 498 unresolved"), (True, "checked")):
            review_sheet(
                st,
                issued.sheet_id,
                private_key_pem=bjorn.private_key_pem,
                passphrase=PASS,
                approve=approve,
                comments=comments,
            )
        bundle = export_bundle(st, CASE, tmp / "case.zip")
        decisions = [d.record_hash for d in stored_decisions(st, aid)]
        reviews = [r.record_hash for r in list_reviews(st, issued.sheet_id)]
    finally:
        st.close()
    return {
        "bundle": bundle,
        "issued": issued,
        "decisions": decisions,
        "reviews": reviews,
        "fps": (zoe.fingerprint, bjorn.fingerprint),
        "pdf": issued.paths["pdf"],
    }


def _other_lab(root: Path) -> Path:
    """A store that already holds another case, so imported rows get other ids."""
    with CaseStore.open(root) as d:
        populate(d, "HLX-2026-0007")
    return root


def _entries(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as zf:
        return {n: zf.read(n) for n in zf.namelist()}


def _write(path: Path, entries: dict[str, bytes]) -> Path:
    # What a careful forger does last: recompute the manifest and its hash.
    manifest = json.loads(entries["manifest.json"])
    manifest["entries"] = [
        {"name": n, "sha256": sha256_hex(b), "size_bytes": len(b)}
        for n, b in sorted(entries.items())
        if n not in ("manifest.json", "manifest.sha256")
    ]
    mb = canonical_json(manifest)
    entries = {**entries, "manifest.json": mb, "manifest.sha256": (sha256_hex(mb) + "\n").encode()}
    with zipfile.ZipFile(path, "w") as zf:
        for name, data in sorted(entries.items()):
            zf.writestr(name, data)
    return path


def _snapshot(root: Path) -> tuple:
    files = sorted(str(p.relative_to(root)) for p in (root / "files").rglob("*") if p.is_file())
    with CaseStore.open(root) as s:
        rows = s.connection.execute(
            "SELECT (SELECT COUNT(*) FROM cases), (SELECT COUNT(*) FROM custody_events), "
            "(SELECT COUNT(*) FROM analysts), (SELECT COUNT(*) FROM analysis_decisions), "
            "(SELECT COUNT(*) FROM sheet_reviews), (SELECT COUNT(*) FROM ledger)"
        ).fetchone()
    return tuple(rows), tuple(files)


def test_round_trip_keeps_decisions_review_and_verifies_in_the_other_store(source, tmp_path):
    dst = _other_lab(tmp_path / "dst")
    manifest = json.loads(_entries(source["bundle"])["manifest.json"])
    assert manifest["format_version"] == FORMAT_VERSION == 3
    issued = source["issued"]
    files = (issued.pdf_bytes, issued.json_bytes, issued.signature_record)
    with CaseStore.open(dst) as d:
        result = import_bundle(source["bundle"], d)
        assert result.status == "imported"
        assert (result.counts["decisions"], result.counts["reviews"]) == (4, 2)
        (analysis,) = d.list_analyses(CASE)
        (sheet,) = d.list_findings_sheets(CASE)
        assert analysis.id != issued.content["analysis"]["id"]  # ids differ in this store
        assert [x.record_hash for x in stored_decisions(d, analysis.id)] == source["decisions"]
        reviews = list_reviews(d, sheet.id)
        assert [r.record_hash for r in reviews] == source["reviews"]
        assert [r.outcome for r in reviews] == ["returned", "approved"]
        # Both keys arrive imported and untrusted, the reviewer's as the analyst's.
        for fp in source["fps"]:
            a = d.get_analyst(fp)
            assert (a.provenance, a.trusted) == ("imported", False)
        with pytest.raises(SignatureInvalidError, match="untrusted key"):
            verify_sheet_with_store(d, *files)
        zoe_fp, bjorn_fp = source["fps"]
        d.trust_analyst(zoe_fp, "Ines Calder (lab manager, invented)", "confirmed by phone")
        # What 'findings verify --store' checks: signature, decisions, the review on record.
        assert verify_sheet_with_store(d, *files).signer == ZOE
        assert check_sheet_decisions(d, issued.json_bytes) == []
        approval = reviews[1]
        # The countersignature is intact, but its key came in the bundle: not yet counted.
        with pytest.raises(SignatureInvalidError, match="untrusted key: reviewer key"):
            verify_review_with_store(d, *files, d.file_bytes(approval.record_sha256))
        d.trust_analyst(bjorn_fp, "Ines Calder (lab manager, invented)", "confirmed by phone")
        countersigned = verify_review_with_store(
            d,
            *files,
            d.file_bytes(approval.record_sha256),
            review_raw=d.file_bytes(approval.signature_sha256),
        )
        assert countersigned.signer == BJORN
        assert d.verify().ok
        # The same case exported again from here gives the same bytes.
        again = export_bundle(d, CASE, tmp_path / "again.zip")
        assert again.read_bytes() == source["bundle"].read_bytes()
        assert import_bundle(source["bundle"], d).status == "already present"


def test_round_trip_through_the_cli(source, tmp_path, capsys):
    from workbench.cli import main

    out = tmp_path / "cli.zip"
    src = source["bundle"].parent / "store"
    assert main(["bundle", "export", CASE, str(out), "--store", str(src)]) == 0
    assert out.read_bytes() == source["bundle"].read_bytes()
    dst = str(_other_lab(tmp_path / "dst"))
    assert main(["bundle", "import", str(out), "--store", dst]) == 0
    assert f"case {CASE}: imported (4 decisions, 2 reviews)" in capsys.readouterr().out
    pdf = str(source["pdf"])  # no review files beside it: the review on record is used
    assert not Path(pdf[:-4] + ".review.sig.json").exists()
    assert main(["findings", "verify", pdf, "--store", dst]) == 4  # keys not yet trusted
    assert "untrusted key" in capsys.readouterr().out
    for fp in source["fps"]:
        argv = ["keys", "trust", fp, "--by", "Ines Calder", "--reason", "phoned", "--store", dst]
        assert main(argv) == 0
    capsys.readouterr()
    assert main(["findings", "verify", pdf, "--store", dst]) == 0
    text = capsys.readouterr().out
    assert f"reviewed and countersigned by {BJORN}" in text
    assert "review: raw .review.sig file valid" in text


# ------------------------------------------------------------------ tampering


def _records(e: dict[str, bytes]) -> dict:
    return {n: json.loads(e[f"records/{n}.json"]) for n in ("case", "items", "events")}


def _store_records(e: dict[str, bytes], records: dict) -> None:
    for n, data in records.items():
        e[f"records/{n}.json"] = canonical_json(data)


def _rechain_review(e: dict[str, bytes], old: str, new: str) -> None:
    """Point the 'reviewed' custody event at the re-hashed review, then re-chain every event."""
    records = _records(e)
    for ev in records["events"]:
        if ev.get("ref_hash") == old:
            ev["ref_hash"] = new
    rehash_records(records)
    _store_records(e, records)


def _altered_decision_reason(e: dict[str, bytes]) -> str:
    ds = json.loads(e["records/decisions.json"])
    ds[1]["reason"] = "not saturated after all"
    e["records/decisions.json"] = canonical_json(ds)
    return "decision 2 was altered after it was recorded"


def _dropped_decision(e: dict[str, bytes]) -> str:
    ds = json.loads(e["records/decisions.json"])
    del ds[1]
    e["records/decisions.json"] = canonical_json(ds)
    return "decision 3 follows decision 1 (a decision is missing)"


def _dropped_decision_rechained(e: dict[str, bytes]) -> str:
    """The forger renumbers and re-hashes the rest: the signed sheet still prints decision 2."""
    from workbench.casefile.decisions import DECISION_HASH_FIELDS
    from workbench.casefile.hashing import GENESIS_HASH

    ds = json.loads(e["records/decisions.json"])
    del ds[1]
    prev = GENESIS_HASH
    for i, d in enumerate(ds, start=1):
        d.update(seq=i, prev_hash=prev)
        d["record_hash"] = prev = record_hash(d, DECISION_HASH_FIELDS)
    e["records/decisions.json"] = canonical_json(ds)
    return "decision 2 printed on signed findings sheet"


def _altered_review_comments(e: dict[str, bytes]) -> str:
    rs = json.loads(e["records/reviews.json"])
    rs[1]["comments"] = "checked, all lines fine"
    e["records/reviews.json"] = canonical_json(rs)
    return f"review by {BJORN} of findings sheet"


def _altered_review_comments_rehashed(e: dict[str, bytes]) -> str:
    """The review re-hashed, the custody chain not: no custody event names it."""
    rs = json.loads(e["records/reviews.json"])
    rs[1]["comments"] = "checked, all lines fine"
    rs[1]["record_hash"] = record_hash(rs[1], REVIEW_HASH_FIELDS)
    e["records/reviews.json"] = canonical_json(rs)
    return "no 'reviewed' custody event of its item names it"


def _swapped_review_signature(e: dict[str, bytes]) -> str:
    """The approval's raw signature file swapped for the analyst's; everything re-hashed."""
    (sheet,) = json.loads(e["records/findings_sheets.json"])
    rs = json.loads(e["records/reviews.json"])
    old = rs[1]["record_hash"]
    del e[f"files/{rs[1]['signature_sha256']}"]  # no longer named by any record
    rs[1]["signature_sha256"] = sheet["signature_sha256"]
    rs[1]["record_hash"] = record_hash(rs[1], REVIEW_HASH_FIELDS)
    e["records/reviews.json"] = canonical_json(rs)
    _rechain_review(e, old, rs[1]["record_hash"])
    return "raw review signature file is not the signature in the review record"


def _swapped_both_review_files(e: dict[str, bytes]) -> str:
    """Both review files replaced by the analyst's own: a self-review in disguise."""
    (sheet,) = json.loads(e["records/findings_sheets.json"])
    rs = json.loads(e["records/reviews.json"])
    old = rs[1]["record_hash"]
    for k in ("signature_sha256", "record_sha256"):
        del e[f"files/{rs[1][k]}"]  # no longer named by any record
    rs[1].update(signature_sha256=sheet["signature_sha256"], record_sha256=sheet["record_sha256"])
    rs[1]["record_hash"] = record_hash(rs[1], REVIEW_HASH_FIELDS)
    e["records/reviews.json"] = canonical_json(rs)
    _rechain_review(e, old, rs[1]["record_hash"])
    return "made with the analyst's own key"


def _dropped_review(e: dict[str, bytes]) -> str:
    """The approval removed, its signature files too: the custody log still names it."""
    rs = json.loads(e["records/reviews.json"])
    gone = rs.pop(1)
    e["records/reviews.json"] = canonical_json(rs)
    for k in ("signature_sha256", "record_sha256"):
        del e[f"files/{gone[k]}"]
    return "names a review"


TAMPERINGS = {
    f.__name__[1:]: f
    for f in (
        _altered_decision_reason,
        _dropped_decision,
        _dropped_decision_rechained,
        _altered_review_comments,
        _altered_review_comments_rehashed,
        _swapped_review_signature,
        _swapped_both_review_files,
        _dropped_review,
    )
}


@pytest.mark.parametrize("name", sorted(TAMPERINGS))
def test_tampered_decisions_and_reviews_refused_naming_the_record(source, tmp_path, name):
    e = _entries(source["bundle"])
    expect = TAMPERINGS[name](e)
    bad = _write(tmp_path / f"{name}.zip", e)
    dst = _other_lab(tmp_path / "dst")
    before = _snapshot(dst)
    with CaseStore.open(dst) as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    message = str(err.value)
    # one clear error naming the record, as designed (common practice, no source)
    assert expect in message, message
    assert "nothing was imported" in message
    assert _snapshot(dst) == before
    assert not list((dst / "files").glob(".staging-*"))


@pytest.mark.parametrize(
    ("record", "edit", "words"),
    [
        ("decisions", lambda r: r[0].update(action="overrule"), "action 'overrule'"),
        ("decisions", lambda r: r[0].update(reason="  "), "reason is empty"),
        ("decisions", lambda r: r[2].update(lines=[{"position": "x", "n": [1e999]}]), "finite"),
        ("reviews", lambda r: r[0].update(comments=""), "comments is empty"),
        ("reviews", lambda r: r[1].update(outcome="returned"), "carries no signature"),
        ("reviews", lambda r: r[0].update(reviewer=ZOE), "not the name registered"),
        ("reviews", lambda r: r.insert(0, dict(r[0])), "appears twice"),
    ],
)
def test_fields_checked_as_on_direct_entry(source, tmp_path, record, edit, words):
    """What direct entry refuses, import refuses (before any hash is looked at)."""
    e = _entries(source["bundle"])
    data = json.loads(e[f"records/{record}.json"])
    edit(data)
    e[f"records/{record}.json"] = json.dumps(data).encode()
    bad = _write(tmp_path / "bad.zip", e)
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    assert "not valid" in str(err.value) and words in str(err.value), str(err.value)
    assert f"records/{record}.json" in str(err.value)


def test_a_format_2_bundle_still_imports(tmp_path):
    """A bundle written by commit ba43590 (format 2, tests/data/casefile/make_bundle_v2.py)."""
    old = Path(__file__).parents[1] / "data" / "casefile" / "bundle-v2-reviewed.zip"
    assert json.loads(_entries(old)["manifest.json"])["format_version"] == 2
    with CaseStore.open(tmp_path / "dst") as d:
        result = import_bundle(old, d)
        assert result.status == "imported"
        (analysis,) = d.list_analyses("OLD-2026-0002")
        (sheet,) = d.list_findings_sheets("OLD-2026-0002")
        # format 2 carried neither; the custody log keeps the 'reviewed' event it had
        assert stored_decisions(d, analysis.id) == [] and list_reviews(d, sheet.id) == []
        kinds = [ev.kind for ev in d.custody_events("OLD-2026-0002/1")]
        assert kinds[-1] == "reviewed"
        report = d.verify()
        assert report.ok
        # custody verify names the review it cannot hold, as a warning (not a break)
        assert any("format-2 bundle" in w for w in report.warnings), report.warnings
        assert import_bundle(old, d).status == "already present"
        # Its review was left behind: it is passed on as it came, format 2, same bytes.
        again = export_bundle(d, "OLD-2026-0002", tmp_path / "again.zip")
        assert again.read_bytes() == old.read_bytes()
        # Once a decision is recorded here, format 2 would lose it: refused, not written.
        from workbench.casefile.decisions import append_decision
        from workbench.errors import StoreIntegrityError

        append_decision(d, analysis.id, action="accept_element", target="Na", reason="D lines",
                        analyst="Ines Calder")  # fmt: skip
        with pytest.raises(StoreIntegrityError, match="names a review"):
            export_bundle(d, "OLD-2026-0002", tmp_path / "new.zip")
    assert not (tmp_path / "new.zip").exists()


def test_a_format_2_bundle_without_reviews_is_passed_on_as_format_3(tmp_path):
    from tests.casefile.helpers import add_signed_sheet

    with CaseStore.open(tmp_path / "src") as s:
        info = populate(s, "HLX-2026-0007")
        add_signed_sheet(s, info["analysis"].id)
        v3 = _entries(export_bundle(s, "HLX-2026-0007", tmp_path / "v3.zip"))
    # The same case as format 2 wrote it: no decisions or reviews entries, version 2.
    v2 = {
        k: b for k, b in v3.items() if k not in ("records/decisions.json", "records/reviews.json")
    }
    manifest = json.loads(v2["manifest.json"])
    manifest["format_version"] = 2
    v2["manifest.json"] = canonical_json(manifest)
    old = _write(tmp_path / "v2.zip", v2)
    with CaseStore.open(tmp_path / "dst") as d:
        assert import_bundle(old, d).status == "imported"
        assert d.verify().ok
        again = export_bundle(d, "HLX-2026-0007", tmp_path / "again.zip")
    assert _entries(again) == v3


def test_format_2_bundle_cannot_smuggle_format_3_records(source, tmp_path):
    e = _entries(source["bundle"])
    manifest = json.loads(e["manifest.json"])
    manifest["format_version"] = 2
    e["manifest.json"] = canonical_json(manifest)
    bad = _write(tmp_path / "bad.zip", e)
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    assert "records/decisions.json" in str(err.value)
    assert "not part of bundle format version 2" in str(err.value)


def test_export_refuses_a_store_whose_decisions_are_broken(source, tmp_path):
    import shutil
    import sqlite3

    from workbench.errors import StoreIntegrityError

    src = tmp_path / "copy"
    shutil.copytree(source["bundle"].parent / "store", src)
    conn = sqlite3.connect(src / "cases.sqlite")
    conn.execute("DROP TRIGGER analysis_decisions_no_update")
    conn.execute("UPDATE analysis_decisions SET reason='edited later' WHERE seq=2")
    conn.commit()
    conn.close()
    # the ledger (store verify) notices first; either way the store is not exported
    with CaseStore.open(src) as s, pytest.raises(StoreIntegrityError, match=r"decision #?2"):
        export_bundle(s, CASE, tmp_path / "out.zip")
    assert not (tmp_path / "out.zip").exists()


@pytest.mark.parametrize(
    ("record", "edit"),
    [
        ("reviews", lambda r: r[0].update(sheet_hash=["a"])),
        ("reviews", lambda r: r[0].update(reviewer_fingerprint={"x": 1})),
        ("reviews", lambda r: r[0].update(record_hash=[1])),
        ("decisions", lambda r: r[0].update(analysis_hash={"x": 1}, seq=[1])),
        ("decisions", lambda r: r[0].update(lines=[[1]])),
        ("decisions", lambda r: r[0].clear()),
    ],
)
def test_hostile_shapes_are_a_bundle_error_not_a_traceback(source, tmp_path, record, edit):
    e = _entries(source["bundle"])
    data = json.loads(e[f"records/{record}.json"])
    edit(data)
    e[f"records/{record}.json"] = json.dumps(data).encode()
    bad = _write(tmp_path / "bad.zip", e)
    with CaseStore.open(tmp_path / "dst") as d, pytest.raises(BundleError) as err:
        import_bundle(bad, d)
    assert "nothing was imported" in str(err.value)
