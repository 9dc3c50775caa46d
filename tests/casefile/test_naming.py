"""Tests of workbench/casefile/naming.py: the case and item number pattern, applied by the store."""

from __future__ import annotations

import pytest

from workbench.casefile.naming import check_case_number, check_item_number
from workbench.errors import InputError


# Accepted forms: the pattern documented in the module (common practice, no source).
@pytest.mark.parametrize(
    "typed, kept",
    [("NRFL-2026-0417", "NRFL-2026-0417"), ("  TEST_2026.001 ", "TEST_2026.001"), ("X1", "X1")],
)
def test_documented_case_numbers_pass_stripped(typed, kept):
    assert check_case_number(typed) == kept


@pytest.mark.parametrize(
    "typed, named",
    [
        ("<b>X</b>", "'<'"),  # markup (issue 13)
        ("A/B", "'/'"),  # a path separator (issue 13)
        ("case 12", "' '"),
        ("-12", "misplaced separator"),
        ("A--B", "misplaced separator"),
        ("", "empty"),
        ("A" * 65, "65 characters"),
    ],
)
def test_bad_case_numbers_get_one_clear_refusal(typed, named):
    with pytest.raises(InputError, match="case number") as got:
        check_case_number(typed)
    assert named in str(got.value)
    assert got.value.remedy  # a fix is always named


@pytest.mark.parametrize("typed", ["1", "1a", "2.3", "4-B"])
def test_item_numbers_follow_the_same_pattern(typed):
    assert check_item_number(typed) == typed


@pytest.mark.parametrize("typed", ["1/2", "<i>", "1 a", "x" * 33])
def test_bad_item_numbers_are_refused(typed):
    with pytest.raises(InputError, match="item number"):
        check_item_number(typed)


# ------------------------------------------------- the library applies the rule (one core)
def test_create_case_refuses_a_bad_number_with_one_clear_error(store):
    # '/' would split "CASE/ITEM" references (issue 13; rule in naming.py, no source)
    with pytest.raises(InputError) as got:
        store.create_case("NRFL/2026", "title", "party")
    assert "case number 'NRFL/2026' contains '/'" in got.value.problem
    assert "letters and digits" in got.value.remedy
    assert store.list_cases() == []  # nothing written


def test_create_case_keeps_the_stripped_number(store):
    rec = store.create_case("  NRFL-2026-0417 ", "title", "party")
    assert rec.case_number == "NRFL-2026-0417"


@pytest.mark.parametrize(
    "typed, named",
    [("1 a", "' '"), ("<i>1</i>", "'<'"), ("1..2", "misplaced separator"), ("x" * 33, "33")],
)
def test_add_item_refuses_a_bad_number_with_one_clear_error(store, typed, named):
    store.create_case("NRFL-2026-0417", "title", "party")
    with pytest.raises(InputError, match="item number") as got:
        store.add_item("NRFL-2026-0417", typed, "a bag", received_by="A", received_from="B")
    assert named in got.value.problem and got.value.remedy
    assert store.list_items("NRFL-2026-0417") == []  # nothing written


def test_create_case_refuses_a_non_text_number(store):
    with pytest.raises(InputError, match="must be text, got int"):
        store.create_case(417, "title", "party")


def test_cli_and_library_give_the_same_refusal(tmp_path, capsys):
    """The CLI calls the same library function, so it refuses the same way (exit code 2)."""
    from workbench.cli import main

    store = ["--store", str(tmp_path / "st")]
    code = main(["case", "create", "A<b>", "--title", "t", "--requesting-party", "p", *store])
    err = capsys.readouterr().err
    assert code == 2
    assert "case number 'A<b>' contains '<', '>'" in err and "letters and digits" in err


def test_numbers_stored_before_the_rule_stay_readable(tmp_path, monkeypatch):
    """The rule applies on creation only: an older store's numbers are read, extended, verified."""
    import workbench.casefile.cases as cases_mod
    import workbench.casefile.items as items_mod
    from workbench.casefile import CaseStore, export_bundle, import_bundle

    # Before the rule the store took any stripped text without '/' (common practice, no source).
    monkeypatch.setattr(cases_mod, "check_case_number", str.strip)
    monkeypatch.setattr(items_mod, "check_item_number", str.strip)
    with CaseStore.open(tmp_path / "old") as old:
        old.create_case("case 12", "written before the rule", "party")
        old.add_item("case 12", "item (a)", "a bag", received_by="A", received_from="B")
    monkeypatch.undo()
    with CaseStore.open(tmp_path / "old") as s:
        assert s.get_case("case 12").title == "written before the rule"
        assert s.get_item("case 12/item (a)").holder == "A"
        s.add_custody_event("case 12/item (a)", "note", "A", note="still usable")
        s.add_item("case 12", "2", "new item in the old case", received_by="A", received_from="B")
        with pytest.raises(InputError, match="item number"):
            s.add_item("case 12", "item (b)", "a new bad name", received_by="A", received_from="B")
        assert s.verify().ok
        bundle = export_bundle(s, "case 12", tmp_path / "old.zip")
    with CaseStore.open(tmp_path / "new") as d:
        assert import_bundle(bundle, d).status == "imported"  # moving a case is not creating one
        assert [i.item_number for i in d.list_items("case 12")] == ["item (a)", "2"]
