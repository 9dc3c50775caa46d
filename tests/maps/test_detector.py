import json
import math

import numpy as np
import pytest

from workbench.errors import FileFormatError, InputError, ValueRangeError
from workbench.maps.detector import Instrument, fwhm_eV, gaussian_response, load_instrument


def test_fwhm_follows_fano_statistics():
    # Noise-free: FWHM = 2.3548·sqrt(F·ε·E) (Knoll ch. 13); Mn Kα1 5898.75 eV (Bearden 1967,
    # from memory), F = 0.115, ε = 3.66 eV → 2.3548·sqrt(2482.8) = 117.3 eV (computed by hand).
    assert fwhm_eV(5898.75, noise_fwhm_eV=0.0) == pytest.approx(117.3, abs=0.1)
    # Noise adds in quadrature (definition).
    assert fwhm_eV(5898.75, noise_fwhm_eV=80.0) == pytest.approx(math.hypot(80.0, 117.33), abs=0.1)


@pytest.mark.parametrize("line_eV", [3000.0, 8000.0, 15000.0])
def test_gaussian_response_has_unit_area(line_eV):
    e = np.arange(0.0, 20000.0, 10.0)
    g = gaussian_response(e, np.array([line_eV]), np.array([150.0]))
    assert g.sum() == pytest.approx(1.0, rel=1e-6)  # unit area by construction
    assert e[np.argmax(g)] == pytest.approx(line_eV, abs=10.0)


def test_instrument_calibration_and_errors(tmp_path):
    p = tmp_path / "inst.json"
    p.write_text(json.dumps({"offset_eV": -10.0, "gain_eV_per_channel": 20.0, "colour": "red"}))
    inst = load_instrument(p)
    assert inst.energy_axis_eV(3).tolist() == [-10.0, 10.0, 30.0]
    assert inst.extra == {"colour": "red"}
    with pytest.raises(InputError, match="no energy calibration"):
        Instrument().energy_axis_eV(10)
    p.write_text("{not json")
    with pytest.raises(FileFormatError, match="not valid JSON"):
        load_instrument(p)
    p.write_text(json.dumps({"gain_eV_per_channel": -1}))
    with pytest.raises(ValueRangeError, match="gain_eV_per_channel"):
        load_instrument(p)


def test_a_match_instrument_file_serves_the_map_pipeline(tmp_path):
    # One description for `workbench match --instrument` and `workbench map --instrument`:
    # its X-ray settings are checked as match checks them and fix the detector response.
    from workbench.xray.detector import fwhm_eV as xray_fwhm_eV

    path = tmp_path / "scanner.json"
    path.write_text(
        json.dumps(
            {
                "name": "scanner",
                "anode": "Mo",
                "tube_kV": 50,
                "fwhm_MnKa_eV": 140,
                "offset_eV": -20.0,
                "gain_eV_per_channel": 10.0,
                "pixel_size_um": 250,
            }
        )
    )
    inst = load_instrument(path)
    xinst = inst.xray_instrument()
    assert xinst.anode == "Mo" and xinst.tube_kV == 50
    # the same FWHM as the engine's detector model (workbench.xray), at Mn Kα (5898.75 eV,
    # the value the description is stated at) and elsewhere
    for e in (1740.0, 5898.75, 17479.0):
        assert float(inst.fwhm(e)) == pytest.approx(float(xray_fwhm_eV(e, xinst)), rel=1e-9)
    assert float(inst.fwhm(5898.75)) == pytest.approx(140.0, rel=1e-9)


def test_a_bad_xray_setting_is_one_clear_error(tmp_path):
    path = tmp_path / "bad.json"
    path.write_text(json.dumps({"anode": "Rh", "tube_kV": "forty"}))
    with pytest.raises(InputError, match=r"bad\.json"):
        load_instrument(path)
