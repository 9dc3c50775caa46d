"""FITS spectra: a 1-D image with a wavelength solution in its header, or a table.

FITS (NASA/IAU standard, version 4.0) is how observatories, many
spectrographs and their reduction pipelines write spectra. The file is read
with :mod:`astropy.io.fits` (imported only when a FITS file is given) and
turned into :class:`~workbench.io.columnset.Columns`, so that the same column,
unit, medium and value checks apply as for a delimited table or Parquet.

Which HDU: the first holding a 1-D spectrum (an image with one axis, or two
axes of which one has length 1) or a table with at least two numeric
columns; the note names it and any other HDUs.

A 1-D image's positions come from its header's world-coordinate keywords
(FITS WCS, Greisen et al. 2006, A&A 446, 747, "Paper III" — from memory):
``CRVAL1 + CDELT1·(p − CRPIX1)`` for pixel p (1-based; ``CD1_1`` where
``CDELT1`` is absent, ``CRPIX1`` 1 by default), or the logarithmic forms
(``CTYPE1 = 'WAVE-LOG'``: ``CRVAL1·exp(CDELT1·(p − CRPIX1)/CRVAL1)``; IRAF's
``DC-FLAG = 1``: log10 λ linear). The medium is stated by ``CTYPE1``
(``WAVE`` vacuum, ``AWAV`` air); IRAF's ``LINEAR`` states none (air is then
assumed, with a note, as for any file). The unit is ``CUNIT1`` (``m`` by the
standard's default for ``WAVE``/``AWAV``), else IRAF's ``WAT1_001 …
units=…``; without either the reader asks for ``--unit``. A non-linear
solution is refused with the fix (export a two-column table), except the
Goodman pipeline's ``GSP_*`` polynomial keywords, which are read
(:func:`_goodman_columns`).

A table's columns are read by name (``TTYPEn``) and unit (``TUNITn``), as a
header row is: ``WAVE`` in ``Angstrom`` becomes the header
``"WAVE (Angstrom)"``. A table of one row whose cells are arrays of equal
length (one spectrum per row, as many archives write it) is read as those
arrays.
"""

from __future__ import annotations

import io
import re
import warnings
from typing import Any

import numpy as np

from workbench.errors import FileFormatError
from workbench.io.columnset import Columns, array_columns
from workbench.io.resolve import canonical_unit

__all__ = ["columns_from_fits", "looks_like_fits"]

#: WCS axis types of a spectral axis and the medium each states (None: not stated).
_CTYPE_MEDIUM = {
    "WAVE": "vacuum",
    "AWAV": "air",
    "WAVE-LOG": "vacuum",
    "AWAV-LOG": "air",
    "LINEAR": None,
    "WAVELENGTH": None,
    "LAMBDA": None,
    "": None,
}
#: FITS units the readers' unit table does not name, as (factor, unit).
_EXTRA_UNITS = {"m": (1e9, "nm"), "cm": (1e7, "nm"), "mm": (1e6, "nm"), "aa": (1.0, "angstrom")}


def looks_like_fits(data: bytes) -> bool:
    """Whether the bytes open with a FITS primary header (``SIMPLE  =`` … ``T``)."""
    return data[:9] == b"SIMPLE  =" and data[10:30].strip() == b"T"


def _unreadable(name: str) -> FileFormatError:
    return FileFormatError(
        f"{name} is not a readable FITS file (damaged or truncated)",
        "re-export the spectrum as FITS, or as a two-column CSV table",
    )


def columns_from_fits(data: bytes, name: str) -> Columns:
    """Columns of the first FITS HDU that holds a 1-D spectrum or a table.

    Raises
    ------
    FileFormatError
        For a damaged file, no usable HDU, or a wavelength solution that is
        not linear or logarithmic.
    """
    from astropy.io import fits  # imported here: ~0.2 s, needed only for FITS input

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # non-standard keywords: read what is there
            hdul = fits.open(io.BytesIO(data), memmap=False, lazy_load_hdus=False)
            # dict(): every card parsed here, so that a broken one is caught here.
            hdus = [(i, h.name, dict(h.header.items()), _data(h)) for i, h in enumerate(hdul)]
            hdul.close()
    except FileFormatError:
        raise
    except Exception:
        raise _unreadable(name) from None
    skipped = []
    for i, hname, header, arr in hdus:
        label = f"HDU {i} ({hname})"
        if arr is None:
            continue
        if isinstance(arr, np.ndarray) and arr.dtype.names is None:
            squeezed = np.squeeze(arr)
            if squeezed.ndim == 1 and squeezed.size >= 2:
                return _image_columns(squeezed, header, name, label, skipped)
            skipped.append(f"{label}: image of shape {arr.shape}")
            continue
        cols = _table_columns(arr, header, name, label, skipped)
        if cols is not None:
            return cols
        skipped.append(f"{label}: table without two numeric columns")
    raise FileFormatError(
        f"{name} holds no 1-D spectrum or table in its HDUs"
        + (f" ({'; '.join(skipped)})" if skipped else ""),
        "write the spectrum as a 1-D image or as a table of position and intensity, "
        "or export it as a two-column CSV table",
    )


def _data(hdu: Any) -> np.ndarray | None:
    """The HDU's data as numpy (a record array for tables), or None when empty."""
    return None if hdu.data is None else np.asarray(hdu.data)


def _unit_of(text: str | None) -> tuple[float, str | None]:
    """(factor to the named unit, unit) of a FITS unit string; (1, None) when unknown."""
    if not text:
        return 1.0, None
    t = text.strip()
    unit = canonical_unit(t)
    if unit is not None:
        return 1.0, t
    return _EXTRA_UNITS.get(t.lower(), (1.0, None))


def _image_columns(
    y: np.ndarray, header: Any, name: str, label: str, skipped: list[str]
) -> Columns:
    n = y.size
    ctype = str(header.get("CTYPE1", "")).strip().upper()
    if ctype not in _CTYPE_MEDIUM and not ctype.startswith(("WAVE", "AWAV")):
        raise FileFormatError(
            f"{name} {label}: axis type CTYPE1 = {ctype!r} is not a wavelength",
            "give a spectrum whose CTYPE1 is WAVE, AWAV or LINEAR, or export it as a "
            "two-column CSV table",
        )
    wat = " ".join(str(header.get(k, "")) for k in ("WAT0_001", "WAT1_001"))
    if "GSP_FUNC" in header:
        return _goodman_columns(y, header, name, label, skipped)
    if "multispec" in wat.lower():
        raise FileFormatError(
            f"{name} {label}: the wavelength solution is a non-linear function of the "
            "pixel (IRAF multispec)",
            "export the spectrum with its wavelengths as a two-column CSV table",
        )
    if "CRVAL1" not in header:
        raise FileFormatError(
            f"{name} {label}: the header has no wavelength solution (CRVAL1)",
            "add CRVAL1, CDELT1 (or CD1_1), CRPIX1 and CUNIT1, or export a two-column table",
        )
    crval = _number(header, "CRVAL1", None, name, label)
    step_key = "CDELT1" if "CDELT1" in header else "CD1_1"
    cdelt = _number(header, step_key, 1.0, name, label)
    crpix = _number(header, "CRPIX1", 1.0, name, label)
    p = np.arange(1, n + 1, dtype=np.float64) - crpix
    how = "linear"
    # Overflow or 0/0 from absurd keywords gives inf/NaN positions, which the
    # spectrum checks refuse, naming the sample.
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        if ctype.endswith("-LOG"):
            x = crval * np.exp(cdelt * p / crval)
            how = "logarithmic (WCS -LOG)"
        elif _int(header.get("DC-FLAG", 0)) == 1:
            x = 10.0 ** (crval + cdelt * p)
            how = "log10-linear (IRAF DC-FLAG = 1)"
        else:
            x = crval + cdelt * p
    factor, unit = _unit_of(header.get("CUNIT1"))
    unit_from = "CUNIT1"
    if unit is None:
        m = re.search(r"units=(\S+)", wat)
        factor, unit = _unit_of(m.group(1)) if m else (1.0, None)
        unit_from = "WAT1_001"
    if unit is None and ctype in ("WAVE", "AWAV", "WAVE-LOG", "AWAV-LOG"):
        factor, unit = 1e9, "nm"  # the standard's default unit for WAVE/AWAV is the metre
        unit_from = "the WCS default (m)"
    with np.errstate(over="ignore", invalid="ignore"):
        x = x * factor
    medium = _CTYPE_MEDIUM.get(ctype)
    inside = ", ".join(v for v in (unit, medium) if v)
    headers = ["wavelength" + (f" ({inside})" if inside else ""), _y_label(header)]
    note = (
        f"{label}: 1-D image of {n:,} samples; positions from its {how} wavelength "
        f"solution (CTYPE1 {ctype or 'unset'!r}, CRVAL1, CDELT1, CRPIX1)"
        + (f", unit from {unit_from}" if unit else "")
    )
    return _columns(
        name, headers, [x, np.asarray(y, dtype=np.float64)], note, skipped, "sample", True
    )


#: The Goodman pipeline's wavelength functions (``GSP_FUNC``) and their numpy evaluators.
_GOODMAN_FUNCS = {
    "Chebyshev1D": np.polynomial.chebyshev.chebval,
    "Legendre1D": np.polynomial.legendre.legval,
}


def _goodman_columns(
    y: np.ndarray, header: Any, name: str, label: str, skipped: list[str]
) -> Columns:
    """A Goodman-pipeline spectrum: ``GSP_FUNC`` of order ``GSP_ORDR``, ``GSP_C000``…, in Å.

    The pipeline (goodman-pipeline, BSD-3) writes its wavelength solution as
    these keywords: the function evaluated on the 0-based pixel index gives
    the air wavelength in Å (checked on the lamp spectra of
    ``tests/data/realspectra/goodman`` against the lines the pipeline
    identified, ``GSP_P*``/``GSP_A*``).
    """
    func = str(header["GSP_FUNC"]).strip()
    if func not in _GOODMAN_FUNCS:
        raise FileFormatError(
            f"{name} {label}: wavelength function GSP_FUNC = {func!r} is not read "
            f"(read: {', '.join(_GOODMAN_FUNCS)})",
            "export the spectrum with its wavelengths as a two-column CSV table",
        )
    try:
        order = int(header["GSP_ORDR"])
        if not 0 <= order <= 20:
            raise ValueError(order)
        coef = [float(header[f"GSP_C{i:03d}"]) for i in range(order + 1)]
    except (KeyError, ValueError, TypeError, OverflowError):
        raise FileFormatError(
            f"{name} {label}: GSP_ORDR or one of the GSP_C coefficients is missing or not a number",
            "export the spectrum with its wavelengths as a two-column CSV table",
        ) from None
    x = _GOODMAN_FUNCS[func](np.arange(y.size, dtype=np.float64), coef)
    note = (
        f"{label}: 1-D image of {y.size:,} samples; positions from the Goodman pipeline's "
        f"{func} wavelength solution of order {order} (GSP_* keywords, Å)"
    )
    headers = ["wavelength (angstrom, air)", _y_label(header)]
    return _columns(
        name, headers, [x, np.asarray(y, dtype=np.float64)], note, skipped, "sample", True
    )


def _number(header: Any, key: str, default: float | None, name: str, label: str) -> float:
    """A header keyword as a float (``default`` when absent), or one clear error."""
    if key not in header and default is not None:
        return default
    try:
        return float(header[key])
    except (TypeError, ValueError, OverflowError):
        raise FileFormatError(
            f"{name} {label}: keyword {key} = {header[key]!r} is not a number",
            f"correct {key} in the header, or export a two-column table",
        ) from None


def _int(v: Any) -> int | None:
    """A header value as an int, or None when it is not one."""
    try:
        return int(v)
    except (TypeError, ValueError, OverflowError):
        return None


def _y_label(header: Any) -> str:
    bunit = str(header.get("BUNIT", "")).strip()
    return f"intensity ({bunit})" if bunit else "intensity"


def _table_columns(
    arr: np.ndarray, header: Any, name: str, label: str, skipped: list[str]
) -> Columns | None:
    names = list(arr.dtype.names or ())
    numeric = []
    for k, col in enumerate(names):
        v = arr[col]
        if v.dtype.kind not in "fiu":
            continue
        unit = str(header.get(f"TUNIT{k + 1}", "")).strip()
        numeric.append((f"{col} ({unit})" if unit else col, v))
    if len(numeric) < 2:
        return None
    if arr.shape[0] == 1 and all(v.ndim == 2 for _, v in numeric):
        # One row of arrays: one spectrum written per row.
        lengths = {v.shape[1] for _, v in numeric}
        if len(lengths) != 1:
            return None
        values = [np.asarray(v[0], dtype=np.float64) for _, v in numeric]
        shape_note = f"one row of {lengths.pop():,}-sample arrays"
    elif all(v.ndim == 1 for _, v in numeric):
        values = [np.asarray(v, dtype=np.float64) for _, v in numeric]
        shape_note = f"{arr.shape[0]:,} rows"
    else:
        return None
    note = f"{label}: table of {shape_note}; columns {', '.join(h for h, _ in numeric)}"
    return _columns(name, [h for h, _ in numeric], values, note, skipped, "table row", False)


def _columns(
    name: str,
    headers: list[str],
    values: list[np.ndarray],
    note: str,
    skipped: list[str],
    row_word: str,
    image: bool,
) -> Columns:
    """The HDU's columns; the note names the HDUs passed over before it."""
    if skipped:
        note += "; skipped " + "; ".join(skipped)
    return array_columns(
        name,
        headers,
        values,
        lambda i: f"{row_word} {i + 1}",
        fmt="fits",
        note=f"FITS {note}",
        sampled="FITS 1-D image" if image else None,
    )
