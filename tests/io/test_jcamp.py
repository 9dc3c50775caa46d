"""JCAMP-DX decoding: every ASDF form, Y-check, factors, blocks, point tables."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from workbench.datamodel import PeakList, Spectrum
from workbench.errors import FileFormatError, InputError, UnitError
from workbench.io import parse_jcamp, read_any, read_peak_list, read_spectrum
from workbench.physics.units import wavenumber_per_cm_to_wavelength_vac_nm

DATA = Path(__file__).parent.parent / "data" / "io"

# Hand-derived: lines "400 10 12 14 16 18" and "405 20 18 16 14 12" with YFACTOR=0.5
# (AFFN, McDonald & Wilks 1988), so y = ordinate × 0.5.
AFFN_Y = np.array([5, 6, 7, 8, 9, 10, 9, 8, 7, 6], dtype=float)
# PAC/SQZ fixtures end line 2 with -12 ("-12" in PAC, "a2" in SQZ: a = -1, then digit 2).
SIGNED_Y = np.array([5, 6, 7, 8, 9, 10, 9, 8, 7, -6], dtype=float)
X_400_409 = np.arange(400.0, 410.0)  # FIRSTX=400, LASTX=409, NPOINTS=10 (fixture header)


def _text(name: str) -> str:
    return (DATA / name).read_text(encoding="utf-8")


@pytest.mark.parametrize(
    ("fixture", "expected"),
    [
        ("affn.jdx", AFFN_Y),
        ("pac.jdx", SIGNED_Y),
        ("sqz.jdx", SIGNED_Y),
        # DIF/DUP, hand-derived: "400A0KV" = 10, +2, dup 4 -> 10 12 14 16 18;
        # "404A8KkV" = check 18, +2, -2, dup 4 -> 20 18 16 14 12; "409A2" = check 12.
        ("difdup.jdx", AFFN_Y),
    ],
)
def test_every_compression_form_decodes(fixture, expected):
    (block,) = parse_jcamp(_text(fixture), fixture)
    np.testing.assert_allclose(block.y, expected, rtol=0, atol=1e-12)
    np.testing.assert_allclose(block.x, X_400_409, rtol=0, atol=1e-9)
    assert block.kind == "xydata"


def test_difdup_spectrum_reads_as_spectrum_in_nm():
    spec = read_spectrum(DATA / "difdup.jdx")
    assert isinstance(spec, Spectrum)
    assert spec.axis == "wavelength" and spec.medium == "air"
    assert "medium not stated; assumed air" in spec.source.notes
    assert spec.source.format == "jcamp-dx"
    np.testing.assert_allclose(spec.y, AFFN_Y)  # hand-derived above


def test_y_check_mismatch_is_refused_naming_the_line():
    with pytest.raises(
        FileFormatError,
        match=r"line 12: Y-check value 19 does not equal the last value 18 of line 11",
    ):
        parse_jcamp(_text("difdup_badcheck.jdx"), "difdup_badcheck.jdx")


def test_missing_dif_line_is_caught_by_y_check():
    with pytest.raises(FileFormatError, match="Y-check"):
        parse_jcamp(_text("difdup_missing_line.jdx"), "x.jdx")


def test_npoints_mismatch_is_refused():
    text = _text("affn.jdx").replace("##NPOINTS=10", "##NPOINTS=11").replace("##DELTAX=1\n", "")
    with pytest.raises(FileFormatError, match="decoded 10 points but ##NPOINTS=11"):
        parse_jcamp(text, "x.jdx")


def test_deltax_inconsistent_is_refused():
    text = _text("affn.jdx").replace("##DELTAX=1", "##DELTAX=2")
    with pytest.raises(FileFormatError, match="DELTAX"):
        parse_jcamp(text, "x.jdx")


def test_line_x_checked_against_firstx():
    text = _text("affn.jdx").replace("\n405 20", "\n407 20")
    with pytest.raises(FileFormatError, match="line 17: X = 407"):
        parse_jcamp(text, "x.jdx")


def test_firsty_checked():
    text = _text("affn.jdx").replace("##FIRSTY=5", "##FIRSTY=50")
    with pytest.raises(FileFormatError, match="FIRSTY"):
        parse_jcamp(text, "x.jdx")


def test_xfactor_applies_to_line_x():
    # X written in units of XFACTOR=0.1 nm: line X 4000 = 400.0 nm (fixture arithmetic).
    text = (
        _text("affn.jdx")
        .replace("##XFACTOR=1.0", "##XFACTOR=0.1")
        .replace("\n400 10", "\n4000 10")
        .replace("\n405 20", "\n4050 20")
    )
    (block,) = parse_jcamp(text, "x.jdx")
    np.testing.assert_allclose(block.x, X_400_409)


def test_multi_block_default_first_with_note():
    spec = read_spectrum(DATA / "multiblock.jdx")
    np.testing.assert_allclose(spec.y, [1, 2, 3, 4, 5])  # fixture values, YFACTOR absent = 1
    assert spec.medium == "vacuum"  # "$$ measured in vacuum" comment in the block
    assert any("3 data blocks" in n for n in spec.source.notes)


def test_multi_block_peak_table_by_title():
    peaks = read_peak_list(DATA / "multiblock.jdx", block="Questioned flake, peak table")
    assert isinstance(peaks, PeakList)
    # Fixture pairs (402.5, 30), (401.25, 12.5), (403, 7), sorted by position.
    np.testing.assert_allclose(peaks.positions, [401.25, 402.5, 403.0])
    np.testing.assert_allclose(peaks.intensities, [12.5, 30.0, 7.0])


def test_read_any_picks_peak_list_for_peak_table_block():
    assert isinstance(read_any(DATA / "multiblock.jdx", block=1), PeakList)


def test_xypoints_wavenumber_block_factors_and_reversal():
    spec = read_spectrum(DATA / "multiblock.jdx", block=2)
    # XFACTOR=10: 2000..2400 -> 20000..24000 cm-1; YFACTOR=2: 1..5 -> 2..10 (fixture header).
    expected_nm = wavenumber_per_cm_to_wavelength_vac_nm(
        np.array([24000, 23000, 22000, 21000, 20000.0])
    )
    np.testing.assert_allclose(spec.x, expected_nm)
    np.testing.assert_allclose(spec.y, [10, 8, 6, 4, 2])
    assert spec.medium == "vacuum"
    assert "axis was in descending order; reversed" in spec.source.notes


def test_block_out_of_range_and_unknown_title():
    with pytest.raises(InputError, match="block 7 does not exist"):
        read_spectrum(DATA / "multiblock.jdx", block=7)
    with pytest.raises(InputError, match="no block titled"):
        read_spectrum(DATA / "multiblock.jdx", block="nope")


def test_peak_table_is_not_a_spectrum():
    with pytest.raises(InputError, match="peak table, not a spectrum"):
        read_spectrum(DATA / "multiblock.jdx", block=1)


def test_missing_end_is_truncation():
    text = _text("affn.jdx").replace("##END=", "")
    with pytest.raises(FileFormatError, match="no ##END="):
        parse_jcamp(text, "x.jdx")


def test_corrupt_character_named():
    text = _text("sqz.jdx").replace("400A0A2", "400A0*2")
    with pytest.raises(FileFormatError, match=r"line 10, column 6: unexpected character '\*'"):
        parse_jcamp(text, "x.jdx")


def test_unknown_xunits():
    text = _text("affn.jdx").replace("NANOMETERS", "HZ")
    with pytest.raises(UnitError, match="XUNITS=HZ"):
        read_spectrum(text)
    # an explicit unit rescues it
    assert read_spectrum(text, unit="nm").x[0] == 400.0  # fixture FIRSTX


def test_exponent_needs_sign_otherwise_sqz():
    # "1E5" is X=1 then SQZ E5 = +55; "1E+5" is 1e5 (module docstring rule).
    text = (
        "##TITLE=t\n##XUNITS=NANOMETERS\n##FIRSTX=1\n##LASTX=2\n##NPOINTS=2\n"
        "##XYDATA=(X++(Y..Y))\n1E5 1.5E+02\n##END=\n"
    )
    (block,) = parse_jcamp(text, "t.jdx")
    np.testing.assert_allclose(block.y, [55.0, 150.0])


@pytest.mark.parametrize("fixture", ["affn.jdx", "difdup.jdx", "sqz.jdx"])
def test_agrees_with_jcamp_package(fixture):
    jcamp = pytest.importorskip("jcamp")  # registry package jcamp 1.3 as oracle
    with open(DATA / fixture, encoding="utf-8") as fh:
        ref = jcamp.read(fh)
    (block,) = parse_jcamp(_text(fixture), fixture)
    np.testing.assert_allclose(block.x, np.asarray(ref["x"], dtype=float), atol=1e-9)
    np.testing.assert_allclose(block.y, np.asarray(ref["y"], dtype=float), atol=1e-9)
