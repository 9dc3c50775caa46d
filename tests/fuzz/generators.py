"""Seeded generators of hostile reader inputs (delimited, JCAMP-DX, Parquet, FITS, JSON, EMSA).

Plain functions of a ``numpy.random.Generator``, so the same seed gives the
same inputs on every machine, and the harness can be run against any commit
of the readers (``run_case`` takes the reader as an argument).
"""

from __future__ import annotations

import io
import time
import traceback
import tracemalloc
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

__all__ = [
    "HOSTILE_CELLS",
    "Outcome",
    "delimited_case",
    "fits_case",
    "jcamp_case",
    "json_case",
    "msa_case",
    "mutate",
    "parquet_case",
    "run_case",
]

# Cells a spreadsheet, an instrument or an attacker might write (common practice, no source).
HOSTILE_CELLS: tuple[str, ...] = (
    "",
    " ",
    "nan",
    "NaN",
    "inf",
    "-inf",
    "Infinity",
    "1e400",
    "-1e400",
    "1e300",
    "-1e300",
    "1.7976931348623157e308",
    "5e-324",
    "-0",
    "0",
    "abc",
    "#VALUE!",
    "#N/A",
    "#DIV/0!",
    "%",
    "12,5",
    "1.2.3",
    "0x1F",
    "1_000",
    '"',
    '""',
    "656.3 nm",
    "656.3 Å",
    "656.3nm",
    "٣٤",
    "１２",
    "∞",
    "1e",
    "e5",
    "+",
    "-",
    ".",
    "1" + " " * 2000 + "1",
    "(" * 500,
    "\x00",
    "\t",
)
_HEADERS: tuple[str, ...] = (
    "wavelength (nm)",
    "Wavelength [A]",
    "λ/Å",
    "energy (keV)",
    "Energy/eV",
    "wavenumber cm-1",
    "wl_nm",
    "x",
    "channel",
    "intensity",
    "counts",
    "Intensität",
    "fwhm (nm)",
    "area",
    "S/N",
    "snr",
    "",
    "((((",
    "wavelength (air, nm)",
    "wavelength (vac) (nm)",
    "wavelength in in in",
    "#",
    "a,b",
    "position (pm)",
)
_DELIMS = (",", ";", "\t", " ", "  ", "|")


def _number(rng: np.random.Generator) -> str:
    v = float(rng.choice([rng.uniform(100, 1000), rng.normal(0, 1e3), rng.uniform(1, 40)]))
    fmt = rng.choice(["{:.4f}", "{:g}", "{:.3e}", "{:.0f}"])
    return str(fmt).format(v)


def delimited_case(rng: np.random.Generator) -> bytes:
    """A delimited table, mostly well formed, with a few hostile twists."""
    hostile = rng.random() < 0.4  # else a well-formed table (both must be handled)
    n_cols = int(rng.choice([1, 2, 3, 4] if hostile else [2, 2, 3, 4]))
    delim = str(rng.choice(_DELIMS if hostile else _DELIMS[:4]))
    lines: list[str] = []
    if rng.random() < 0.3:
        lines.append(str(rng.choice(["# medium: air", "% vacuum", "; unit: nm", "# x units: nm"])))
    if rng.random() < 0.8:
        if hostile:
            lines.append(delim.join(str(rng.choice(_HEADERS)) for _ in range(n_cols)))
        else:
            good = ["wavelength (nm)", "intensity", "fwhm (nm)", "snr"][:n_cols]
            lines.append(delim.join(good if delim.strip() else [g.replace(" ", "_") for g in good]))
    n_rows = int(rng.choice([0, 1, 3, 20, 60, 300] if hostile else [3, 20, 60, 300]))
    spectrum = rng.random() < 0.5
    x0 = float(rng.uniform(300, 700))
    step = float(rng.choice([0.01, 0.1, -0.1, 0.0] if hostile else [0.01, 0.1, -0.1]))
    for i in range(n_rows):
        position = _number(rng) if hostile else f"{rng.uniform(200, 900):.4f}"
        cells = [f"{x0 + i * step:.4f}" if spectrum else position]
        cells += [_number(rng) for _ in range(n_cols - 1)]
        if hostile and rng.random() < 0.03:
            cells[int(rng.integers(0, len(cells)))] = str(rng.choice(HOSTILE_CELLS))
        if hostile and rng.random() < 0.0005:  # issue 11 item 9: over csv's 131,072 limit
            cells[-1] = '"' + "7" * 140_000 + '"'

        if hostile and rng.random() < 0.01:
            cells.append("9")  # ragged
        lines.append(delim.join(cells))
        if hostile and rng.random() < 0.01:
            lines.append(str(rng.choice(["", "   ", "#VALUE!,1", "% skipped", "#"])))
    text = str(rng.choice(["\n", "\r\n", "\r"] if hostile else ["\n", "\r\n"])).join(lines)
    text += "\n"
    encoding = str(rng.choice(["utf-8", "utf-8", "utf-8", "utf-8-sig", "latin-1", "utf-16"]))
    return text.encode(encoding, errors="replace")


_ASDF = "0123456789.+- @ABCDEFGHIabcdefghi%JKLMNOPQRjklmnopqrSTUVWXYZs?,;"


def jcamp_case(rng: np.random.Generator) -> bytes:
    """A JCAMP-DX file: XYDATA (ASDF), XYPOINTS or a PEAK TABLE, with hostile labels."""
    kind = str(rng.choice(["xydata", "xypoints", "peaktable"]))
    hostile = rng.random() < 0.4
    units = ["NANOMETERS", "1/CM", "EV", "HZ", ""] if hostile else ["NANOMETERS"]
    npoints = int(rng.choice([2, 5, 20, 100] if hostile else [5, 20, 100]))
    first, last = float(rng.uniform(300, 500)), float(rng.uniform(500, 900))

    def value(v: float) -> str:
        return str(rng.choice(HOSTILE_CELLS)) if hostile and rng.random() < 0.1 else f"{v:g}"

    out = [
        "##TITLE=fuzz",
        "##JCAMP-DX=5.01",
        f"##XUNITS={rng.choice(units)}",
    ]
    out.append("##YUNITS=COUNTS")
    npoints_text = value(npoints)
    if hostile and rng.random() < 0.1:  # issue 11 item 9: a non-number or overflowing count
        npoints_text = str(rng.choice(["nan", "1e400", "-3", "2.5", "inf"]))
    out += [f"##FIRSTX={value(first)}", f"##LASTX={value(last)}", f"##NPOINTS={npoints_text}"]
    out += [f"##XFACTOR={value(1.0)}", f"##YFACTOR={value(1.0)}"]
    if kind == "xydata":
        out.append("##XYDATA=(X++(Y..Y))")
        ys = np.round(rng.normal(100, 20, npoints)).astype(int)
        per = 10
        step = (last - first) / max(npoints - 1, 1)
        for a in range(0, npoints, per):
            if hostile and rng.random() < 0.01:  # issue 11 item 10: a DUP count bomb
                out.append(f"{first + a * step:g} 1Z{rng.integers(10**6, 10**7)}")
            elif hostile and rng.random() < 0.2:  # an ASDF-like line of random tokens
                toks = "".join(rng.choice(list(_ASDF), size=int(rng.integers(1, 30))))
                out.append(f"{first + a * step:g} {toks}")
            else:
                out.append(f"{first + a * step:g} " + " ".join(str(v) for v in ys[a : a + per]))
    else:
        form = str(rng.choice(["(XY..XY)", "(XYW..XYW)"]))
        out.append(f"##{'XYPOINTS' if kind == 'xypoints' else 'PEAK TABLE'}={form}")
        nv = 3 if "W" in form else 2
        for i in range(npoints):
            vals = [first + i, float(rng.uniform(1, 100)), float(rng.uniform(0.01, 1))][:nv]
            out.append(" ".join(value(v) for v in vals))
    if not hostile or rng.random() < 0.8:
        out.append("##END=")
    return ("\n".join(out) + "\n").encode()


def parquet_case(rng: np.random.Generator) -> bytes:
    """A small Parquet table with a numeric or non-numeric intensity column."""
    import polars as pl

    n = int(rng.choice([0, 3, 60]))
    pos = np.sort(rng.uniform(300, 800, n))
    kinds = {
        "float": lambda: pl.Series("intensity", rng.uniform(0, 100, n)),
        "int": lambda: pl.Series("intensity", rng.integers(0, 100, n)),
        "bool": lambda: pl.Series("intensity", rng.random(n) < 0.5),
        "str": lambda: pl.Series("intensity", [str(v) for v in range(n)]),
        "null": lambda: pl.Series("intensity", [None] * n, dtype=pl.Float64),
        "nan": lambda: pl.Series("intensity", np.full(n, np.nan)),
        "list": lambda: pl.Series("intensity", [[float(v)] for v in range(n)]),
        "huge": lambda: pl.Series("intensity", np.full(n, 1e308)),
    }
    kind = str(rng.choice(list(kinds)))
    header = str(rng.choice(["wavelength (nm)", "energy (keV)", "x", "pixel"]))
    df = pl.DataFrame([pl.Series(header, pos), kinds[kind]()])
    buf = io.BytesIO()
    df.write_parquet(buf)
    return buf.getvalue()


def fits_case(rng: np.random.Generator) -> bytes:
    """A small FITS file: a 1-D image with random WCS keywords, or a table."""
    import warnings

    from astropy.io import fits

    n = int(rng.choice([0, 1, 3, 60]))
    if rng.random() < 0.3:
        cols = [
            fits.Column(
                name=str(rng.choice(["WAVE", "wavelength", "x", "pixel"])),
                format="D",
                unit=str(rng.choice(["nm", "Angstrom", "", "keV", "furlong"])),
                array=np.sort(rng.uniform(300, 800, n)),
            ),
            fits.Column(name="FLUX", format="D", array=rng.choice([1.0, np.nan, 1e308], n)),
        ]
        hdus = [fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]
    else:
        shape = (n,) if rng.random() < 0.8 else (2, max(n, 1))
        data = rng.uniform(0, 100, shape).astype(str(rng.choice(["float32", "int16", "float64"])))
        hdu = fits.PrimaryHDU(data)
        keys = {
            "CTYPE1": ["WAVE", "AWAV", "LINEAR", "WAVE-LOG", "RA---TAN", ""],
            "CUNIT1": ["nm", "Angstrom", "m", "", "parsec"],
            "CRVAL1": [500.0, 0.0, -1.0, 1e300, 5e-7],
            "CDELT1": [0.1, 0.0, -0.1, 1e300, 1e-11],
            "CRPIX1": [1.0, 0.0, 1e9],
            "DC-FLAG": [0, 1, 7],
            "GSP_FUNC": ["Chebyshev1D", "Spline3"],
            "GSP_ORDR": [2, -1, 99],
            "GSP_C000": [5000.0],
            "GSP_C001": [1.0],
        }
        for k, choices in keys.items():
            if rng.random() < 0.6:
                v = choices[int(rng.integers(0, len(choices)))]
                hdu.header[k] = v
        hdus = [hdu]
    buf = io.BytesIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fits.HDUList(hdus).writeto(buf)
    return buf.getvalue()


def json_case(rng: np.random.Generator) -> bytes:
    """A small JSON document: arrays, records or rows, with hostile values."""
    import json

    n = int(rng.choice([0, 1, 3, 60]))
    values = [0.0, -1.0, 1e308, None, True, "x", 10**400, [], {}, float("nan")]

    def cell() -> object:
        return (
            values[int(rng.integers(0, len(values)))]
            if rng.random() < 0.1
            else float(rng.uniform(300, 800))
        )

    kind = int(rng.integers(0, 4))
    if kind == 0:
        doc: object = {
            "wavelength (nm)": sorted(float(v) for v in rng.uniform(300, 800, n)),
            "counts": [cell() for _ in range(n)],
            "meta": {"gain": cell()},
        }
    elif kind == 1:
        doc = {"spectrum": {"x": [cell() for _ in range(n)], "y": [cell() for _ in range(n)]}}
    elif kind == 2:
        doc = [{"wavelength_nm": cell(), "intensity": cell()} for _ in range(n)]
    else:
        doc = [[cell() for _ in range(int(rng.integers(1, 4)))] for _ in range(n)]
    return json.dumps(doc, allow_nan=True).encode()


def msa_case(rng: np.random.Generator) -> bytes:
    """A small EMSA/MAS file with hostile keywords and data cells."""
    n = int(rng.choice([0, 1, 5, 60, 60, 60]))
    datatype = str(rng.choice(["Y", "Y", "XY", "Q", ""]))
    keys = {
        "NPOINTS": [str(n), "0", "nan", "1e400", str(n + 1), "-3"],
        "XUNITS": ["keV", "eV", "", "nm", "furlong"],
        "XPERCHAN": ["0.01", "0", "-0.01", "nan", "x", "1e308"],
        "OFFSET": ["-0.2", "0", "1e308", "inf", ""],
        "DATATYPE": [datatype],
    }
    head = ["#FORMAT : EMSA/MAS Spectral Data File"]
    for k, choices in keys.items():
        if rng.random() < 0.8:
            # The first choice (a valid value) two times in three.
            pick = 0 if rng.random() < 0.67 else int(rng.integers(0, len(choices)))
            head.append(f"#{k} : {choices[pick]}")
    width = 2 if datatype == "XY" else 5
    cells = [
        str(rng.choice(HOSTILE_CELLS)) if rng.random() < 0.005 else f"{rng.uniform(0, 20):.4g}"
        for _ in range(n * (2 if datatype == "XY" else 1))
    ]
    rows = [", ".join(cells[i : i + width]) for i in range(0, len(cells), width)]
    end = ["#ENDOFDATA : end"] if rng.random() < 0.8 else []
    return "\n".join([*head, "#SPECTRUM : start", *rows, *end]).encode("utf-8", "replace")


def workbook_case(rng: np.random.Generator) -> bytes:
    """A small .xlsx workbook (tests/io/xlsx_fixture.py): sheets of rows, hostile cells."""
    from tests.io.xlsx_fixture import xlsx_bytes

    hostile: list[object] = [None, "", "x", "1,5", 1e308, -1e308, 0.0, True, "#N/A", "<&>"]

    def cell(v: float) -> object:
        return hostile[int(rng.integers(0, len(hostile)))] if rng.random() < 0.05 else v

    sheets: dict[str, list[list[object]]] = {}
    if rng.random() < 0.3:
        sheets["Info"] = [["Instrument", "invented"], ["Date", "2026-01-05"]]
    n = int(rng.choice([0, 1, 3, 20, 60]))
    rows: list[list[object]] = []
    if rng.random() < 0.4:
        rows.append(["Invented export"])
    if rng.random() < 0.8:
        rows.append([str(rng.choice(_HEADERS)), "intensity"])
    if rng.random() < 0.2:
        rows.append(["nm", "counts"])
    x0, step = float(rng.uniform(300, 700)), float(rng.choice([0.1, -0.1, 0.0, 0.01]))
    for i in range(n):
        rows.append([cell(x0 + i * step), cell(float(rng.uniform(0, 1e4)))])
    sheets[str(rng.choice(["Spectrum", "Sheet1", "Ä & <b>"]))] = rows
    return xlsx_bytes(sheets)


def mutate(data: bytes, rng: np.random.Generator) -> bytes:
    """Flip bits, truncate, duplicate or splice hostile text into valid bytes."""
    b = bytearray(data)
    for _ in range(int(rng.integers(1, 4))):
        op = int(rng.integers(0, 5))
        if not b:
            break
        at = int(rng.integers(0, len(b)))
        if op == 0:
            b[at] ^= 1 << int(rng.integers(0, 8))
        elif op == 1:
            del b[at:]
        elif op == 2:
            b[at:at] = str(rng.choice(HOSTILE_CELLS)).encode("utf-8")
        elif op == 3:
            end = min(len(b), at + int(rng.integers(1, 200)))
            b[at:at] = b[at:end]
        else:
            b[at:at] = rng.integers(0, 256, int(rng.integers(1, 16)), dtype=np.uint8).tobytes()
    return bytes(b)


@dataclass
class Outcome:
    """Counts and worst cases of a fuzz run."""

    inputs: int = 0
    read: int = 0
    refused: int = 0
    tracebacks: list[str] = field(default_factory=list)
    worst_seconds_per_mb: float = 0.0
    worst_seconds: float = 0.0
    worst_memory_over_bound: float = 0.0  # peak / (4 x size + 16 MiB); <= 1 is within bound


def run_case(
    read: Callable[[bytes], object],
    data: bytes,
    expected: tuple[type[BaseException], ...],
    outcome: Outcome,
    *,
    trace_memory: bool = False,
) -> None:
    """Run one input; a result or an ``expected`` error is fine, anything else is kept."""
    outcome.inputs += 1
    if trace_memory:
        tracemalloc.start()
    t0 = time.perf_counter()
    try:
        read(data)
        outcome.read += 1
    except expected:
        outcome.refused += 1
    except BaseException as exc:
        if isinstance(exc, KeyboardInterrupt):
            raise
        outcome.tracebacks.append(
            f"{type(exc).__name__}: {str(exc)[:200]} <- {data[:80]!r}\n"
            + "".join(traceback.format_tb(exc.__traceback__)[-2:])
        )
    finally:
        elapsed = time.perf_counter() - t0
        if trace_memory:
            _, peak = tracemalloc.get_traced_memory()
            tracemalloc.stop()
            bound = 4 * len(data) + 16 * 2**20
            outcome.worst_memory_over_bound = max(outcome.worst_memory_over_bound, peak / bound)
    outcome.worst_seconds = max(outcome.worst_seconds, elapsed)
    outcome.worst_seconds_per_mb = max(
        outcome.worst_seconds_per_mb, elapsed / max(len(data) / 1e6, 1.0)
    )
