import json
import sqlite3

import pytest

from tests.casefile.helpers import populate
from workbench.casefile import GENESIS_HASH, CaseStore, event_hash
from workbench.casefile.schema import SCHEMA_VERSION, connect, schema_version
from workbench.errors import (
    CaseFileError,
    CustodyRuleError,
    InputError,
    NotFoundError,
    StoreIntegrityError,
    ValueRangeError,
)


def test_store_location_priority(tmp_path, monkeypatch):
    monkeypatch.setenv("WORKBENCH_STORE", str(tmp_path / "env"))
    with CaseStore.open() as s:
        assert s.root == tmp_path / "env"
    with CaseStore.open(tmp_path / "explicit") as s:
        assert s.root == tmp_path / "explicit"
    assert (tmp_path / "explicit" / "cases.sqlite").is_file()


def test_pragmas(store):
    c = store.connection
    # WAL and foreign keys as required by the design brief (common practice, no source)
    assert c.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert c.execute("PRAGMA foreign_keys").fetchone()[0] == 1
    assert schema_version(c) == SCHEMA_VERSION


def test_migrates_old_schema_in_place(tmp_path):
    db = tmp_path / "s" / "cases.sqlite"
    db.parent.mkdir()
    conn = connect(db, target_version=1)
    assert schema_version(conn) == 1
    conn.close()
    with CaseStore.open(tmp_path / "s") as s:
        assert schema_version(s.connection) == SCHEMA_VERSION
        names = {r[0] for r in s.connection.execute("SELECT name FROM sqlite_master")}
        assert "custody_events_no_update" in names


def test_refuses_newer_schema(tmp_path):
    with CaseStore.open(tmp_path / "s") as s:
        s.connection.execute("INSERT INTO schema_version VALUES (99, 'x')")
    with pytest.raises(CaseFileError, match="newer than this software"):
        CaseStore.open(tmp_path / "s")


def test_not_a_database(tmp_path):
    (tmp_path / "s").mkdir()
    (tmp_path / "s" / "cases.sqlite").write_bytes(b"not sqlite at all" * 100)
    with pytest.raises(StoreIntegrityError):
        CaseStore.open(tmp_path / "s")


def test_case_crud_and_duplicates(store):
    c = store.create_case("K-1", "Title", "Party")
    assert c.status == "open"
    with pytest.raises(CaseFileError, match="already exists"):
        store.create_case("K-1", "Other", "Party")
    with pytest.raises(NotFoundError):
        store.get_case("K-2")
    assert [x.case_number for x in store.list_cases()] == ["K-1"]
    assert store.set_case_status("K-1", "closed").status == "closed"
    with pytest.raises(CaseFileError, match="closed"):
        store.add_item("K-1", "1", "x", received_by="A", received_from="B")


def test_item_add_records_receipt_in_same_transaction(store):
    store.create_case("K-1", "Title", "Party")
    it = store.add_item(
        "K-1", "1", "knife", seal_numbers=["S1", "S2"], received_by="Ann", received_from="Bo"
    )
    assert it.holder == "Ann" and it.seal_state == "sealed" and it.seals == ("S1", "S2")
    (ev,) = store.custody_events("K-1/1")
    assert ev.kind == "received" and ev.prev_hash == GENESIS_HASH
    assert ev.hash == event_hash(ev.to_dict())
    with pytest.raises(CaseFileError, match="already exists"):
        store.add_item("K-1", "1", "knife", received_by="Ann", received_from="Bo")
    with pytest.raises(InputError):
        store.add_item("K-1", "2/3", "x", received_by="Ann", received_from="Bo")


def test_subsample_history_includes_parent(store):
    populate(store, "K-9")
    hist = store.custody_events("K-9/1.1")
    kinds = [(e.item_number, e.kind) for e in hist]
    assert kinds[:3] == [("1", "received"), ("1", "opened"), ("1", "sub-sampled")]
    assert kinds[3] == ("1.1", "sub-sampled")
    assert hist[3].prev_hash == hist[2].hash
    assert store.get_item("K-9", "1.1").parent_item_number == "1"


def test_custody_rules(store):
    store.create_case("K-1", "T", "P")
    store.add_item(
        "K-1",
        "1",
        "x",
        seal_numbers=["S1"],
        received_by="Ann",
        received_from="Bo",
        at="2026-01-01T10:00:00Z",
    )
    ref = "K-1/1"
    with pytest.raises(CustodyRuleError, match="'holder'"):
        store.add_custody_event(ref, "transferred", "Cy", to_party="Di", at="2026-01-01T11:00:00Z")
    with pytest.raises(CustodyRuleError, match="'time-order'"):
        store.add_custody_event(ref, "note", "Ann", note="x", at="2026-01-01T09:00:00Z")
    with pytest.raises(CustodyRuleError, match="'open-records-seal'"):
        store.add_custody_event(ref, "opened", "Ann", at="2026-01-01T11:00:00Z")
    with pytest.raises(CustodyRuleError, match="'open-records-seal'"):
        store.add_custody_event(ref, "opened", "Ann", seal_number="S9", at="2026-01-01T11:00:00Z")
    store.add_custody_event(ref, "opened", "Ann", seal_number="S1", at="2026-01-01T11:00:00Z")
    with pytest.raises(CustodyRuleError, match="'seal-number'"):
        store.add_custody_event(ref, "sealed", "Ann", at="2026-01-01T12:00:00Z")
    with pytest.raises(CustodyRuleError, match="'correction'"):
        store.add_custody_event(ref, "correction", "Ann", note="wrong time", corrects=7)
    with pytest.raises(CustodyRuleError, match="'correction'"):
        store.add_custody_event(ref, "correction", "Ann", corrects=1)
    corr = store.add_custody_event(
        ref, "correction", "Ann", note="seal was S1 not S2", corrects=1, at="2026-01-01T12:30:00Z"
    )
    assert corr.corrects_seq == 1
    store.add_custody_event(ref, "transferred", "Ann", to_party="Cy", at="2026-01-01T13:00:00Z")
    assert store.get_item(ref).holder == "Cy"
    with pytest.raises(CustodyRuleError, match="recorded together with its record"):
        store.add_custody_event(ref, "analysed", "Cy")
    store.add_custody_event(ref, "disposed", "Cy", note="destroyed", at="2026-01-01T14:00:00Z")
    with pytest.raises(CustodyRuleError, match="'disposed'"):
        store.add_custody_event(ref, "note", "Cy", note="late")
    with pytest.raises(CustodyRuleError, match="'disposed'"):
        store.add_item("K-1", "1.1", "part", parent_item="1", received_by="Cy")
    # nothing half-written: the refused sub-sample left no item row
    assert [i.item_number for i in store.list_items("K-1")] == ["1"]
    assert store.verify().ok


def test_future_time_refused(store):
    store.create_case("K-1", "T", "P")
    with pytest.raises(ValueRangeError, match="future"):
        store.add_item("K-1", "1", "x", received_by="A", received_from="B", at="2999-01-01T00:00Z")


def test_measurement_and_analysis(store):
    info = populate(store, "K-5")
    m = info["measurement"]
    # size of the bytes stored by populate() (counted from the literal, no source needed)
    assert m.technique == "LIBS" and m.size_bytes == len(
        b"wavelength_nm,intensity\n589.0,1200\n589.6,800\n"
    )
    assert store.file_bytes(m.sha256).startswith(b"wavelength_nm")
    a = store.get_analysis(info["analysis"].id)
    assert json.loads(a.result_json) == {"elements": ["Na"]}
    assert [x.id for x in store.list_analyses("K-5")] == [a.id]
    assert [x.id for x in store.list_analyses(item="K-5/1.1")] == [a.id]
    kinds = [e.kind for e in store.custody_events("K-5/1.1", own_only=True)]
    assert kinds == ["sub-sampled", "note", "analysed"]
    assert store.custody_events("K-5/1.1")[-1].ref_hash == a.record_hash
    with pytest.raises(InputError, match="technique"):
        store.add_measurement("K-5/1", b"x", "f", "NMR", "i", {}, "o", "2026-01-01T00:00:00Z")
    with pytest.raises(InputError, match="JSON"):
        store.add_analysis(
            m.id,
            parameters={},
            reference_sets=[],
            result_json=b"{oops",
            software_version="1",
            analyst="x",
        )


def test_triggers_refuse_update_and_delete(store):
    populate(store, "K-3")
    c = store.connection
    for sql in (
        "UPDATE custody_events SET note='x'",
        "DELETE FROM custody_events",
        "UPDATE analyses SET analyst='x'",
        "DELETE FROM measurements",
        "UPDATE items SET description='x'",
        "DELETE FROM cases",
    ):
        with pytest.raises(sqlite3.IntegrityError):
            c.execute(sql)


def test_search_cases(store):
    populate(store, "HLX-2026-0007")
    store.create_case("HLX-2026-0008", "Pigment on panel painting", "Museum of Ostrava Vale")
    hits = store.search_cases("green glas")
    assert hits[0].case_number == "HLX-2026-0007"
    hits = store.search_cases("pigment panel")
    assert hits[0].case_number == "HLX-2026-0008"
    assert hits[0].score >= hits[-1].score
    # description of an item is searched too
    hits = store.search_cases("largest fragment")
    assert hits[0].case_number == "HLX-2026-0007" and "description" in hits[0].field


def test_analysts(store):
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    from workbench.casefile import sha256_hex

    key = Ed25519PrivateKey.from_private_bytes(bytes(range(32)))  # fixed test key
    pem = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    raw = key.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    a = store.register_analyst("Dana Whitlock", "examiner", pem)
    # fingerprint definition from the project brief: "SHA256:" + hex SHA-256 of the raw key
    assert a.fingerprint == "SHA256:" + sha256_hex(raw)
    assert store.get_analyst("Dana Whitlock").fingerprint == a.fingerprint
    with pytest.raises(CaseFileError):
        store.register_analyst("Dana Whitlock", "examiner", pem)
    r = store.revoke_analyst(a.fingerprint, "laptop lost", "Lab manager")
    assert r.status == "revoked" and r.revoked_reason == "laptop lost"
    with pytest.raises(CaseFileError):
        store.revoke_analyst(a.fingerprint, "again", "x")
    with pytest.raises(InputError):
        store.register_analyst(
            "X", "y", b"-----BEGIN PUBLIC KEY-----\nAAAA\n-----END PUBLIC KEY-----\n"
        )


def test_current_location_follows_chain(store):
    info = populate(store)
    # populate() opened item 1 at "bench 4" after storing it in "store room B, shelf 2"
    item = store.get_item(f"{info['case']}/1")
    assert item.storage_location == "store room B, shelf 2"
    assert item.current_location == "bench 4"


def test_failed_migration_changes_nothing(tmp_path, monkeypatch):
    from workbench.casefile import schema

    db = tmp_path / "s" / "cases.sqlite"
    db.parent.mkdir()
    connect(db, target_version=1).close()
    broken = (*schema.MIGRATIONS[:1], (2, (*schema.MIGRATIONS[1][1][:3], "THIS IS NOT SQL")))
    monkeypatch.setattr(schema, "MIGRATIONS", broken)
    with pytest.raises(CaseFileError, match="left as it was"):
        connect(db)
    monkeypatch.undo()
    conn = sqlite3.connect(db)
    # the half-applied migration 2 was rolled back as one transaction
    assert conn.execute("SELECT MAX(version) FROM schema_version").fetchone()[0] == 1
    assert not conn.execute("SELECT name FROM sqlite_master WHERE type='trigger'").fetchall()
    conn.close()


# ------------------------------------------------------------------ issue 11 item 8
def test_sealed_item_cannot_be_sub_sampled_without_opening(store):
    store.create_case("SEAL-1", "sealed parcel", "someone")
    store.add_item(
        "SEAL-1", "1", "parcel", seal_numbers=["S-77"], received_by="Ana", received_from="PC Bo"
    )
    before = store.connection.execute("SELECT COUNT(*) FROM custody_events").fetchone()[0]
    with pytest.raises(CustodyRuleError, match="'sealed-sub-sample'"):
        store.add_item("SEAL-1", "1.1", "chip", parent_item="1", received_by="Ana")
    # refused with nothing written (no item row, no event in either chain)
    assert store.connection.execute("SELECT COUNT(*) FROM custody_events").fetchone()[0] == before
    assert [i.item_number for i in store.list_items("SEAL-1")] == ["1"]
    store.add_custody_event("SEAL-1/1", "opened", "Ana", seal_number="S-77")
    sub = store.add_item("SEAL-1", "1.1", "chip", parent_item="1", received_by="Ana")
    # a sub-sample of an opened item starts open (a defined state, never 'unknown')
    assert sub.seal_state == "open"
    sealed = store.add_item(
        "SEAL-1", "1.2", "chip", parent_item="1", received_by="Ana", seal_numbers=["S-78"]
    )
    assert (sealed.seal_state, sealed.seals) == ("sealed", ("S-78",))
    assert store.verify().ok


def test_forged_sub_sampling_of_a_sealed_item_fails_verify(store):
    from tests.casefile.hostile import raw

    store.create_case("SEAL-2", "sealed parcel", "someone")
    store.add_item(
        "SEAL-2", "1", "parcel", seal_numbers=["S-9"], received_by="Ana", received_from="PC Bo"
    )
    store.add_custody_event("SEAL-2/1", "opened", "Ana", seal_number="S-9")
    store.add_item("SEAL-2", "1.1", "chip", parent_item="1", received_by="Ana")
    conn = raw(store.root)
    # the 'opened' event removed and the chain re-linked: the rule itself must fail
    from workbench.casefile import event_hash

    rows = conn.execute(
        "SELECT e.*, i.item_number FROM custody_events e JOIN items i ON i.id=e.item_id "
        "WHERE i.item_number='1' ORDER BY seq"
    ).fetchall()
    cols = [d[0] for d in conn.execute("SELECT * FROM custody_events LIMIT 1").description]
    first, opened, sub = (dict(zip([*cols, "item_number"], r, strict=True)) for r in rows)
    conn.execute("DELETE FROM custody_events WHERE id=?", (opened["id"],))
    sub.update(seq=2, prev_hash=first["hash"], seal_state="sealed", seal_number="S-9")
    sub["case_number"] = "SEAL-2"
    conn.execute(
        "UPDATE custody_events SET seq=2, prev_hash=?, seal_state='sealed', seal_number='S-9', "
        "hash=? WHERE id=?",
        (first["hash"], event_hash(sub), sub["id"]),
    )
    conn.close()
    kinds = [b.kind for b in store.verify().breaks]
    assert "rule-violation" in kinds


def test_demo_seeding_opens_the_seal_before_sub_sampling(store):
    from workbench.demo import seed_demo_case

    seed_demo_case(store)
    kinds = [e.kind for e in store.custody_events("NRFL-2026-0417/1", own_only=True)]
    assert kinds[:3] == ["received", "opened", "sub-sampled"]
    assert store.get_item("NRFL-2026-0417/2").seal_state == "open"
    assert store.verify().ok
