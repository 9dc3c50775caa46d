"""A real lamp spectrum with part of its sampling removed (as a chip gap or masked samples).

Goodman 1200M4 GG455 Ne lamp (tune set; goodman-pipeline 3.1.0, see
tests/realdata/loader.py). Removing its samples between 600 and 605 nm
leaves Ne I lines there that no peak can show: they must not count against
neon, and the report must say where the sampling skips. The same holds when
the samples are kept in the file with a NaN intensity (masked pixels).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from tests.realdata.loader import load
from tests.realdata.run import element_classes, run_real
from workbench.io import read_spectrum
from workbench.matching import MatchParameters
from workbench.matching.analyse import analyse_spectrum


def test_lines_in_a_sampling_gap_are_not_missing():
    rs = load("goodman_comp_1200M4_GG455_Ne")
    x = np.asarray(rs.spectrum.x)
    keep = ~((x > 600.0) & (x < 605.0))
    cut = replace(rs, spectrum=replace(rs.spectrum, x=x[keep], y=np.asarray(rs.spectrum.y)[keep]))
    out = run_real(cut)
    assert element_classes(out.report)["Ne"] == "established"
    row = next(r for r in out.report["elements"] if r["species"] == "Ne I")
    in_gap = [m["reference_nm"] for m in row["missing_lines"] if 599.0 < m["reference_nm"] < 606.0]
    assert in_gap == []
    # Ne I has lines predicted above the detection limit there (NIST/Gaia-ESO
    # Ne I 603.00 nm among them), masked now:
    ev = next(e for e in out.result.evidence.evidence.values() if e.label == "Ne I")
    g = ev.groups
    gap_groups = (g["position"] > 600.0) & (g["position"] < 605.0) & g["visible"] & g["known"]
    assert gap_groups.any() and np.all(g["masked"][gap_groups])
    notes = [w for w in out.report["warnings"] if w["kind"] == "sampling_gaps"]
    assert len(notes) == 1 and "skips 1 part" in notes[0]["message"]


def test_masked_pixels_written_as_nan_are_a_gap_not_a_refusal():
    # The same lamp as a reduction pipeline might write it: the samples it
    # masked kept as rows with a NaN intensity. The reader leaves them out
    # with a note, and the engine treats the hole as the cut above does.
    rs = load("goodman_comp_1200M4_GG455_Ne")
    x = np.asarray(rs.spectrum.x)
    y = np.asarray(rs.spectrum.y, dtype=float).copy()
    hole = (x > 600.0) & (x < 605.0)
    y[hole] = np.nan
    text = "wavelength (nm),counts\n" + "\n".join(
        f"{a:.10f},{'nan' if np.isnan(b) else f'{b:.10g}'}" for a, b in zip(x, y, strict=True)
    )
    spec = read_spectrum(text.encode(), medium=rs.spectrum.medium)
    assert spec.x.size == x.size - int(hole.sum())
    np.testing.assert_allclose(spec.x, x[~hole], rtol=0, atol=1e-9)
    assert any(
        f"{int(hole.sum())} of {x.size} rows have no measured" in n for n in spec.source.notes
    )
    out = analyse_spectrum(spec, None, MatchParameters(mode=rs.mode))
    assert element_classes(out.report)["Ne"] == "established"
    cut = run_real(replace(rs, spectrum=replace(rs.spectrum, x=x[~hole], y=y[~hole])))
    assert element_classes(out.report) == element_classes(cut.report)
    assert any(w["kind"] == "sampling_gaps" for w in out.report["warnings"])
