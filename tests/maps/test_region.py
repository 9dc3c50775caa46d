import numpy as np
import pytest

from workbench.errors import ValueRangeError
from workbench.maps import open_cube
from workbench.maps.region import region_csv, region_spectrum


def test_region_sum_equals_numpy_sum(h5_cube, counts):
    cube = open_cube(h5_cube)
    got = region_spectrum(cube, 3, 9, 12, 4)  # corners in any order
    np.testing.assert_array_equal(got, counts[3:9, 4:12].sum(axis=(0, 1)))
    name, data = region_csv(cube, 3, 9, 4, 12)
    assert name.endswith("_sum.csv") and data.startswith(b"# sum spectrum")
    with pytest.raises(ValueRangeError, match="holds no pixel"):
        region_spectrum(cube, 50, 60, 0, 3)


def test_region_spectrum_is_matched_by_the_engine(h5_cube):
    from workbench.matching import analyse_input

    cube = open_cube(h5_cube)
    name, data = region_csv(cube, 13, 20, 0, 10)  # the Cu block (conftest)
    rep = analyse_input(data, name=name).report
    called = set(rep["summary"]["by_verdict"].get("established", []))
    called |= set(rep["summary"]["by_verdict"].get("probable", []))
    assert "Cu K" in called
