import numpy as np
import pytest

from workbench.maps.fit import roi_counts


def test_roi_counts_subtract_a_linear_background():
    # Linear background 10 + 0.5·c plus 300 counts in channels 40..49 (analytic truth).
    c = np.arange(100, dtype=float)
    y = 10 + 0.5 * c
    y[40:50] += 30.0
    out = roi_counts(y[:, None], [(40, 50)])
    assert out[0, 0] == pytest.approx(300.0)
