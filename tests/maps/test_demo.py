import h5py
import numpy as np

from workbench.maps import open_cube
from workbench.maps.demo import painting_truth, write_demo_cube


def test_demo_cube_is_labelled_invented_and_carries_its_calibration(tmp_path):
    p = write_demo_cube(tmp_path / "demo.h5", ny=12, nx=16)
    with h5py.File(p) as f:
        assert "INVENTED" in f.attrs["note"] and "INVENTED" in f.attrs["title"]
    cube = open_cube(p)
    assert cube.shape == (12, 16, 1024) and cube.calibration_source == "file"
    assert cube.pixel_size_um == 1000.0  # the invented scanner's 1 mm step
    np.testing.assert_allclose(cube.energy_eV[:2], [0.0, 20.0])


def test_hidden_composition_is_only_in_the_lead_and_mercury_maps():
    t = painting_truth()
    # The kneeling figure's cloak (x ≈ 53, y ≈ 34) is vermilion under the background:
    # Hg there, but the visible layers (Fe background) look like the rest of the background.
    assert t["Hg L"][34, 53] > 0 and t["Hg L"][34, 10] == 0
    assert t["Fe K"][34, 53] == t["Fe K"][5, 60]
    # The moon (upper left) is lead white: Pb raised there, nothing else.
    assert t["Pb L"][9, 6] > t["Pb L"][45, 2]
    assert all(t[k][9, 6] == t[k][45, 2] for k in ("Hg L", "Fe K", "Cu K", "Ca K"))
