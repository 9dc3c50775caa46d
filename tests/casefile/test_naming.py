"""Tests of workbench/casefile/naming.py: the case and item number pattern."""

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
