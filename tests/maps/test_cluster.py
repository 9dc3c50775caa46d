import io

import pytest

from workbench.errors import InputError
from workbench.maps.cluster import Runner, TextProgress


def test_unreachable_scheduler_is_one_clear_error():
    # Port 9 (discard) has no Dask scheduler on a test machine (common practice, no source).
    with pytest.raises(InputError, match="cannot reach the Dask scheduler") as info:
        with Runner("tcp://127.0.0.1:9", connect_timeout_s=1):
            pass
    assert "Fix:" in str(info.value)


def test_text_progress_draws_a_bar():
    buf = io.StringIO()
    bar = TextProgress(stream=buf, width=10)
    bar(0, 4, "fit")
    bar(2, 4, "fit")
    bar(4, 4, "fit")
    out = buf.getvalue()
    assert "[#####-----] 2/4" in out and out.endswith("s\n")


def test_threads_runner_maps_in_order():
    got = {}
    with Runner("threads") as r:
        r.map(lambda v: v * v, [1, 2, 3], got.__setitem__, "squares")
    assert got == {0: 1, 1: 4, 2: 9}
