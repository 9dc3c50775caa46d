"""FITS spectra: 1-D images with a wavelength solution, tables, and every refusal.

Real files: the Goodman 1200M4 Ne lamp (goodman-pipeline 3.1.0, its own GSP_*
Chebyshev keywords) and the KPNO Th-Ar atlas (pyreduce-astro 0.10, IRAF
linear WCS), both in tests/data/realspectra with their hashes; the reader must
give exactly the wavelengths of the test loader, whose solutions are checked
against each file's identified lines (tests/realdata). Invented files are
written here with astropy (test inputs; the WCS forms from FITS WCS Paper III,
Greisen et al. 2006, from memory).
"""

from __future__ import annotations

import io

import numpy as np
import pytest
from astropy.io import fits

from tests.realdata.loader import DATA, load
from workbench.errors import FileFormatError
from workbench.io import read_any, read_peak_list, read_spectrum


def _image(y, **keys) -> bytes:
    hdu = fits.PrimaryHDU(np.asarray(y, dtype=np.float32))
    for k, v in keys.items():
        hdu.header[k.replace("_", "-") if k == "DC_FLAG" else k] = v
    buf = io.BytesIO()
    hdu.writeto(buf)
    return buf.getvalue()


@pytest.mark.parametrize(
    ("name", "path"),
    [
        ("goodman_comp_1200M4_GG455_Ne", "goodman/goodman_comp_1200M4_GG455_Ne.fits"),
        ("thar", "pyreduce/thar.fits"),
    ],
)
def test_real_fits_spectra_read_as_the_verified_loader_reads_them(name, path):
    rs = load(name)
    spec = read_spectrum(DATA / path)
    assert spec.source.format == "fits" and spec.medium == rs.spectrum.medium == "air"
    np.testing.assert_allclose(spec.x, rs.spectrum.x, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(spec.y, rs.spectrum.y)
    assert any("1-D image" in n for n in spec.source.notes)


def test_a_goodman_lamp_read_from_its_fits_file_is_matched_as_in_the_realdata_tests():
    from tests.realdata.run import element_classes, run_real
    from workbench.matching import MatchParameters
    from workbench.matching.analyse import analyse_spectrum

    rs = load("goodman_comp_1200M4_GG455_Ne")
    spec = read_any(DATA / "goodman" / "goodman_comp_1200M4_GG455_Ne.fits")
    out = analyse_spectrum(spec, None, MatchParameters(mode="emission"))
    assert element_classes(out.report) == element_classes(run_real(rs).report)
    assert element_classes(out.report)["Ne"] == "established"


@pytest.mark.parametrize(
    ("keys", "first_nm", "step_nm", "medium"),
    [
        (
            {"CTYPE1": "WAVE", "CUNIT1": "Angstrom", "CRVAL1": 5000.0, "CDELT1": 0.5},
            500.0,
            0.05,
            "vacuum",
        ),
        ({"CTYPE1": "AWAV", "CRVAL1": 5e-7, "CDELT1": 5e-11}, 500.0, 0.05, "air"),  # metres
        (
            {"CTYPE1": "AWAV", "CUNIT1": "nm", "CRVAL1": 500.0, "CD1_1": 0.05, "CRPIX1": 1.0},
            500.0,
            0.05,
            "air",
        ),
        (
            {"CTYPE1": "WAVE", "CUNIT1": "nm", "CRVAL1": 501.0, "CDELT1": 0.05, "CRPIX1": 21.0},
            500.0,
            0.05,
            "vacuum",
        ),
    ],
)
def test_linear_wcs(keys, first_nm, step_nm, medium):
    spec = read_spectrum(_image(np.ones(200), **keys))
    np.testing.assert_allclose(spec.x[:2], [first_nm, first_nm + step_nm], rtol=1e-9)
    assert spec.medium == medium


def test_logarithmic_wcs_forms():
    # WCS -LOG: λ = CRVAL1·exp(CDELT1·(p − CRPIX1)/CRVAL1); IRAF DC-FLAG 1: log10 λ linear.
    wlog = read_spectrum(
        _image(np.ones(100), CTYPE1="WAVE-LOG", CUNIT1="nm", CRVAL1=500.0, CDELT1=0.1)
    )
    np.testing.assert_allclose(wlog.x[10], 500.0 * np.exp(0.1 * 10 / 500.0), rtol=1e-12)
    iraf = read_spectrum(
        _image(
            np.ones(100),
            CTYPE1="LINEAR",
            CRVAL1=np.log10(5000.0),
            CDELT1=1e-5,
            DC_FLAG=1,
            WAT1_001="wtype=linear label=Wavelength units=angstroms",
        )
    )
    np.testing.assert_allclose(iraf.x[10], 10 ** (np.log10(5000.0) + 1e-4) / 10.0, rtol=1e-12)


def test_binary_table_columns_are_mapped_by_name_and_unit():
    x = np.linspace(500.0, 520.0, 300)
    t = fits.BinTableHDU.from_columns(
        [
            fits.Column(name="WAVE", format="D", unit="nm", array=x),
            fits.Column(name="FLUX", format="D", array=np.ones(300)),
        ]
    )
    buf = io.BytesIO()
    fits.HDUList([fits.PrimaryHDU(), t]).writeto(buf)
    spec = read_any(buf.getvalue())
    np.testing.assert_allclose(spec.x, x)
    assert any("HDU 1" in n and "300 rows" in n for n in spec.source.notes)


def test_one_row_of_arrays_is_one_spectrum():
    x = np.linspace(5000.0, 5200.0, 256)
    t = fits.BinTableHDU.from_columns(
        [
            fits.Column(name="WAVE", format="256D", unit="Angstrom", array=x[None]),
            fits.Column(name="FLUX", format="256D", array=np.ones((1, 256))),
        ]
    )
    buf = io.BytesIO()
    fits.HDUList([fits.PrimaryHDU(), t]).writeto(buf)
    spec = read_spectrum(buf.getvalue(), medium="vacuum")
    np.testing.assert_allclose(spec.x, x / 10.0)


def test_fits_table_of_peaks():
    t = fits.BinTableHDU.from_columns(
        [
            fits.Column(name="wavelength", format="D", unit="nm", array=[393.37, 396.85, 422.67]),
            fits.Column(name="intensity", format="D", array=[10.0, 8.0, 3.0]),
        ]
    )
    buf = io.BytesIO()
    fits.HDUList([fits.PrimaryHDU(), t]).writeto(buf)
    peaks = read_peak_list(buf.getvalue())
    np.testing.assert_allclose(peaks.positions, [393.37, 396.85, 422.67])


def test_nan_samples_of_an_image_are_left_out():
    y = np.ones(100)
    y[40:43] = np.nan
    spec = read_spectrum(_image(y, CTYPE1="AWAV", CUNIT1="nm", CRVAL1=500.0, CDELT1=0.1))
    assert spec.x.size == 97 and any("sample 41" in n for n in spec.source.notes)


@pytest.mark.parametrize(
    ("data", "match"),
    [
        (_image(np.ones((5, 40)), CTYPE1="AWAV", CRVAL1=5e-7, CDELT1=1e-10), "no 1-D spectrum"),
        (_image(np.ones(50), CTYPE1="AWAV", CUNIT1="nm"), "no wavelength solution"),
        (_image(np.ones(50), CTYPE1="RA---TAN", CRVAL1=1.0, CDELT1=1.0), "not a wavelength"),
        (
            _image(
                np.ones(50), CTYPE1="LINEAR", CRVAL1=1.0, CDELT1=1.0, WAT0_001="system=multispec"
            ),
            "non-linear",
        ),
        (_image(np.ones(50), GSP_FUNC="Spline3", GSP_ORDR=3), "GSP_FUNC"),
        (_image(np.ones(50), GSP_FUNC="Chebyshev1D", GSP_ORDR=3, GSP_C000=1.0), "GSP_C"),
        (
            _image(np.ones(4000), CTYPE1="AWAV", CUNIT1="nm", CRVAL1=500.0, CDELT1=0.1)[:5000],
            "not a readable FITS",
        ),
    ],
)
def test_fits_refusals_are_one_clear_error(data, match):
    with pytest.raises(FileFormatError, match=match):
        read_spectrum(data)


def test_unit_must_be_stated_or_given():
    from workbench.errors import UnitError

    data = _image(np.ones(100), CTYPE1="LINEAR", CRVAL1=5000.0, CDELT1=0.5)
    with pytest.raises(UnitError, match="not stated"):
        read_spectrum(data)
    assert read_spectrum(data, unit="angstrom").x[0] == pytest.approx(500.0)


def test_a_short_fits_image_is_still_a_spectrum():
    # read_any calls a table of < 50 rows a peak list; a 1-D image is a spectrum.
    out = read_any(_image(np.ones(30), CTYPE1="AWAV", CUNIT1="nm", CRVAL1=500.0, CDELT1=0.1))
    assert out.source.kind == "spectrum" and out.x.size == 30
