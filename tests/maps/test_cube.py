import h5py
import numpy as np
import pytest
import zarr

from workbench.errors import FileFormatError, InputError, ValueRangeError
from workbench.maps.cube import Cube, cube_sha256, open_cube
from workbench.maps.detector import Instrument

RNG = np.random.default_rng(20261202)
DATA = RNG.integers(0, 50, size=(5, 6, 32), dtype=np.uint16)
E = np.linspace(1000.0, 32000.0, 32)


def test_hdf5_with_energy_dataset_in_keV(tmp_path):
    p = tmp_path / "c.h5"
    with h5py.File(p, "w") as f:
        f.create_dataset("a/counts", data=DATA, chunks=(1, 6, 32))
        f.create_dataset("a/energy_keV", data=E / 1000)
    cube = open_cube(p, chunk_mb=0.001)
    assert cube.shape == (5, 6, 32) and cube.calibration_source == "file"
    np.testing.assert_allclose(cube.energy_eV, E)
    assert len(cube.data.chunks[0]) > 1  # chunked over pixels
    assert cube.data.chunks[2] == (32,)  # never over channels
    np.testing.assert_array_equal(cube.data.compute(), DATA)


def test_hdf5_spectral_axis_first_is_moved_last(tmp_path):
    p = tmp_path / "c.h5"
    with h5py.File(p, "w") as f:
        d = f.create_dataset("counts", data=np.moveaxis(DATA, 2, 0))
        d.attrs["offset_eV"] = 1000.0
        d.attrs["gain_eV_per_channel"] = 1000.0
    with h5py.File(p, "a") as f:
        f.create_dataset("energy_eV", data=E)
    cube = open_cube(p)
    np.testing.assert_array_equal(cube.data.compute(), DATA)


def test_nexus_nxdata_signal_with_axes(tmp_path):
    p = tmp_path / "c.nxs"
    with h5py.File(p, "w") as f:
        entry = f.create_group("entry")
        entry.attrs["NX_class"] = "NXentry"
        g = entry.create_group("fluo")
        g.attrs["NX_class"] = "NXdata"
        g.attrs["signal"] = "data"
        g.attrs["axes"] = ["y", "x", "energy"]
        g.create_dataset("data", data=DATA)
        g.create_dataset("energy", data=E / 1000).attrs["units"] = "keV"
        g.create_dataset("x", data=np.arange(6) * 0.5).attrs["units"] = "mm"
        g.create_dataset("y", data=np.arange(5) * 0.5).attrs["units"] = "mm"
    cube = open_cube(p)
    assert cube.format == "nexus" and cube.pixel_size_um == pytest.approx(500.0)
    np.testing.assert_allclose(cube.energy_eV, E)
    np.testing.assert_array_equal(cube.data.compute(), DATA)


def test_zarr_group_and_npy_with_instrument(tmp_path):
    zp = tmp_path / "c.zarr"
    g = zarr.open_group(str(zp), mode="w")
    g.create_array("counts", data=DATA, chunks=(2, 6, 32))
    g.create_array("energy_eV", data=E)
    cube = open_cube(zp)
    np.testing.assert_array_equal(cube.data.compute(), DATA)
    assert len(cube_sha256(zp)) == 64
    npy = tmp_path / "c.npy"
    np.save(npy, DATA)
    inst = Instrument(offset_eV=1000.0, gain_eV_per_channel=1000.0)
    cube = open_cube(npy, instrument=inst)
    assert cube.calibration_source == "instrument"
    np.testing.assert_allclose(cube.energy_eV, E)


def _h5(tmp_path, **datasets):
    p = tmp_path / "bad.h5"
    with h5py.File(p, "w") as f:
        for k, v in datasets.items():
            f.create_dataset(k, data=v)
    return p


@pytest.mark.parametrize(
    ("datasets", "error", "words"),
    [
        ({"counts": DATA[0]}, FileFormatError, "no 3-D numeric dataset"),
        ({"a": DATA, "b": DATA}, InputError, "several 3-D datasets"),
        ({"counts": DATA, "energy_eV": E[:20]}, ValueRangeError, "no axis of the cube"),
        ({"counts": DATA, "energy_eV": E[::-1]}, ValueRangeError, "not finite and increasing"),
        ({"counts": DATA}, InputError, "no energy calibration"),
    ],
)
def test_bad_cubes_give_one_clear_error(tmp_path, datasets, error, words):
    with pytest.raises(error, match=words) as info:
        open_cube(_h5(tmp_path, **datasets))
    assert "Fix:" in str(info.value)


def test_other_bad_inputs(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        open_cube(tmp_path / "missing.h5")
    (tmp_path / "x.tif").write_bytes(b"II*\x00")
    with pytest.raises(FileFormatError, match="unknown cube format"):
        open_cube(tmp_path / "x.tif")
    (tmp_path / "x.h5").write_bytes(b"not hdf5")
    with pytest.raises(FileFormatError, match="not a readable HDF5"):
        open_cube(tmp_path / "x.h5")
    p = _h5(tmp_path, counts=DATA, energy_eV=E)
    with pytest.raises(InputError, match="more than the in-memory limit"):
        open_cube(p, mode="in_memory", in_memory_limit_bytes=100)
    assert open_cube(p, mode="in_memory").shape == (5, 6, 32)
    with pytest.raises(ValueRangeError, match="channels"):
        Cube.from_array(DATA, E[:10])
