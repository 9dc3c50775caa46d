"""Source models (workbench.matching.sourcemodels) on an invented set; ratios derived here."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from tests.matching.invented import FakeSet, invented_table
from workbench.errors import ValueRangeError
from workbench.matching import MatchParameters
from workbench.matching.expected import atomic_log_strength
from workbench.matching.reference import ReferenceIndex
from workbench.matching.sourcemodels import ABSORPTION_SATURATION, get_model, model_strengths


def _index(table: pl.DataFrame) -> ReferenceIndex:
    return ReferenceIndex.from_sets([FakeSet("t", table)], "wavelength", "vacuum")


def _with_rel(rel):
    t = invented_table()
    return t.with_columns(pl.Series("rel_intensity", np.asarray(rel, dtype=float)))


def test_discharge_lamp_uses_tabulated_ratio():
    # Invented tabulated intensities on Qa I (rows 0-3): 1000, 500, 100, 10.
    rel = [1000, 500, 100, 10] + [np.nan] * 6
    idx = _index(_with_rel(rel))
    inr = np.ones(idx.n_lines, dtype=bool)
    e = model_strengths(idx, "discharge-lamp", 10_000.0, inr)
    m = idx.species == idx.species_names.index("Qa I")
    pos, val = idx.position[m], e[m]
    got = dict(zip(np.round(pos).astype(int).tolist(), val.tolist(), strict=True))
    assert got[300] == pytest.approx(1.0)
    assert got[320] == pytest.approx(0.5)  # 500 / 1000 (tabulated)
    assert got[410] == pytest.approx(0.01)  # 10 / 1000


def test_lte_puts_source_only_lines_on_the_atomic_scale():
    # Qa I lines 300, 320, 350 have atomic data and tabulated values; add a
    # fifth Qa I line with a tabulated value only: it must be placed by the
    # median offset ln(Boltzmann) − ln(tabulated) over the three (one scale).
    t = invented_table()
    extra = t.filter(pl.col("wavelength_vac_nm") == 410.0).with_columns(
        pl.lit(430.0).alias("wavelength_vac_nm"),
        pl.lit(429.88).alias("wavelength_air_nm"),
        pl.lit(None, dtype=pl.Float64).alias("A_ki_per_s"),
        pl.lit("t:Qa:1:430").alias("line_id"),
    )
    t = pl.concat([t, extra])
    rel = np.full(t.height, np.nan)
    rel[[0, 1, 2]] = [800.0, 400.0, 50.0]
    rel[-1] = 200.0
    idx = _index(t.with_columns(pl.Series("rel_intensity", rel)))
    inr = np.ones(idx.n_lines, dtype=bool)
    e = model_strengths(idx, "lte-plasma", 10_000.0, inr)
    la = atomic_log_strength(idx, 10_000.0, "emission")
    m = idx.species == idx.species_names.index("Qa I")
    pos = idx.position[m]
    both = [np.argmin(abs(pos - w)) for w in (300.0, 320.0, 350.0)]
    lrel = np.log(np.array([800.0, 400.0, 50.0]))
    offset = np.median(la[m][both] - lrel)
    i430 = int(np.argmin(abs(pos - 430.0)))
    i300 = both[0]
    ratio = np.exp(np.log(200.0) + offset - la[m][i300])
    assert e[m][i430] / e[m][i300] == pytest.approx(ratio, rel=1e-9)


def test_absorption_curve_of_growth():
    idx = _index(invented_table())
    inr = np.ones(idx.n_lines, dtype=bool)
    e = model_strengths(idx, "absorption", 5800.0, inr)
    la = atomic_log_strength(idx, 5800.0, "absorption")
    m = idx.species == idx.species_names.index("Qb I")
    s = np.exp(la[m] - np.nanmax(la[m]))
    x = s / ABSORPTION_SATURATION
    w = np.where(x <= 1, x, np.sqrt(1 + 2 * np.log(np.maximum(x, 1))))  # module docstring
    assert e[m] == pytest.approx(w / w.max(), rel=1e-9)


def test_unknown_model_is_one_clear_error():
    with pytest.raises(ValueRangeError):
        get_model("plasma-ball")
    with pytest.raises(ValueRangeError):
        MatchParameters(source_model="plasma-ball")


def test_model_choice_counts_only_species_the_models_predict_differently():
    # Invented species Qd I with tabulated intensities only (no gA): the same
    # prediction under lte-plasma and discharge-lamp, so it cannot say which
    # model describes the source and is left out of the comparison
    # (workbench.matching.passes._model_sensitive_species). Qc I has atomic
    # data, but only on lines outside the range given here.
    from workbench.matching.passes import _model_sensitive_species

    t = invented_table()
    qd = t.filter(pl.col("element") == "Qb").with_columns(
        pl.lit("Qd").alias("element"),
        pl.lit(None, dtype=pl.Float64).alias("A_ki_per_s"),
        (pl.col("line_id") + "-qd").alias("line_id"),
        (pl.col("wavelength_vac_nm") + 5.0).alias("wavelength_vac_nm"),
        (pl.col("wavelength_air_nm") + 5.0).alias("wavelength_air_nm"),
    )
    t = pl.concat([t, qd])
    rel = np.where(t["element"].to_numpy() == "Qd", 100.0, np.nan)
    idx = _index(t.with_columns(pl.Series("rel_intensity", rel)))
    in_range = ~np.isin(np.round(idx.position).astype(int), [380, 600])
    got = _model_sensitive_species(idx, 10_000.0, in_range)
    names = idx.species_names
    assert got[names.index("Qa I")] and got[names.index("Qb I")]
    assert not got[names.index("Qd I")]  # tabulated only
    assert not got[names.index("Qc I")]  # atomic data, but none in range
