"""Fuzzing every reader: no input may end in anything but a result or one clear error.

Bounds checked on every input (documented in tests/fuzz/README.md): at most
5 s per MB of input (at least 1 MB counted) as a hang guard, not a speed
measurement; Python-side peak memory (tracemalloc, on every fourth seeded
input) at most 4 x the input + 16 MiB. Warnings are errors in this suite, so a numpy
RuntimeWarning also fails. Inputs: 13,100 in all (hypothesis, derandomized:
2,500 tables, 3,000 byte strings, 1,500 JCAMP-DX; seeded generators of
``generators.py``, half of them mutated: 2,200 tables, 2,000 JCAMP-DX, 300
Parquet, 300 FITS, 600 JSON, 400 EMSA/MAS, 300 spreadsheet workbooks).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.fuzz.generators import (
    HOSTILE_CELLS,
    Outcome,
    delimited_case,
    fits_case,
    jcamp_case,
    json_case,
    msa_case,
    mutate,
    parquet_case,
    run_case,
    workbook_case,
)
from workbench.datamodel import PeakList, Spectrum
from workbench.errors import InputError
from workbench.io import read_any, read_peak_list, read_spectrum


def _fuzz(n: int) -> settings:
    return settings(
        max_examples=n,
        derandomize=True,
        database=None,
        deadline=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
    )


def _read_checked(data: bytes) -> object:
    out = read_any(data, name="fuzz")
    if isinstance(out, Spectrum):
        # A spectrum that was accepted is strictly increasing and finite.
        assert np.all(np.diff(out.x) > 0) and np.all(np.isfinite(out.y))
    else:
        assert isinstance(out, PeakList)
        assert np.all(np.isfinite(out.positions)) and np.all(np.diff(out.positions) >= 0)
    return out


def _assert_clean(outcome: Outcome, at_least: int) -> None:
    assert outcome.inputs >= at_least
    assert not outcome.tracebacks, "\n\n".join(outcome.tracebacks[:5])
    assert outcome.worst_seconds_per_mb <= 5.0, outcome.worst_seconds_per_mb
    assert outcome.worst_memory_over_bound <= 1.0, outcome.worst_memory_over_bound


# --------------------------------------------------------------------------- hypothesis

_cell = st.one_of(
    st.sampled_from(HOSTILE_CELLS),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-(10**6), 10**6).map(str),
    st.text(max_size=6),
)
_row = st.lists(_cell, min_size=1, max_size=4)
_table = st.tuples(
    st.one_of(st.none(), st.lists(st.text(max_size=12), min_size=1, max_size=4)),
    st.sampled_from([",", ";", "\t", " "]),
    st.lists(_row, max_size=25),
    st.sampled_from(["\n", "\r\n"]),
)
_OUT_HYP = {"delimited": Outcome(), "binary": Outcome(), "jcamp": Outcome()}


@_fuzz(2500)
@given(_table)
def test_hypothesis_delimited(table) -> None:
    header, delim, rows, eol = table
    lines = ([delim.join(header)] if header else []) + [delim.join(r) for r in rows]
    data = eol.join(lines).encode("utf-8", errors="replace")
    run_case(_read_checked, data, (InputError,), _OUT_HYP["delimited"])
    assert not _OUT_HYP["delimited"].tracebacks, _OUT_HYP["delimited"].tracebacks[0]


@_fuzz(3000)
@given(st.binary(max_size=400))
def test_hypothesis_binary(data: bytes) -> None:
    run_case(_read_checked, data, (InputError,), _OUT_HYP["binary"])
    assert not _OUT_HYP["binary"].tracebacks, _OUT_HYP["binary"].tracebacks[0]


_label_value = st.one_of(st.sampled_from(HOSTILE_CELLS), st.floats().map(repr), st.text(max_size=8))


@_fuzz(1500)
@given(
    st.lists(
        st.tuples(
            st.sampled_from(
                ["FIRSTX", "LASTX", "NPOINTS", "XFACTOR", "YFACTOR", "DELTAX", "FIRSTY"]
            ),
            _label_value,
        ),
        max_size=7,
    ),
    st.sampled_from(["XYDATA=(X++(Y..Y))", "XYPOINTS=(XY..XY)", "PEAK TABLE=(XYW..XYW)"]),
    st.lists(
        st.text(
            alphabet="0123456789.+- @ABCDEFGHIabcdefghi%JKLMNOPQRjklmnopqrSTUVWXYZs?,;eE",
            max_size=30,
        ),
        max_size=8,
    ),
)
def test_hypothesis_jcamp(labels, table, data_lines) -> None:
    head = ["##TITLE=h", "##XUNITS=NANOMETERS", "##FIRSTX=400", "##LASTX=410", "##NPOINTS=5"]
    head += [f"##{k}={v}" for k, v in labels]
    text = "\n".join([*head, f"##{table}", *data_lines, "##END="]) + "\n"
    run_case(
        _read_checked, text.encode("utf-8", errors="replace"), (InputError,), _OUT_HYP["jcamp"]
    )
    assert not _OUT_HYP["jcamp"].tracebacks, _OUT_HYP["jcamp"].tracebacks[0]


# --------------------------------------------------------------------------- seeded


@pytest.mark.parametrize(
    ("label", "make", "n"),
    [
        ("delimited", delimited_case, 2200),
        ("jcamp", jcamp_case, 2000),
        ("parquet", parquet_case, 300),
        ("fits", fits_case, 300),
        ("json", json_case, 600),
        ("emsa", msa_case, 400),
        ("workbook", workbook_case, 300),
    ],
)
def test_seeded_generators_and_mutations(label, make, n) -> None:
    if label == "fits":
        # astropy is imported on the first FITS input; import it before the
        # memory of any input is traced (its import is not the reader's cost).
        import astropy.io.fits  # noqa: F401
    if label == "workbook":
        import fastexcel  # noqa: F401  (likewise: imported on the first workbook)
    rng = np.random.default_rng(20261202)
    outcome = Outcome()
    readers = (_read_checked, read_peak_list, read_spectrum)
    for i in range(n):
        data = make(rng)
        if i % 2:
            data = mutate(data, rng)
        # tracemalloc slows Python about twofold: every fourth input is traced.
        run_case(readers[i % 3], data, (InputError,), outcome, trace_memory=i % 4 == 0)
    _assert_clean(outcome, n)
    # Both outcomes occur: the generators are neither all-valid nor all-broken.
    assert outcome.read > 0 and outcome.refused > 0
