"""Reference lines laid out as sorted arrays for vectorised matching.

A *species* is what the engine scores: an element in one ion stage for
optical sets (``"Fe I"``, ``"Ca II"``), or an element's X-ray line family
for X-ray sets (``"Pb L"``, ``"As K"``), since K, L and M lines are excited
independently and their relative strengths depend on the excitation.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import polars as pl

from workbench.errors import ValueRangeError

__all__ = ["LISTED_SOURCES", "ReferenceIndex", "roman", "species_label"]

#: Sources of the shipped optical set that list only lines known to show: a
#: spectrograph's arc-lamp line list (PypeIt's, ``nist_pypeit_lamps``) and the
#: hand-picked key analytical lines (``supplement``). Their lines without a
#: strength (no intensity, no transition probability) are still lines a present
#: species shows, so the chance test counts their windows; the missing-line
#: test cannot weigh them and leaves them out.
LISTED_SOURCES: tuple[str, ...] = ("nist_pypeit_lamps", "supplement")

_ROMAN = ["", "I", "II", "III", "IV", "V", "VI", "VII", "VIII", "IX", "X"]


def roman(ion: int) -> str:
    """Spectroscopic notation of an ion stage (1 → "I", 2 → "II")."""
    return _ROMAN[ion] if 0 < ion < len(_ROMAN) else str(ion)


def species_label(element: str, ion: int | None, family: str | None = None) -> str:
    """Human label of a species: ``"Fe I"``, ``"Ca II"`` or ``"Pb L"``."""
    if family:
        return f"{element} {family}"
    return f"{element} {roman(int(ion))}" if ion is not None else element


def _col(table: pl.DataFrame, name: str, dtype: Any = pl.Float64) -> np.ndarray:
    if name not in table.columns:
        if dtype == pl.Utf8:
            return np.array([None] * table.height, dtype=object)
        return np.full(table.height, np.nan)
    series = table[name]
    if dtype == pl.Utf8:
        return np.array(series.cast(pl.Utf8).to_list(), dtype=object)
    return series.cast(pl.Float64).fill_null(np.nan).to_numpy()


def _listed(table: pl.DataFrame, axis: str) -> np.ndarray | None:
    """Lines of the shipped optical set from one of :data:`LISTED_SOURCES`.

    Only the shipped set's sources count: a lab set may name its own
    sources anything.
    """
    if axis != "wavelength" or "source_id" not in table.columns:
        return None
    flag = (pl.col("_set_id") == "optical") & pl.col("source_id").is_in(list(LISTED_SOURCES))
    return table.select(flag.fill_null(False)).to_series().to_numpy()


@dataclass
class ReferenceIndex:
    """Reference lines of one or more sets, sorted by position.

    Use :meth:`from_sets` to build one. Arrays are aligned (one entry per line).

    Attributes
    ----------
    axis : {"wavelength", "energy"}
        Position axis.
    medium : {"air", "vacuum"} or None
        Medium of ``position`` for a wavelength axis.
    position : numpy.ndarray
        Line positions (nm in ``medium``, or eV), ascending.
    wavelength_vac_nm : numpy.ndarray
        Vacuum wavelength (NaN for X-ray lines); used by the physics.
    species : numpy.ndarray
        Integer species code per line; ``species_names[code]`` is the label.
    subshell_weight : numpy.ndarray
        X-ray lines: factor on ``rel_intensity`` giving the line's detected
        yield on one scale per element (:func:`workbench.xray.lines.line_weights`); 1 for
        optical lines.
    listed : numpy.ndarray of bool or None
        Lines from a source that lists only lines known to show
        (:data:`LISTED_SOURCES`): where such a line has no strength, the
        chance test still counts its window (:mod:`workbench.matching.evidence`).
        ``None``: no such line.
    """

    axis: Literal["wavelength", "energy"]
    medium: str | None
    position: np.ndarray
    wavelength_vac_nm: np.ndarray
    species: np.ndarray
    species_names: list[str]
    species_element: list[str]
    species_ion: list[int | None]
    species_family: list[str | None]
    g_upper: np.ndarray
    A_ki_per_s: np.ndarray
    E_upper_eV: np.ndarray
    E_lower_eV: np.ndarray
    log_gf: np.ndarray
    rel_intensity: np.ndarray
    subshell_weight: np.ndarray
    line_id: np.ndarray
    transition: np.ndarray
    set_id: np.ndarray
    provenance: list[dict[str, object]]
    listed: np.ndarray | None = None

    @classmethod
    def from_sets(
        cls,
        sets: Sequence[Any],
        axis: Literal["wavelength", "energy"],
        medium: str | None,
        elements: Sequence[str] | None = None,
        position_range: tuple[float, float] | None = None,
        max_ion: int | None = 2,
        exclude: Sequence[str] = (),
    ) -> ReferenceIndex:
        """Build the index from loaded reference sets.

        Parameters
        ----------
        sets : sequence of ReferenceSet
            Loaded sets (``workbench.refdata.load_set``); their ``axis`` must
            agree with ``axis``.
        axis : {"wavelength", "energy"}
            Axis of the observed data.
        medium : {"air", "vacuum"} or None
            For a wavelength axis, which reference column to match against.
            Air wavelengths are undefined below 200 nm (vacuum by convention),
            so the vacuum value is used there.
        elements : sequence of str, optional
            Restrict to these element symbols.
        position_range : (float, float), optional
            Keep only lines inside this range (axis unit).
        exclude : sequence of str
            Element symbols to leave out.
        max_ion : int or None
            Highest ion stage kept (2: neutral and singly ionised, the stages
            that dominate LIBS, spark and ICP spectra); ``None`` keeps all.

        Returns
        -------
        ReferenceIndex
        """
        if not sets:
            raise ValueRangeError("no reference set was chosen", "choose at least one set")
        frames: list[pl.DataFrame] = []
        provenance: list[dict[str, object]] = []
        for s in sets:
            if s.axis != axis:
                raise ValueRangeError(
                    f"reference set {s.id!r} is on a {s.axis} axis but the data are on a "
                    f"{axis} axis",
                    "choose sets of the same kind as the data (optical for wavelengths, "
                    "xray for energies)",
                )
            t = s.table
            if elements:
                t = t.filter(pl.col("element").is_in(list(elements)))
            if exclude:
                t = t.filter(~pl.col("element").is_in(list(exclude)))
            if max_ion is not None and "ion" in t.columns:
                t = t.filter(pl.col("ion").is_null() | (pl.col("ion") <= max_ion))
            frames.append(
                t.with_columns(
                    pl.lit(s.id).alias("_set_id"), pl.lit(len(frames)).alias("_set_order")
                )
            )
            provenance.append(s.provenance())
            if axis == "energy" and "initial_level" in t.columns and t.height:
                # X-ray: minor lines the table lacks, computed by xraylib
                # (workbench.xray.lines), so that their peaks are explained
                # by their own element; the result names them.
                from workbench.xray.lines import supplement_lines

                extra, prov = supplement_lines(t)
                if extra.height:
                    frames.append(
                        extra.with_columns(
                            pl.lit(prov["id"]).alias("_set_id"),
                            pl.lit(len(frames)).alias("_set_order"),
                        )
                    )
                    provenance.append(prov)
        table = pl.concat(frames, how="diagonal_relaxed")
        if axis == "wavelength":
            if medium == "air":
                pos = pl.coalesce(pl.col("wavelength_air_nm"), pl.col("wavelength_vac_nm"))
            elif medium == "vacuum":
                pos = pl.col("wavelength_vac_nm")
            else:
                raise ValueRangeError(f"unknown medium {medium!r}", "use 'air' or 'vacuum'")
        else:
            pos = pl.col("energy_eV")
        table = table.with_columns(pos.cast(pl.Float64).alias("_pos")).filter(
            pl.col("_pos").is_not_null() & pl.col("_pos").is_finite()
        )
        if position_range is not None:
            lo, hi = position_range
            table = table.filter((pl.col("_pos") >= lo) & (pl.col("_pos") <= hi))
        # Family for X-ray lines: "K", "L", "M" from the initial level (e.g. "L3").
        if "initial_level" in table.columns and axis == "energy":
            table = table.with_columns(
                pl.col("initial_level").cast(pl.Utf8).str.slice(0, 1).alias("_family")
            )
        else:
            table = table.with_columns(pl.lit(None, dtype=pl.Utf8).alias("_family"))
        if "ion" not in table.columns:
            table = table.with_columns(pl.lit(None, dtype=pl.Int32).alias("ion"))
        table = table.with_columns(
            pl.when(pl.col("_family").is_not_null())
            .then(pl.col("element") + " " + pl.col("_family"))
            .otherwise(pl.col("element") + "|" + pl.col("ion").cast(pl.Utf8))
            .alias("_species_key")
        )
        # Same line in two sets (e.g. H in optical and hydrogen_like): keep the
        # earlier set's. Lines within one set are never dropped here (X-ray
        # K-M2 and K-M3 share an energy and are both real).
        table = table.with_columns(pl.col("_pos").round(5).alias("_pos_key"))
        table = table.filter(
            pl.col("_set_order") == pl.col("_set_order").min().over(["_species_key", "_pos_key"])
        )
        # Isotope and hyperfine components listed separately with the same
        # atomic data (Morton lists 24/25/26Mg II 279.55 each with the full A)
        # would count one line several times: collapse same-species rows closer
        # than 0.002 nm (or 0.5 eV) with equal g_upper, A and E_upper.
        # (Wavelength axis only: X-ray lines at one energy, e.g. Ti K-M2 and
        # K-M3, are distinct transitions whose intensities both count.)
        near = 0.002 if axis == "wavelength" else 0.0
        table = table.sort(["_species_key", "_pos", "line_id"])
        same_prev = (pl.col("_species_key") == pl.col("_species_key").shift(1)) & (
            (pl.col("_pos") - pl.col("_pos").shift(1)) < near
        )
        for c in ("g_upper", "A_ki_per_s", "E_upper_eV"):
            if c in table.columns:
                same_prev = same_prev & (
                    (pl.col(c).is_null() & pl.col(c).shift(1).is_null())
                    | ((pl.col(c) - pl.col(c).shift(1)).abs() <= 1e-3 * pl.col(c).abs())
                )
        table = table.filter(~same_prev.fill_null(False))
        table = table.sort(["_pos", "_species_key", "line_id"])
        keys = table["_species_key"].to_list()
        names_sorted = sorted(set(keys))
        code_of = {k: i for i, k in enumerate(names_sorted)}
        species = np.fromiter((code_of[k] for k in keys), dtype=np.int32, count=len(keys))
        first = table.unique(subset=["_species_key"], keep="first").sort("_species_key")
        el = first["element"].to_list()
        ions = first["ion"].to_list()
        fams = first["_family"].to_list()
        labels = [
            species_label(e, None if f else i, f) for e, i, f in zip(el, ions, fams, strict=True)
        ]
        initial = _col(table, "initial_level", pl.Utf8)
        rel = _col(table, "rel_intensity")
        if axis == "energy":
            from workbench.xray.lines import line_weights

            weight = line_weights(
                np.array(table["element"].to_list(), dtype=object),
                _col(table, "transition", pl.Utf8),
                initial,
                rel,
            )
        else:
            weight = np.ones(table.height)
        return cls(
            axis=axis,
            medium=medium if axis == "wavelength" else None,
            position=table["_pos"].to_numpy().astype(np.float64),
            wavelength_vac_nm=_col(table, "wavelength_vac_nm"),
            species=species,
            species_names=labels,
            species_element=el,
            species_ion=[
                None if f else (int(i) if i is not None else None)
                for i, f in zip(ions, fams, strict=True)
            ],
            species_family=fams,
            g_upper=_col(table, "g_upper"),
            A_ki_per_s=_col(table, "A_ki_per_s"),
            E_upper_eV=_col(table, "E_upper_eV"),
            E_lower_eV=_col(table, "E_lower_eV"),
            log_gf=_col(table, "log_gf"),
            rel_intensity=rel,
            subshell_weight=weight,
            line_id=np.array(table["line_id"].cast(pl.Utf8).to_list(), dtype=object),
            transition=_col(table, "transition", pl.Utf8),
            set_id=np.array(table["_set_id"].to_list(), dtype=object),
            provenance=provenance,
            listed=_listed(table, axis),
        )

    @property
    def n_lines(self) -> int:
        """Number of reference lines."""
        return int(self.position.size)

    @property
    def n_species(self) -> int:
        """Number of species."""
        return len(self.species_names)
