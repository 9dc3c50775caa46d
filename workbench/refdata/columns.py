"""The canonical column set shared by every reference line table.

Every set (optical, X-ray, computed hydrogen-like, lab sets) has exactly these
columns in this order; a value that does not apply or is unknown is null,
never zero.

``n_components`` (data version 2026.12.2 on) is the number of hyperfine or
isotope components a line of the ``optical`` set was blended from (from
2026.12.4 also the transitions of one observed line whose NIST rows share
its intensity; 1 for a line listed as one row; the components are in ``optical_components``, see
:mod:`workbench.refdata.blend`); null in sets that do not blend.
"""

from __future__ import annotations

import polars as pl

__all__ = ["ADDED_COLUMNS", "CANONICAL_SCHEMA", "conform", "empty_table"]

#: Column name → polars dtype, in the canonical order.
CANONICAL_SCHEMA: dict[str, pl.DataType] = {
    "line_id": pl.String(),
    "element": pl.String(),
    "ion": pl.Int32(),
    "wavelength_air_nm": pl.Float64(),
    "wavelength_vac_nm": pl.Float64(),
    "energy_eV": pl.Float64(),
    "transition": pl.String(),
    "siegbahn": pl.String(),
    "initial_level": pl.String(),
    "A_ki_per_s": pl.Float64(),
    "A_ki_origin": pl.String(),
    "E_lower_eV": pl.Float64(),
    "E_upper_eV": pl.Float64(),
    "g_lower": pl.Float64(),
    "g_upper": pl.Float64(),
    "log_gf": pl.Float64(),
    "rel_intensity": pl.Float64(),
    "accuracy": pl.String(),
    "source_id": pl.String(),
    "n_sources": pl.Int32(),
    "alt_sources": pl.String(),
    "wavelength_spread_nm": pl.Float64(),
    "log_A_spread_dex": pl.Float64(),
    "notes": pl.String(),
    "n_components": pl.Int32(),
}

#: Columns added to the canonical set after data version 2026.12.1, at its end. A
#: table saved before (a lab set) lacks them and is read with them as nulls.
ADDED_COLUMNS: tuple[str, ...] = ("n_components",)


def empty_table() -> pl.DataFrame:
    """Return an empty table with the canonical schema."""
    return pl.DataFrame(schema=CANONICAL_SCHEMA)


def conform(table: pl.DataFrame) -> pl.DataFrame:
    """Add missing canonical columns as nulls, cast, and order them canonically.

    Parameters
    ----------
    table : polars.DataFrame
        A table holding a subset of the canonical columns (extra columns are dropped).

    Returns
    -------
    polars.DataFrame
        The table with exactly the canonical columns and dtypes.
    """
    exprs = []
    for name, dtype in CANONICAL_SCHEMA.items():
        if name in table.columns:
            exprs.append(pl.col(name).cast(dtype, strict=True))
        else:
            exprs.append(pl.lit(None, dtype=dtype).alias(name))
    return table.select(exprs)
