"""The shipped default-instrument line yields (workbench.xray.yield_cache)."""

from __future__ import annotations

import json

import pytest

from workbench.xray.forward import line_yields
from workbench.xray.instrument import DEFAULT_INSTRUMENT
from workbench.xray.yield_cache import CACHE_PATH, cache_key, default_yields, write_cache


def test_shipped_cache_is_current():
    # The key hashes xraylib's version, the default instrument and the yield
    # grid: a stale file would silently fall back to computing (slow, not
    # wrong), so its key must match what this code computes.
    assert json.loads(CACHE_PATH.read_text(encoding="utf-8"))["key"] == cache_key()


@pytest.mark.parametrize("element", ["Pb", "Ba", "Ti", "Fe", "Al"])
def test_cached_yields_are_the_computed_ones(element):
    # xraylib 4.3 CS_FluorLine_Kissel_Cascade over the default tube spectrum
    # (workbench.xray.forward.line_yields), stored with repr precision. To the
    # last bits, not bit for bit: the computed values differ between CPUs in
    # their last bit (on an AMD EPYC with FMA, 16 of Pb's 111 yields by at most
    # 2.8e-16 relative to the file written elsewhere), which is no staleness;
    # 1e-12 is far above that and far below any real change (common practice, no source).
    cached, computed = default_yields(element), line_yields(element, DEFAULT_INSTRUMENT)
    assert cached.keys() == computed.keys()
    for line, value in computed.items():
        assert cached[line] == pytest.approx(value, rel=1e-12, abs=0.0), line


def test_mismatched_key_is_ignored(tmp_path, monkeypatch):
    import workbench.xray.yield_cache as yc

    path = write_cache(["Fe"], tmp_path / "y.json")
    data = json.loads(path.read_text(encoding="utf-8"))
    data["key"] = "0" * 64
    data["yields"]["Fe"] = {"KL3": 1.0}  # a wrong value that must not be used
    path.write_text(json.dumps(data), encoding="utf-8")
    monkeypatch.setattr(yc, "CACHE_PATH", path)
    yc._load.cache_clear()
    try:
        assert yc.default_yields("Fe") == line_yields("Fe", DEFAULT_INSTRUMENT)
    finally:
        yc._load.cache_clear()
