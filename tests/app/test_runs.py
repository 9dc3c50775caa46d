"""Tests of workbench/app/runs.py: tolerance fields and bounds, parameters, worker runs."""

from __future__ import annotations

import polars as pl
import pytest

from workbench.app import runs
from workbench.app.inputs import table_rows
from workbench.datamodel import PeakList


def _peaks() -> PeakList:
    table = pl.DataFrame(
        {"wavelength_nm": [300.0, 400.0, 500.0], "intensity": [10.0, 20.0, None]}
    )  # invented values
    return PeakList(table, "wavelength", "air")


def test_analysis_parameters_keep_the_rows_only_with_edits():
    import hashlib
    import json

    from workbench.matching import MatchParameters, ToleranceSpec

    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", 5000.0))
    rows = table_rows(_peaks().table)
    plain = runs.analysis_parameters(params, {"medium": "air"}, rows, [], ["optical"])
    # SHA-256 of the rows' compact sorted-key JSON (hashlib; the digest rule in runs.py).
    expected = hashlib.sha256(
        json.dumps(rows, sort_keys=True, separators=(",", ":")).encode()
    ).hexdigest()
    assert plain["peak_table"] == {
        "n_rows": 3, "rows_sha256": expected, "edits": [], "n_edits": 0
    }  # fmt: skip
    edits = [{"action": "deleted", "row": 1, "old": rows[0]}]
    edited = runs.analysis_parameters(params, {}, rows, edits, ["optical"])
    assert edited["peak_table"]["original_rows"] == rows
    assert edited["peak_table"]["rows_sha256"] == expected


def _wait(handle, timeout_s: float = 120.0) -> str:
    import time

    deadline = time.monotonic() + timeout_s
    while handle.poll() == "running":
        assert time.monotonic() < deadline, "the worker did not finish"
        time.sleep(0.05)
    return handle.state


# Form bounds of runs.TOLERANCE_FIELDS (common practice, no source); 5000 nm is the
# value that hung the server in issue 13.
@pytest.mark.parametrize(
    "axis, rule, value",
    [
        ("wavelength", "fixed", 5000.0),
        ("wavelength", "fixed", 0.0),
        ("wavelength", "resolving_power", 10.0),
        ("wavelength", "fwhm", 50.0),
        ("energy", "fixed", 5000.0),
        ("energy", "resolving_power", 5000.0),  # not offered on an energy axis
        ("wavelength", "fixed", None),
    ],
)
def test_out_of_range_tolerances_are_refused_before_a_run(axis, rule, value):
    from workbench.errors import ValueRangeError

    with pytest.raises(ValueRangeError) as got:
        runs.build_parameters(
            axis=axis, tolerance_rule=rule, tolerance_value=value, temperature_K=None,
            mode="emission",
        )  # fmt: skip
    assert "outside the accepted range" in got.value.problem or "not offered" in got.value.problem
    assert got.value.remedy


def test_each_rule_has_its_own_unit_and_default_inside_its_range():
    for (axis, rule), f in runs.TOLERANCE_FIELDS.items():
        assert f.low <= f.default <= f.high, (axis, rule)
        runs.check_tolerance(axis, rule, f.default)  # the default itself passes
    assert runs.TOLERANCE_FIELDS[("wavelength", "fixed")].unit == "nm"
    assert runs.TOLERANCE_FIELDS[("energy", "fixed")].unit == "eV"
    assert runs.tolerance_rules("energy")[0] == "auto"


def test_auto_is_the_cli_default():
    import argparse

    from workbench.cli.match import params_from_args
    from workbench.cli.match import register as register_match

    parser = argparse.ArgumentParser()
    register_match(parser.add_subparsers())
    cli = params_from_args(parser.parse_args(["match", "x.csv"]))
    app = runs.build_parameters(
        axis="wavelength", tolerance_rule="auto", tolerance_value=None, temperature_K=None,
        mode="emission",
    )  # fmt: skip
    assert app.to_dict() == cli.to_dict()


@pytest.mark.slow
@pytest.mark.parametrize("scenario", ["paint_chip", "white_pigment"])
def test_the_app_gives_byte_identical_results_to_the_cli_on_the_same_file(scenario, tmp_path):
    # Invented demo spectra (workbench/demo.py): the app's read (inputs.load_input with the
    # Measurement page's default options) and worker run against `workbench match FILE`.
    from workbench.app.inputs import load_input
    from workbench.cli import main
    from workbench.demo import SCENARIOS, demo_file

    name = SCENARIOS[scenario].filename
    path = tmp_path / name
    path.write_bytes(demo_file(scenario))
    out = tmp_path / "cli.json"
    assert main(["match", str(path), "--json", str(out)]) == 0
    page_options = {"kind": None, "unit": None, "medium": None, "mode": "emission",
                    "min_snr": 5.0}  # fmt: skip
    work = load_input(path.read_bytes(), name, **page_options)
    params = runs.build_parameters(
        axis=work.peaks.axis, tolerance_rule="auto", tolerance_value=None, temperature_K=None,
        mode="emission",
    )  # fmt: skip
    sets = ("optical",) if work.peaks.axis == "wavelength" else ("xray",)  # page default
    handle = runs.start_run(runs.RunRequest(work.peaks, sets, params, work.spectrum))
    assert _wait(handle) == "done", handle.error
    assert handle.view.json_bytes == out.read_bytes()


@pytest.mark.slow
def test_a_long_run_can_be_cancelled_and_its_process_ends():
    import numpy as np

    from workbench.matching import MatchParameters, ToleranceSpec

    # 6000 invented random lines at R = 300: about 4 million (peak, line) pairs, several
    # seconds of matching (5.9 s measured in-process on the 2-core machine), far longer
    # than the cancel below.
    rng = np.random.default_rng(20261202)
    x = np.sort(rng.uniform(200.0, 900.0, 6000))
    table = pl.DataFrame({"wavelength_nm": x, "intensity": rng.uniform(1.0, 1000.0, x.size)})
    params = MatchParameters(tolerance=ToleranceSpec("resolving_power", 300.0))
    handle = runs.start_run(
        runs.RunRequest(PeakList(table, "wavelength", "air"), ("optical",), params)
    )
    assert handle.poll() == "running"
    handle.cancel()
    assert handle.state == "cancelled"
    assert not handle.process.is_alive()
    assert handle.poll() == "cancelled"


@pytest.mark.slow
def test_an_engine_error_comes_back_as_one_workbench_error():
    from workbench.errors import WorkbenchError
    from workbench.matching import MatchParameters

    table = pl.DataFrame({"wavelength_nm": [500.0], "intensity": [1.0]})  # invented
    handle = runs.start_run(
        runs.RunRequest(PeakList(table, "wavelength", "air"), ("no-such-set",), MatchParameters())
    )
    assert _wait(handle) == "failed"
    assert isinstance(handle.error, WorkbenchError) and "no-such-set" in str(handle.error)


def test_the_result_cache_keys_on_input_and_every_setting_and_keeps_the_newest():
    cache = runs.ResultCache(size=2)
    a = runs.ResultCache.key("sha-a", {"engine": {"tolerance": 1}})  # invented values
    b = runs.ResultCache.key("sha-a", {"engine": {"tolerance": 2}})
    c = runs.ResultCache.key("sha-b", {"engine": {"tolerance": 1}})
    assert len({a, b, c}) == 3  # any difference in input or settings is another run
    assert a == runs.ResultCache.key("sha-a", {"engine": {"tolerance": 1}})
    cache.put(a, "A")
    cache.put(b, "B")
    assert cache.get(a) == "A"  # now the newest
    cache.put(c, "C")  # drops b, the oldest
    assert cache.get(b) is None and cache.get(a) == "A" and cache.get(c) == "C"
