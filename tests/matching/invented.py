"""A small invented reference set for engine tests (invented data, not real lines)."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import polars as pl

from workbench.datamodel import PeakList
from workbench.physics.airvac import vacuum_to_air_nm


@dataclass(frozen=True, eq=False)
class FakeSet:
    """Stands in for workbench.refdata.ReferenceSet (same attributes the engine uses)."""

    id: str
    table: pl.DataFrame
    axis: str = "wavelength"
    version: str = "test"
    sha256: str = "0" * 64
    entry: dict = field(default_factory=dict)

    def provenance(self) -> dict:
        return {
            "id": self.id,
            "version": self.version,
            "sha256": self.sha256,
            "data_version": "test",
        }


# Invented species: "Qa".."Qd" are not element symbols; the engine treats symbols as opaque.
INVENTED = [
    # element, ion, vac_nm, g_upper, A, E_upper
    ("Qa", 1, 300.000, 5, 1.0e8, 4.2),
    ("Qa", 1, 320.000, 3, 6.0e7, 3.9),
    ("Qa", 1, 350.000, 7, 4.0e7, 5.6),
    ("Qa", 1, 410.000, 5, 2.0e7, 3.1),
    ("Qb", 1, 300.010, 3, 5.0e7, 4.1),  # 0.01 nm from Qa 300.000: an overlap pair
    ("Qb", 1, 450.000, 5, 9.0e7, 2.8),
    ("Qb", 1, 470.000, 3, 7.0e7, 2.7),
    ("Qb", 1, 500.000, 5, 3.0e7, 4.5),
    ("Qc", 1, 380.000, 5, 1.0e8, 3.3),  # one strong line in range: never "established"
    ("Qc", 1, 600.000, 3, 1.0e5, 6.0),
]


def invented_table(rows=INVENTED) -> pl.DataFrame:
    el, ion, vac, g, A, E = (list(c) for c in zip(*rows, strict=True))
    vac_arr = np.array(vac)
    return pl.DataFrame(
        {
            "line_id": [f"t:{e}:{i}:{v:.5f}" for e, i, v in zip(el, ion, vac, strict=True)],
            "element": el,
            "ion": pl.Series(ion, dtype=pl.Int32),
            "wavelength_vac_nm": vac_arr,
            "wavelength_air_nm": vacuum_to_air_nm(vac_arr),
            "g_upper": np.array(g, dtype=float),
            "A_ki_per_s": np.array(A, dtype=float),
            "E_upper_eV": np.array(E, dtype=float),
        }
    )


def peaks_from(positions, intensities, medium="vacuum", **extra_cols) -> PeakList:
    cols = {
        "wavelength_nm": np.asarray(positions, float),
        "intensity": np.asarray(intensities, float),
    }
    cols.update(extra_cols)
    t = pl.DataFrame(cols).sort("wavelength_nm")
    return PeakList(t, "wavelength", medium)


def seeded_mixtures(
    pool: list[str],
    seed: int,
    resolving_powers: tuple[float, ...],
    n_per_r: int,
    max_species: int,
    abundance: Callable[[np.random.Generator], float],
) -> list[tuple[float, dict[str, float], int]]:
    """Invented mixtures: (R, {species: abundance}, spectrum seed), reproducible.

    For each resolving power, ``n_per_r`` mixtures of 1 … ``max_species``
    species (cycling) drawn from ``pool`` without replacement, each species'
    abundance drawn by ``abundance(rng)``, and a seed for the spectrum's noise.
    """
    rng = np.random.default_rng(seed)
    out = []
    for R in resolving_powers:
        for i in range(n_per_r):
            k = 1 + i % max_species
            species = sorted(rng.choice(pool, size=k, replace=False).tolist())
            mix = {s: abundance(rng) for s in species}
            out.append((R, mix, int(rng.integers(1, 2**31))))
    return out


# Invented absorption mixtures (tests/matching/test_absorption_mixtures.py and
# benchmarks/absorption_confusion.py render the same spectra).
#: Absorbers of stellar and solar-like spectra, plus a few common in cells.
ABSORPTION_POOL = [
    "Na I",
    "Mg I",
    "Al I",
    "Si I",
    "Ca I",
    "Ca II",
    "Ti I",
    "Cr I",
    "Mn I",
    "Fe I",
    "Ni I",
    "Sr II",
    "Ba II",
    "K I",
    "H I",
    "Li I",
]
ABSORPTION_RANGE_NM = (380.0, 900.0)
ABSORPTION_T_K = 5800.0
ABSORPTION_RESOLVING_POWERS = (500.0, 2000.0, 20000.0)


def absorption_mixtures(seed: int, n_per_r: int) -> list[tuple[float, dict[str, float], int]]:
    """Invented absorption mixtures: 1 … 5 species of the pool, abundances 10^U(−0.5, 0.5)."""
    return seeded_mixtures(
        ABSORPTION_POOL,
        seed,
        ABSORPTION_RESOLVING_POWERS,
        n_per_r,
        5,
        lambda rng: float(10 ** rng.uniform(-0.5, 0.5)),
    )


def absorption_renderer(optical) -> Callable[[float, dict[str, float], int], PeakList]:
    """``render(R, abundance, seed)``: the absorption peak list of one invented mixture.

    Each species' lines at their absorption strengths at 5800 K (log gf − θχ,
    :func:`workbench.matching.expected.expected_strengths`), compressed as
    saturated lines are (depth ∝ strength^0.3, invented), scaled by the
    abundance, subtracted from a flat continuum, rendered at resolving power
    R with Gaussian noise σ 0.003, then found by the product's peak finding
    in absorption mode.
    """
    from workbench.datamodel import Spectrum
    from workbench.matching.engine import build_index
    from workbench.matching.expected import expected_strengths
    from workbench.peaks import find_peaks
    from workbench.physics.synth import synthetic_spectrum

    lo, hi = ABSORPTION_RANGE_NM
    index = build_index([optical], "wavelength", "air")
    names = np.array(index.species_names, dtype=object)[index.species]
    in_range = (index.position >= lo) & (index.position <= hi)
    e = np.nan_to_num(expected_strengths(index, ABSORPTION_T_K, "absorption", in_range))
    e = np.where(in_range, e, 0.0)

    def render(R: float, abundance: dict[str, float], seed: int) -> PeakList:
        pos_all, depth_all = [], []
        for sp, a in abundance.items():
            m = (names == sp) & (e > 0)
            if not np.any(m):
                continue
            # Saturated lines grow slowly with strength (invented compression).
            pos_all.append(index.position[m])
            depth_all.append(0.6 * a / 3.2 * (e[m] / e[m].max()) ** 0.3)
        pos = np.concatenate(pos_all)
        depth = np.concatenate(depth_all)
        keep = depth >= 0.02
        lines = synthetic_spectrum(
            pos[keep],
            depth[keep] * pos[keep] / R * 1.0645,
            medium="air",
            x_range=ABSORPTION_RANGE_NM,
            n_points=int((hi - lo) / (lo / R / 4)),
            resolving_power=R,
            noise_sigma=0.003,
            seed=seed,
        )
        spec = Spectrum(lines.x, 1.0 - lines.y, "wavelength", "air")
        return find_peaks(spec, mode="absorption")

    return render
