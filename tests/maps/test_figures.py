import numpy as np
import pytest

from tests.maps.conftest import INSTRUMENT
from workbench.errors import InputError
from workbench.maps import Runner, open_cube, run_maps
from workbench.maps.figures import box_to_pixels, map_figure, rgb_figure


@pytest.mark.parametrize(
    ("box", "expected"),
    [
        ({"x": [1.6, 4.2], "y": [0.4, 2.5]}, (1, 3, 2, 5)),  # centres 2..4 and 1..2 inside
        ({"x": [4.2, 1.6], "y": [2.5, 0.4]}, (1, 3, 2, 5)),  # drawn the other way round
        ({"x": [-3, 100], "y": [-3, 100]}, (0, 10, 0, 12)),  # clipped to the map
    ],
)
def test_box_to_pixels(box, expected):
    assert box_to_pixels(box, (10, 12)) == expected


def test_box_needs_a_rectangle():
    with pytest.raises(InputError, match="not a rectangle"):
        box_to_pixels({"x": [1.0]}, (10, 10))


def test_figures_carry_values_and_uncertainty(h5_cube):
    with Runner("threads") as runner:
        res = run_maps(open_cube(h5_cube), runner, instrument=INSTRUMENT)
    fig = map_figure(res, "Fe K")
    np.testing.assert_array_equal(fig.data[0].z, res.maps[res.family_index("Fe K")])
    assert "σ" in fig.data[0].hovertemplate and "x %{x}, y %{y}" in fig.data[0].hovertemplate
    assert rgb_figure(res, ["Pb L", "Fe K", "Cu K"]).data[0].z.shape == (*res.chi2.shape, 3)
    with pytest.raises(InputError):
        rgb_figure(res, ["Pb L"])
