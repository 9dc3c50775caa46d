"""The canonical encoder gives exactly the bytes of the original one.

The reference below is the converter and encoder as they stood in
``workbench/matching/report.py`` before :mod:`workbench.canonjson` (commit
598942b), copied verbatim so that any change of the number rule fails here.
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from workbench import canonjson


def _old_canonical(obj: Any) -> Any:
    if isinstance(obj, dict):
        return {str(k): _old_canonical(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_old_canonical(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [_old_canonical(v) for v in obj.tolist()]
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, int | np.integer):
        return int(obj)
    if isinstance(obj, float | np.floating):
        v = float(obj)
        if not math.isfinite(v):
            return None
        return float(f"{v:.10g}")
    return obj


def _old_bytes(report: Any, indent: int | None = None) -> bytes:
    seps = (",", ":") if indent is None else (",", ": ")
    text = json.dumps(
        _old_canonical(report),
        sort_keys=True,
        separators=seps,
        ensure_ascii=False,
        allow_nan=False,
        indent=indent,
    )
    return text.encode("utf-8")


@pytest.mark.parametrize("key", ["paint_chip", "white_pigment"])
@pytest.mark.parametrize("indent", [None, 2])
def test_demo_results_byte_identical(key: str, indent: int | None) -> None:
    from workbench.demo import demo_file
    from workbench.matching import analyse_input

    report = analyse_input(demo_file(key), name=f"{key}.csv").report
    assert canonjson.dumps(report, indent=indent) == _old_bytes(report, indent)


_scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(min_value=-(2**70), max_value=2**70),
    # Overflowing roundings are the one documented difference: kept below them here.
    st.floats(allow_nan=False, max_value=1.7e308, min_value=-1.7e308),
    st.sampled_from([math.nan, math.inf, -math.inf]),
    st.text(max_size=8),
    st.sampled_from([np.float64(0.1), np.float32(1.5), np.int64(7), np.bool_(True), (1, 2.5)]),
)
_trees = st.recursive(
    _scalars,
    lambda kids: st.one_of(
        st.lists(kids, max_size=5),
        st.dictionaries(st.one_of(st.text(max_size=5), st.integers(0, 9)), kids, max_size=5),
    ),
    max_leaves=40,
)


@settings(derandomize=True, max_examples=600, suppress_health_check=[HealthCheck.too_slow])
@given(_trees)
def test_fuzzed_trees_byte_identical(tree: Any) -> None:
    try:
        expected = _old_bytes(tree)
    except TypeError:  # e.g. mixed int/str keys cannot be sorted: both must refuse
        with pytest.raises(TypeError):
            canonjson.dumps(tree)
        return
    assert canonjson.dumps(tree) == expected


def test_seeded_float_arrays_byte_identical() -> None:
    rng = np.random.default_rng(20261202)
    values = np.concatenate(
        [
            rng.normal(0.0, 1.0, 2000) * 10.0 ** rng.integers(-320, 300, 2000),
            np.array([np.nan, np.inf, -np.inf, 0.0, -0.0, 5e-324, 1e-5, 1e16]),
        ]
    )
    tree = {"a": values, "b": values.tolist(), "c": [{"x": v} for v in values[:200]]}
    assert canonjson.dumps(tree) == _old_bytes(tree)


@pytest.mark.parametrize(
    ("value", "text"),
    [
        # Python's shortest repr of the 10-digit rounding (the documented rule).
        (656.2799999999, b"656.28"),
        (1e-05, b"1e-05"),
        (1.5e16, b"1.5e+16"),
        (float("nan"), b"null"),
        # The old encoder raised here (issue 11 item 9): written unrounded.
        (1.7976931348623157e308, b"1.7976931348623157e+308"),
        (-1.7976931348623157e308, b"-1.7976931348623157e+308"),
    ],
)
def test_number_rule(value: float, text: bytes) -> None:
    assert canonjson.dumps([value]) == b"[" + text + b"]"
