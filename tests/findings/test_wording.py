"""Tests for workbench/findings/wording.py (printed numbers and custody words)."""

from __future__ import annotations

import pytest

from workbench.findings.wording import (
    custody_status,
    format_delta,
    format_position,
    format_rel,
    line_name,
    short_time,
)


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (405.78068, "nm", "405.7807"),  # 0.0001 nm, the reference tables' precision
        (10551.4, "eV", "10551"),  # X-ray energies to 1 eV (issue 12)
        (4933.6, "eV", "4934"),
        (None, "nm", "–"),
        (float("nan"), "eV", "–"),
        (True, "nm", "–"),  # a flag is not a number
    ],
)
def test_format_position(value, unit, text):
    assert format_position(value, unit) == text


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [(0.0014, "nm", "+0.0014"), (-0.4, "eV", "0"), (-6.2, "eV", "-6"), (None, "eV", "–")],
)
def test_format_delta(value, unit, text):
    assert format_delta(value, unit) == text


def test_format_rel_and_time():
    assert format_rel(0.456) == "0.46" and format_rel(None) == "–"
    assert short_time("2026-11-20T10:00:00.000000Z") == "2026-11-20 10:00"


def test_line_names():
    assert line_name({"reference_nm": 404.58148}, "Fe I", "nm") == "Fe I 404.5815 nm"
    line = {"reference_eV": 10551.0, "transition": "L3-M5"}
    assert line_name(line, "Pb L", "eV") == "Pb L3-M5 10551 eV"


@pytest.mark.parametrize(
    ("item", "words"),
    [
        (
            {"holder": "A", "seal_state": "sealed", "seals": ["S-1"], "event_count": 3},
            "held by A, sealed (S-1), 3 custody events on record",
        ),
        (
            {"holder": "A", "seal_state": "open", "storage_location": "Store B"},
            "held by A, seal opened, at Store B",
        ),
        (
            {"disposed": True, "seal_state": "unknown", "event_count": 1},
            "disposed of, seal state not recorded, 1 custody event on record",
        ),
    ],
)
def test_custody_status(item, words):
    assert custody_status(item) == words
