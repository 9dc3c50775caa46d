"""EMSA/MAS (ISO 22029) spectra: Y and XY data blocks, and every refusal.

Invented files (test inputs). The equivalence test writes the sum spectrum of
the planted map cube (tests/maps/conftest.py, invented) as EMSA/MAS and as
the CSV the map pipeline hands the engine, and expects the same calls.
"""

from __future__ import annotations

import numpy as np
import pytest

from workbench.datamodel import Spectrum
from workbench.errors import FileFormatError
from workbench.io import read_any, read_spectrum


def _msa(values, *, datatype="Y", npoints=None, xperchan="0.01", offset="-0.05", ncol=5):
    per_point = 2 if datatype == "XY" else 1
    head = [
        "#FORMAT      : EMSA/MAS Spectral Data File",
        "#VERSION     : 1.0",
        "#TITLE       : invented test spectrum",
        "#DATE        : 04-DEC-2026",
        "#TIME        : 12:00",
        "#OWNER       : invented",
        f"#NPOINTS     : {npoints if npoints is not None else len(values) // per_point}",
        f"#NCOLUMNS    : {ncol}",
        "#XUNITS      : keV",
        "#YUNITS      : counts",
        f"#DATATYPE    : {datatype}",
        "#BEAMKV   -kV: 20.0",
    ]
    if xperchan is not None:
        head.append(f"#XPERCHAN    : {xperchan}")
    if offset is not None:
        head.append(f"#OFFSET      : {offset}")
    rows = [
        ", ".join(str(v) for v in values[i : i + ncol]) + "," for i in range(0, len(values), ncol)
    ]
    text = "\n".join([*head, "#SPECTRUM    : Spectral Data Starts Here", *rows])
    return (text + "\n#ENDOFDATA   : End Of Data and File\n").encode()


def test_y_block_positions_from_offset_and_channel_width():
    counts = list(range(1, 101))
    spec = read_any(_msa(counts))
    assert isinstance(spec, Spectrum) and spec.axis == "energy"
    # OFFSET −0.05 keV, 0.01 keV per channel: channels 0–5 lie at or below 0 and are left out.
    np.testing.assert_allclose(spec.x[:2], [10.0, 20.0])  # eV
    assert spec.y[0] == 7.0 and spec.x.size == 94
    assert any("6 channel(s) at or below zero" in n for n in spec.source.notes)
    assert spec.source.format == "emsa-mas"


def test_xy_block_of_pairs():
    pairs = [v for e in range(1, 31) for v in (e * 0.1, 100 + e)]
    spec = read_spectrum(_msa(pairs, datatype="XY", xperchan=None, offset=None, ncol=2))
    np.testing.assert_allclose(spec.x[:3], [100.0, 200.0, 300.0])
    np.testing.assert_allclose(spec.y[:3], [101.0, 102.0, 103.0])


@pytest.mark.parametrize(
    ("data", "match"),
    [
        (_msa(list(range(50)), npoints=60), "NPOINTS says 60"),
        (_msa(list(range(50)), xperchan=None), "XPERCHAN"),
        (_msa([1, 2, "x3", *range(47)]), "'x3' is not a number"),
        (_msa(list(range(51)), datatype="XY", npoints=25, ncol=2), "odd number"),
        (_msa(list(range(50)), datatype="XYZ"), "neither Y nor XY"),
        (b"#FORMAT : EMSA/MAS Spectral Data File\n#NPOINTS : 3\n1, 2, 3\n", "before #SPECTRUM"),
        (b"#FORMAT : EMSA/MAS Spectral Data File\n#NPOINTS : 3\n", "no #SPECTRUM"),
    ],
)
def test_emsa_refusals_are_one_clear_error(data, match):
    with pytest.raises(FileFormatError, match=match):
        read_spectrum(data)


def test_a_map_sum_spectrum_as_emsa_gets_the_calls_of_the_pipeline_csv():
    from tests.maps.conftest import INSTRUMENT, NCH, planted_truth
    from workbench.maps.pipeline import MapParameters, identify_spectrum
    from workbench.maps.synth import synthesise_cube
    from workbench.matching import MatchParameters
    from workbench.matching.analyse import analyse_spectrum

    energy_eV = INSTRUMENT.energy_axis_eV(NCH)
    counts = synthesise_cube(
        energy_eV, planted_truth(), INSTRUMENT, background_counts=400.0, seed=20261202
    )
    total = counts.reshape(-1, counts.shape[-1]).sum(axis=0).astype(float)
    via_csv, _ = identify_spectrum(energy_eV, total, "sum", MapParameters(), INSTRUMENT)
    step_keV = float(energy_eV[1] - energy_eV[0]) / 1000.0
    data = _msa(
        [f"{v:.6g}" for v in total], xperchan=f"{step_keV:.6g}", offset=f"{energy_eV[0] / 1000:.6g}"
    )
    spec = read_any(data)
    np.testing.assert_allclose(spec.x, energy_eV, rtol=1e-9)
    out = analyse_spectrum(spec, None, MatchParameters(instrument=INSTRUMENT.xray_instrument()))

    def calls(report):
        return {e["species"]: e["verdict"] for e in report["elements"] if e["verdict_level"] >= 2}

    assert calls(out.report) == calls(via_csv)
    assert {"Cu", "Fe", "Pb"} <= {
        e["element"] for e in out.report["elements"] if e["verdict_level"] >= 2
    }
