"""Tests for workbench/findings/content.py."""

from __future__ import annotations

import copy
import json
import math

import pytest

from tests.findings.findings_data import RESULT, make_content_kwargs
from workbench.errors import InputError, ValueRangeError
from workbench.findings.content import (
    CAUTIONS,
    build_sheet_content,
    canonical_json,
    normalise_value,
    position_keys,
    utc_timestamp,
)


def test_canonical_json_form():
    # Sorted keys, compact separators, raw UTF-8 (RFC 8785-style canonical form; common practice).
    assert (
        canonical_json({"b": 1, "a": "é", "c": [1.5, None]})
        == '{"a":"é","b":1,"c":[1.5,null]}'.encode()
    )


def test_canonical_json_refuses_nan():
    with pytest.raises(ValueRangeError, match="canonical JSON"):
        canonical_json({"x": math.nan})


def test_floats_rounded_to_ten_significant_digits():
    # 0.9312345678901 to 10 significant digits is 0.9312345679 (rounding by hand).
    assert normalise_value(0.9312345678901) == 0.9312345679
    # 405.78210000000004 (a typical binary artefact) becomes 405.7821 (by hand).
    assert normalise_value(405.78210000000004) == 405.7821
    assert normalise_value({"t": (1, 2.0)}) == {"t": [1, 2.0]}


def test_nan_in_result_names_its_place():
    kwargs = make_content_kwargs()
    kwargs["analysis"]["result"]["elements"][0]["score"] = math.nan
    with pytest.raises(ValueRangeError, match=r"content\.findings\[0\]\.score"):
        build_sheet_content(**kwargs)


def test_utc_timestamp():
    # 10:30 at +01:00 is 09:30 UTC (ISO 8601 offset arithmetic, by hand).
    assert utc_timestamp("2026-03-14T10:30:00+01:00") == "2026-03-14T09:30:00Z"
    assert utc_timestamp("2026-03-14T09:30:00Z") == "2026-03-14T09:30:00Z"
    with pytest.raises(ValueRangeError, match="no time zone"):
        utc_timestamp("2026-03-14T09:30:00")
    with pytest.raises(ValueRangeError, match="not an ISO 8601"):
        utc_timestamp("yesterday")


def test_content_is_deterministic_and_json_stable():
    a = build_sheet_content(**make_content_kwargs())
    b = build_sheet_content(**make_content_kwargs())
    assert canonical_json(a) == canonical_json(b)
    assert json.loads(canonical_json(a)) == a


def test_content_shape(content_kwargs):
    c = build_sheet_content(**content_kwargs)
    assert c["format"] == "workbench-findings/2"
    assert c["issued_at"] == "2026-03-14T09:30:00Z"
    assert c["axis"] == {"kind": "wavelength", "unit": "nm", "medium": "air"}
    # Strongest verdict first: Pb (level 3) before Ba (level 2), from the fixture.
    assert [f["element"] for f in c["findings"]] == ["Pb", "Ba"]
    assert [r["element"] for r in c["summary"]] == ["Pb", "Ba"]
    # Decisive lines: strongest expected first (fixture: 405.7807 rel 1.0, 368.3462 rel 0.45).
    assert c["summary"][0]["decisive_lines"] == ["Pb I 405.7807 nm", "Pb I 368.3462 nm"]
    assert c["findings"][0]["score"] == 0.9312345679  # 10 significant digits, by hand
    assert "extra_key_from_future" not in json.dumps(c)  # unknown keys are not carried
    assert c["cautions"] == list(CAUTIONS)
    assert c["notes"] == content_kwargs["notes"]  # user text verbatim
    # Evidence: one block per concluded element, lines strongest expected first then
    # printed in reference order (fixture values).
    pb = c["evidence"][0]
    assert [r["reference"] for r in pb["lines"]] == ["368.3462", "405.7807"]
    assert pb["missing"] == ["Pb I 283.3053 nm (expected rel. 0.30)"]
    assert c["not_supported_count"] == 0


def test_missing_delta_is_computed():
    kwargs = make_content_kwargs()
    del kwargs["analysis"]["result"]["elements"][1]["matched_lines"][0]["delta_nm"]
    c = build_sheet_content(**kwargs)
    ba = next(b for b in c["evidence"] if b["element"] == "Ba")
    # 455.4050 - 455.4033 = +0.0017 nm (fixture values, by hand).
    assert ba["lines"][0]["delta"] == "+0.0017"


def test_energy_axis_detected():
    res = copy.deepcopy(RESULT)
    res["input"].update(unit="eV", medium=None)
    res["elements"] = [
        {
            "element": "Pb",
            "ion": None,
            "family": "L",
            "verdict": "established",
            "verdict_level": 3,
            "score": 0.9,
            "matched_lines": [
                {
                    "observed_eV": 10551.0,
                    "reference_eV": 10551.4,
                    "delta_eV": -0.4,
                    "line_id": "xray:Pb:L3-M5",
                    "transition": "L3-M5",
                    "expected_rel": 1.0,
                }
            ],
        }
    ]
    assert position_keys(res) == ("energy", "eV")
    kwargs = make_content_kwargs()
    kwargs["analysis"]["result"] = res
    c = build_sheet_content(**kwargs)
    assert c["axis"]["unit"] == "eV"
    # X-ray wording: family label, energies to 1 eV, no temperature sentence.
    assert c["summary"][0]["species"] == "Pb L"
    assert c["summary"][0]["decisive_lines"] == ["Pb L3-M5 10551 eV"]
    assert c["evidence"][0]["lines"][0]["delta"] == "0"  # -0.4 eV to 1 eV
    assert c["analysis"]["temperature"] == ""
    assert not any("thermal equilibrium" in x for x in c["limits"])


def test_elements_asked_and_not_found_are_reported():
    c = build_sheet_content(**make_content_kwargs(elements_asked=["Sb", "Pb"]))
    # Pb is concluded (fixture level 3), so only Sb is reported as not found.
    assert [n["element"] for n in c["not_found"]] == ["Sb"]
    assert "no line of it" in c["not_found"][0]["why"]


def test_reviewer_cannot_be_the_analyst():
    kw = make_content_kwargs()
    with pytest.raises(InputError, match="reviewer named is the analyst"):
        build_sheet_content(**kw, reviewer=dict(kw["analyst"]))


@pytest.mark.parametrize(
    ("change", "match"),
    [
        ({"lab": {"name": "  "}}, "laboratory has no name"),
        ({"analysis": {"id": "A-1"}}, "no result"),
        ({"analyst": {"name": "Zoë"}}, "no fingerprint"),
        ({"notes": 42}, "notes must be text"),
    ],
)
def test_refusals(change, match):
    with pytest.raises(InputError, match=match):
        build_sheet_content(**make_content_kwargs(**change))


def test_result_given_as_json_bytes():
    kwargs = make_content_kwargs()
    kwargs["analysis"]["result"] = json.dumps(RESULT).encode()
    assert build_sheet_content(**kwargs) == build_sheet_content(**make_content_kwargs())
