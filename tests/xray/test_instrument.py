"""Instrument description: defaults, JSON round trip, one clear error per mistake."""

from __future__ import annotations

import json

import pytest

from workbench.errors import FileFormatError, InputError, ValueRangeError
from workbench.xray.instrument import (
    DEFAULT_INSTRUMENT,
    Instrument,
    load_instrument,
    save_instrument,
)


def test_round_trip(tmp_path):
    inst = Instrument(name="bench", anode="W", tube_kV=50.0, fwhm_MnKa_eV=150.0)
    path = tmp_path / "inst.json"
    save_instrument(inst, path)
    assert load_instrument(path) == inst


def test_partial_file_takes_defaults(tmp_path):
    path = tmp_path / "mine.json"
    path.write_text(json.dumps({"anode": "Mo", "tube_kV": 35}))
    inst = load_instrument(path)
    assert (inst.anode, inst.tube_kV, inst.detector) == ("Mo", 35, DEFAULT_INSTRUMENT.detector)
    assert inst.name == "mine"


@pytest.mark.parametrize(
    ("text", "error"),
    [
        ('{"anod": "Rh"}', InputError),
        ('{"anode": "Xx"}', ValueRangeError),
        ('{"tube_kV": 2}', ValueRangeError),
        ('{"atmosphere": "argon"}', ValueRangeError),
        ("not json", FileFormatError),
        ("[1, 2]", InputError),
    ],
)
def test_bad_files_give_one_clear_error(tmp_path, text, error):
    path = tmp_path / "bad.json"
    path.write_text(text)
    with pytest.raises(error) as exc:
        load_instrument(path)
    assert exc.value.remedy


def test_scatter_angle_from_geometry():
    # 45° in, 45° out: the beam turns by 90° (geometry).
    assert Instrument().scatter_angle_rad == pytest.approx(1.5707963, abs=1e-6)
