"""read_any's spectrum-or-peak-list decision equals the rule as documented.

Issue 14 settled evenly stepped axes from the steps' extremes (no copies, no
np.percentile); the rule itself is unchanged. The reference below is that
rule written out plainly (read_any's docstring; common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.io import sniff

SEED = 20261202


def _plain_rule(x: np.ndarray) -> str:
    d = np.diff(x)
    d = d[np.isfinite(d)]
    if d.size:
        up, down = np.count_nonzero(d > 0), np.count_nonzero(d < 0)
        steps = np.abs(d[d > 0] if up >= down else d[d < 0])
        if max(up, down) >= 0.95 * d.size and steps.size:
            lo, hi = np.percentile(steps, [5.0, 95.0])
            if hi <= 3.0 * lo:
                return "spectrum"
    return "peak_list"


def _axes():
    rng = np.random.default_rng(SEED)
    even = np.linspace(400.0, 500.0, 400)
    yield "even, increasing", even
    yield "even, decreasing", even[::-1].copy()
    yield "jittered steps", np.cumsum(rng.uniform(0.2, 0.5, 400)) + 300.0
    yield "steps spread over 10x", np.cumsum(rng.uniform(0.05, 0.5, 400)) + 300.0
    yield "a few wide gaps", np.cumsum(np.where(rng.random(400) < 0.03, 2.0, 0.5)) + 300.0
    yield "gaps in 6 % of steps", np.cumsum(np.where(rng.random(400) < 0.06, 5.0, 0.5)) + 300.0
    dup = even.copy()
    dup[200] = dup[199]
    yield "one repeated position", dup
    swap = even.copy()
    swap[[100, 101]] = swap[[101, 100]]
    yield "two rows swapped", swap
    yield "random positions", np.sort(rng.uniform(300.0, 800.0, 400))
    yield "unsorted", rng.uniform(300.0, 800.0, 400)


@pytest.mark.parametrize(("label", "x"), list(_axes()))
def test_kind_follows_the_documented_rule(label, x):
    y = np.random.default_rng(SEED).uniform(1.0, 100.0, x.size)
    text = "wavelength (nm),intensity\n" + "\n".join(
        f"{a!r},{b!r}" for a, b in zip(x.tolist(), y.tolist(), strict=True)
    )
    assert sniff(text)["kind"] == _plain_rule(x), label


@pytest.mark.parametrize("n_points", [100, 80_000])
def test_sha256_is_that_of_the_bytes_small_or_hashed_in_a_thread(tmp_path, n_points):
    # Inputs of 1 MiB or more are hashed in a thread while parsed (issue 14);
    # the recorded SHA-256 must be that of the file's bytes either way (FIPS 180-4
    # via hashlib is the oracle).
    import hashlib

    from workbench.io import read_any
    from workbench.io.tabular import _HASH_IN_THREAD_BYTES

    x = np.linspace(400.0, 500.0, n_points)
    y = np.random.default_rng(SEED).uniform(1.0, 100.0, n_points)
    path = tmp_path / "s.csv"
    path.write_text(
        "wavelength (nm),intensity\n"
        + "\n".join(f"{a:.6f},{b:.6f}" for a, b in zip(x.tolist(), y.tolist(), strict=True))
    )
    data = path.read_bytes()
    assert (len(data) >= _HASH_IN_THREAD_BYTES) == (n_points > 1000)
    result = read_any(path)
    assert result.source.sha256 == hashlib.sha256(data).hexdigest()
    assert result.source.size_bytes == len(data)


@pytest.mark.parametrize(("label", "x"), list(_axes()))
def test_kind_rule_with_many_step_blocks(monkeypatch, label, x):
    # Long axes are first checked block by block; tiny blocks put every case
    # (a repeated row, a swap, a wide gap) across block boundaries.
    from workbench.io import readers

    monkeypatch.setattr(readers, "_STEP_BLOCK", 7)
    y = np.random.default_rng(SEED).uniform(1.0, 100.0, x.size)
    text = "wavelength (nm),intensity\n" + "\n".join(
        f"{a!r},{b!r}" for a, b in zip(x.tolist(), y.tolist(), strict=True)
    )
    assert sniff(text)["kind"] == _plain_rule(x), label
