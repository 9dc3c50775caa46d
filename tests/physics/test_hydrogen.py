import math

import numpy as np
import polars as pl
import pytest
from scipy import constants as sc
from scipy.integrate import quad
from scipy.special import genlaguerre

from workbench.errors import ValueRangeError
from workbench.physics import hydrogen as h
from workbench.physics.airvac import vacuum_to_air_nm

CANONICAL = [
    "line_id", "element", "ion", "wavelength_air_nm", "wavelength_vac_nm", "energy_eV",
    "transition", "siegbahn", "initial_level", "A_ki_per_s", "A_ki_origin", "E_lower_eV",
    "E_upper_eV", "g_lower", "g_upper", "log_gf", "rel_intensity", "accuracy", "source_id",
    "n_sources", "alt_sources", "wavelength_spread_nm", "log_A_spread_dex", "notes",
]  # fmt: skip


@pytest.fixture(scope="module")
def table() -> pl.DataFrame:
    return h.hydrogen_like_line_table()


@pytest.fixture(scope="module")
def blends() -> pl.DataFrame:
    return h.hydrogen_like_blends()


def _blend(blends: pl.DataFrame, species: str, n_u: int, n_l: int) -> dict:
    rows = blends.filter(
        (pl.col("species") == species) & (pl.col("n_upper") == n_u) & (pl.col("n_lower") == n_l)
    )
    assert rows.height == 1
    return rows.row(0, named=True)


# ------------------------------------------------------------------ wavelengths


@pytest.mark.parametrize(
    ("n_u", "expected_air_nm"),
    # Balmer α–δ observed blends in air: NIST ASD, from memory.
    [(3, 656.279), (4, 486.133), (5, 434.047), (6, 410.174)],
)
def test_balmer_blends_air(blends, n_u, expected_air_nm):
    assert _blend(blends, "H I", n_u, 2)["wavelength_air_nm"] == pytest.approx(
        expected_air_nm, abs=0.01
    )


def test_halpha_components_air():
    comps = h.fine_structure_components(3, 2, "H I")
    air = sorted({round(c.wavelength_air_nm, 6) for c in comps})
    strongest = max(comps, key=lambda c: c.g_upper * c.A_ki_per_s)
    # NIST ASD Hα components 656.2710 and 656.2852 nm (air), from memory.
    assert any(abs(a - 656.2710) < 0.002 for a in air)
    assert strongest.transition == "3d 2D5/2 - 2p 2P3/2"
    assert strongest.wavelength_air_nm == pytest.approx(656.2852, abs=0.002)
    assert len(comps) == 7  # Δl = ±1, Δj = 0, ±1 for 3→2 (Bethe & Salpeter 1957), common practice


def test_gross_formula_is_longward_of_blend(blends):
    row = _blend(blends, "H I", 3, 2)
    # Brief: the Rydberg formula alone is ~0.009 nm too long at Hα (fine structure), from memory.
    assert row["wavelength_gross_vac_nm"] - row["wavelength_vac_nm"] == pytest.approx(
        0.009, abs=0.002
    )


def test_lyman_alpha_vacuum(blends):
    row = _blend(blends, "H I", 2, 1)
    assert row["wavelength_vac_nm"] == pytest.approx(121.567, abs=0.002)  # NIST ASD, from memory
    assert row["wavelength_air_nm"] is None  # below 200 nm only vacuum is quoted (convention)


def test_deuterium_isotope_shift(blends):
    shift = (
        _blend(blends, "H I", 3, 2)["wavelength_air_nm"]
        - _blend(blends, "D I", 3, 2)["wavelength_air_nm"]
    )
    assert shift == pytest.approx(
        0.179, abs=0.002
    )  # D Hα isotope shift, common knowledge, from memory


def test_he_ii_4686(blends):
    row = _blend(blends, "He II", 4, 3)
    assert row["wavelength_air_nm"] == pytest.approx(468.57, abs=0.01)  # He II 4686, from memory


def test_balmer_series_limit_air():
    lam_air = float(vacuum_to_air_nm(h.series_limit_vac_nm(2, "H I")))
    assert lam_air == pytest.approx(364.6, abs=0.05)  # Balmer limit, from memory


def test_rydberg_reduced_mass_scaling():
    # R_M = R_inf * mu/m_e (Bethe & Salpeter 1957, eq. 2.12): derived analytically here.
    m_p = sc.physical_constants["proton mass"][0]
    expected = 1e9 / (sc.Rydberg * m_p / (sc.m_e + m_p) * (1 / 4 - 1 / 9))
    assert h.rydberg_wavelength_vac_nm(2, 3, "H I") == pytest.approx(expected, rel=1e-14)
    # He II n=4→2 coincides with H n=2→1 up to the reduced mass (Z² scaling), analytic.
    ratio = h.rydberg_wavelength_vac_nm(2, 4, "He II") / h.rydberg_wavelength_vac_nm(1, 2, "H I")
    mu_h = h.get_species("H I").reduced_mass_kg
    mu_he = h.get_species("He II").reduced_mass_kg
    assert ratio == pytest.approx(mu_h / mu_he, rel=1e-12)


def test_ionisation_energy_of_hydrogen():
    # H I ionisation energy 13.598434 eV (NIST ASD, from memory); the 1s Lamb shift
    # (8.17 GHz ≈ 3.4e-5 eV, from memory) is neglected here, so allow 1e-4 eV.
    assert -h.dirac_binding_energy_eV(1, 0.5, "H I") == pytest.approx(13.598434, abs=1e-4)


def test_fine_structure_splitting_n2():
    split_eV = h.level_energy_eV(2, 1.5) - h.level_energy_eV(2, 0.5)
    split_per_cm = split_eV * sc.e / (100 * sc.h * sc.c)
    # Leading order: ΔE(2p3/2 − 2p1/2) = R_M α²/16 (Bethe & Salpeter 1957, eq. 16.1), analytic.
    r_m_per_cm = h.rydberg_constant_per_m("H I") / 100
    assert split_per_cm == pytest.approx(r_m_per_cm * sc.alpha**2 / 16, rel=1e-4)
    # Measured 10.969 GHz = 0.36588 cm⁻¹ (Lamb–Retherford; NIST, from memory) includes QED
    # (electron anomalous moment, ~0.2 %), which Dirac theory lacks: allow 0.0015 cm⁻¹.
    assert split_per_cm == pytest.approx(0.36588, abs=0.0015)


def test_dirac_degeneracy_in_j():
    # Dirac theory: energy depends on n and j only (Bethe & Salpeter 1957), common practice.
    comps = h.fine_structure_components(3, 2)
    by_label = {c.short_label: c.wavelength_vac_nm for c in comps}
    assert by_label["3s1/2-2p1/2"] == by_label["3p1/2-2s1/2"]


# ---------------------------------------------------------------- transition rates


def test_radial_integral_2p_1s_closed_form():
    # <1s|r|2p> = 128√6/243 a0 = 1.29027 (Bethe & Salpeter 1957, Table 13, from memory).
    assert h.radial_integral_au(2, 1, 1, 0) == pytest.approx(128 * math.sqrt(6) / 243, rel=1e-14)


def _radial_numeric(n: int, ell: int, r: np.ndarray | float) -> float:
    norm = math.sqrt((2 / n) ** 3 * math.factorial(n - ell - 1) / (2 * n * math.factorial(n + ell)))
    rho = 2 * r / n
    return norm * np.exp(-rho / 2) * rho**ell * genlaguerre(n - ell - 1, 2 * ell + 1)(rho)


@pytest.mark.parametrize(("n1", "l1", "n2", "l2"), [(3, 2, 2, 1), (5, 1, 2, 0), (8, 3, 4, 2)])
def test_radial_integral_matches_quadrature(n1, l1, n2, l2):
    # Independent check: numerical quadrature of scipy.special.genlaguerre wavefunctions.
    val, _ = quad(lambda r: _radial_numeric(n1, l1, r) * _radial_numeric(n2, l2, r) * r**3, 0, 400,
                  limit=400)  # fmt: skip
    assert abs(val) == pytest.approx(h.radial_integral_au(n1, l1, n2, l2), rel=1e-8)


def test_A_2p_1s():
    # A(2p→1s) = 6.2649e8 s⁻¹ (NIST ASD / Wiese & Fuhr 2009, from memory), within 0.1 %.
    assert h.einstein_A_nl_per_s(2, 1, 1, 0, "H I") == pytest.approx(6.2649e8, rel=1e-3)


def test_A_total_3_to_2():
    # Hα total A(n=3→2) = 4.4101e7 s⁻¹ (NIST ASD / Wiese & Fuhr 2009, from memory), within 0.1 %.
    assert h.gross_einstein_A_per_s(3, 2, "H I") == pytest.approx(4.4101e7, rel=1e-3)
    # The same total rebuilt from the fine-structure components: Σ g_k A_ki / (2n²).
    comps = h.fine_structure_components(3, 2, "H I")
    total = sum(c.g_upper * c.A_ki_per_s for c in comps) / 18
    assert total == pytest.approx(4.4101e7, rel=1e-3)


def test_A_scales_as_Z4_times_mu():
    # A ∝ Z⁴ μ for hydrogen-like ions (Bethe & Salpeter 1957, § 63), analytic.
    ratio = h.einstein_A_nl_per_s(2, 1, 1, 0, "He II") / h.einstein_A_nl_per_s(2, 1, 1, 0, "H I")
    mu_ratio = h.get_species("He II").reduced_mass_kg / h.get_species("H I").reduced_mass_kg
    assert ratio == pytest.approx(16 * mu_ratio, rel=1e-12)


def test_fine_structure_line_strength_fractions():
    # p→s: 2P3/2→2S1/2 : 2P1/2→2S1/2 = 2 : 1 (standard LS fractions, common practice).
    comps = {c.short_label: c for c in h.fine_structure_components(2, 1)}
    s32 = comps["2p3/2-1s1/2"].line_strength_au
    s12 = comps["2p1/2-1s1/2"].line_strength_au
    assert s32 / s12 == pytest.approx(2.0, rel=1e-12)
    # d→p: 2D5/2–2P3/2 : 2D3/2–2P3/2 : 2D3/2–2P1/2 = 9 : 1 : 5 (Condon & Shortley, from memory).
    d = {c.short_label: c.line_strength_au for c in h.fine_structure_components(3, 2)}
    s = np.array([d["3d5/2-2p3/2"], d["3d3/2-2p3/2"], d["3d3/2-2p1/2"]])
    assert s / s[1] == pytest.approx([9.0, 1.0, 5.0], rel=1e-12)


def test_wigner_6j_known_values():
    # {1/2 1/2 1; 1/2 1/2 0} = 1/2 and {1 1 1; 1 1 1} = 1/6 (standard tables, from memory).
    assert h.wigner_6j(0.5, 0.5, 1, 0.5, 0.5, 0) == pytest.approx(0.5, rel=1e-14)
    assert h.wigner_6j(1, 1, 1, 1, 1, 1) == pytest.approx(1 / 6, rel=1e-14)
    assert h.wigner_6j(1, 1, 3, 1, 1, 1) == 0.0  # triangle rule fails, by definition


def test_gf_factor():
    # gf = g_u A λ[Å]²/6.6702e15 (common practice, e.g. NIST ASD conventions, from memory).
    assert h.gf_from_A(1.0, 1.0, 100.0) == pytest.approx(1000.0**2 / 6.6702e15, rel=1e-4)


# ------------------------------------------------------------------------ tables


def test_table_columns_and_types(table):
    assert table.columns == CANONICAL
    assert table.schema["ion"] == pl.Int32
    assert table.schema["n_sources"] == pl.Int32
    for col in ("wavelength_air_nm", "g_upper", "rel_intensity", "log_A_spread_dex"):
        assert table.schema[col] == pl.Float64
    assert table["line_id"].n_unique() == table.height
    assert table["wavelength_vac_nm"].is_sorted()
    assert set(table["source_id"]) == {"computed_rydberg_dirac"}
    assert set(table["A_ki_origin"]) == {"computed_nonrelativistic_E1"}
    assert table["wavelength_vac_nm"].min() >= 90.0 and table["wavelength_vac_nm"].max() <= 2000.0


def test_table_air_null_below_200(table):
    low = table.filter(pl.col("wavelength_vac_nm") < 200)
    assert low.height > 0 and low["wavelength_air_nm"].null_count() == low.height
    high = table.filter(pl.col("wavelength_vac_nm") >= 200)
    assert high["wavelength_air_nm"].null_count() == 0


def test_table_rows_consistent(table):
    # E = hc/λ and log gf from A: internal consistency (CODATA via scipy.constants).
    hc = sc.h * sc.c / sc.e * 1e9
    assert np.allclose(table["energy_eV"] * table["wavelength_vac_nm"], hc, rtol=1e-12)
    assert np.allclose(table["E_upper_eV"] - table["E_lower_eV"], table["energy_eV"], rtol=1e-9)
    halpha = table.filter(pl.col("transition") == "3d 2D5/2 - 2p 2P3/2").filter(
        pl.col("element") == "H"
    )
    row = halpha.row(0, named=True)
    assert row["g_upper"] == 6.0 and row["g_lower"] == 4.0  # 2j+1, by definition
    assert row["line_id"] == f"hydrogen_like:H:1:{row['wavelength_air_nm']:.5f}"
    assert set(table["element"]) == {"H", "D", "He"}
    assert set(table.filter(pl.col("element") == "He")["ion"]) == {2}


def test_table_deterministic_and_set_id():
    a = h.hydrogen_like_line_table(("H I",), n_upper_max=6, n_lower_max=2, set_id="optical")
    b = h.hydrogen_like_line_table(("H I",), n_upper_max=6, n_lower_max=2, set_id="optical")
    assert a.equals(b)
    assert all(s.startswith("optical:H:1:") for s in a["line_id"])


def test_table_bad_arguments():
    with pytest.raises(ValueRangeError, match="unknown hydrogen-like species"):
        h.hydrogen_like_line_table(("X I",))
    with pytest.raises(ValueRangeError, match="n_upper_max"):
        h.hydrogen_like_line_table(n_upper_max=3, n_lower_max=5)
    with pytest.raises(ValueRangeError, match="increasing"):
        h.hydrogen_like_line_table(wavelength_vac_range_nm=(500.0, 100.0))
    with pytest.raises(ValueRangeError, match="n_upper=2 is not above"):
        h.rydberg_wavelength_vac_nm(3, 2)
    with pytest.raises(ValueRangeError, match="half-integer"):
        h.level_energy_eV(2, 2.5)
