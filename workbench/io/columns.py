"""Column mapping by header name, units and medium read from headers.

A header such as ``"Wavelength (nm)"``, ``"lambda [A]"``, ``"Energy/keV"``,
``"wavenumber cm-1"`` or ``"λ/Å"`` is split into a *name* and a *unit*. The
name is matched to a *role* (position, intensity, area, fwhm, snr) by fuzzy
string matching (:mod:`rapidfuzz`) against a list of common headers; each
decision is reported with its score so the user can see what was mapped.

Values are checked against their stated unit: 3000–9000 under an ``nm``
header look like ångström, 5–40 under ``eV`` look like XRF keV, and so on.
Such mismatches are refused with :class:`~workbench.errors.UnitError` that
says how to state the unit.
"""

from __future__ import annotations

import re
from collections.abc import Collection
from dataclasses import dataclass

import numpy as np

from workbench.errors import ColumnMappingError, UnitError
from workbench.physics.units import ENERGY_UNITS, normalise_unit

__all__ = [
    "ROLES",
    "ColumnChoice",
    "HeaderInfo",
    "axis_for",
    "check_unit_plausibility",
    "is_counter_header",
    "map_columns",
    "medium_from_text",
    "parse_column_choices",
    "parse_header",
]

#: Roles a column can play in a peak list.
ROLES: tuple[str, ...] = ("position", "intensity", "area", "fwhm", "snr")

# Synonyms per role. "ignore" collects names that must NOT become a position
# (a channel number is not a position unit).
_SYNONYMS: dict[str, tuple[str, ...]] = {
    "position": (
        "wavelength",
        "wave length",
        "wave",
        "lambda",
        "λ",
        "wl",
        "position",
        "peak position",
        "centre",
        "center",
        "centroid",
        "peak",
        "energy",
        "e",
        "wavenumber",
        "wave number",
        "x",
        "line",
    ),
    "intensity": (
        "intensity",
        "counts",
        "net counts",
        "height",
        "peak height",
        "amplitude",
        "flux",
        "signal",
        "i",
        "int",
        "y",
        "relative intensity",
        "rel intensity",
        "rel int",
        "rel. int.",
        "rel. int",
        "relative int",
        "relative int.",
    ),
    "area": ("area", "peak area", "integral", "integrated intensity"),
    "fwhm": ("fwhm", "width", "peak width", "fwhm width"),
    "snr": (
        "snr",
        "s/n",
        "signal/noise",
        "signal to noise",
        "signal-to-noise",
        "sn ratio",
        "s/n ratio",
    ),
    "ignore": ("channel", "chan", "ch", "index", "no", "number", "id", "#", "pixel", "bin"),
}

# Words that, appearing as one token of a longer header, hint weakly at a role.
_WEAK_TOKENS = {"peak", "line", "x", "y", "i", "e", "position", "signal"}
# Token words that identify a role strongly wherever they appear.
_STRONG_TOKENS: dict[str, str] = {
    "wavelength": "position",
    "lambda": "position",
    "λ": "position",
    "energy": "position",
    "wavenumber": "position",
    "intensity": "intensity",
    "counts": "intensity",
    "height": "intensity",
    "amplitude": "intensity",
    "area": "area",
    "integral": "area",
    "fwhm": "fwhm",
    "width": "fwhm",
    "snr": "snr",
    "channel": "ignore",
    "pixel": "ignore",
}

_CUTOFF = 80.0

_MEDIUM_WORDS = re.compile(r"(?<![a-z])(air|vac|vacuum|vacuo)(?![a-z])", re.IGNORECASE)


@dataclass(frozen=True)
class HeaderInfo:
    """A header cell split into its parts.

    Attributes
    ----------
    text : str
        The header as written.
    name : str
        The normalised name (lower case, no unit, no medium word).
    unit : str or None
        The unit text found in the header, as written (``"nm"``, ``"Å"``).
    medium : {"air", "vacuum"} or None
        Medium stated in the header.
    """

    text: str
    name: str
    unit: str | None
    medium: str | None


@dataclass(frozen=True)
class ColumnChoice:
    """One column assigned to a role.

    Attributes
    ----------
    index : int
        0-based column index.
    header : HeaderInfo
        The parsed header.
    role : str
        Role given to the column.
    score : float
        Fuzzy-match score (0–100); 100 for an exact synonym or explicit choice.
    """

    index: int
    header: HeaderInfo
    role: str
    score: float


def _try_unit(text: str) -> str | None:
    t = text.strip().strip("()[]{}").strip()
    if not t:
        return None
    try:
        normalise_unit(t)
    except UnitError:
        return None
    return t


def _strip_medium(name: str) -> tuple[str, str | None]:
    words = {m.group(1).lower() for m in _MEDIUM_WORDS.finditer(name)}
    medium = None
    if words & {"vac", "vacuum", "vacuo"}:
        medium = "vacuum"
    if "air" in words:
        medium = "ambiguous" if medium else "air"
    cleaned = _MEDIUM_WORDS.sub(" ", name).rstrip()
    # A trailing word "in" ("wavelength in"), tested without a regex anchored at
    # the end, which would rescan the tail from every earlier "in".
    if cleaned.endswith("in") and (len(cleaned) == 2 or not cleaned[-3].isalnum()):
        if len(cleaned) == 2 or cleaned[-3] != "_":
            cleaned = cleaned[:-2] + " "
    return cleaned, medium


def _trailing_bracket(body: str) -> tuple[int, str] | None:
    r"""Where a final bracketed part starts and what it holds: ``"a (nm)"`` -> (2, "nm").

    The leftmost opening bracket after the last inner closing bracket, as the
    pattern ``[([{]([^)\]}]*)[)\]}]\s*$`` would find it, but in linear time.
    """
    s = body.rstrip()
    if not s or s[-1] not in ")]}":
        return None
    end = len(s) - 1
    after = max(s.rfind(c, 0, end) for c in ")]}") + 1
    openers = [i for i in (s.find(c, after, end) for c in "([{") if i >= 0]
    if not openers:
        return None
    start = min(openers)
    return start, s[start + 1 : end]


def parse_header(text: str) -> HeaderInfo:
    """Split a header cell into name, unit and medium.

    Parameters
    ----------
    text : str
        The header as written, e.g. ``"Wavelength air (nm)"`` or ``"Energy/keV"``.

    Returns
    -------
    HeaderInfo
        The parts; ``unit`` is ``None`` when no unit is recognisable and
        ``medium`` is ``"ambiguous"`` when both air and vacuum are named.
    """
    raw = text.strip().strip('"').strip("'").strip()
    unit: str | None = None
    body = raw
    low = raw.lower().replace(" ", "")
    if low in ("s/n", "s/nratio"):
        return HeaderInfo(raw, "s/n", None, None)
    m = _trailing_bracket(body)
    if m:
        start, inside = m
        parts = [p.strip() for p in re.split(r"[,;]", inside) if p.strip()]
        media = [p for p in parts if _MEDIUM_WORDS.fullmatch(p)]
        rest = [p for p in parts if not _MEDIUM_WORDS.fullmatch(p)]
        body = body[:start] + " " + " ".join(media)
        unit = " ".join(rest) or None
    elif "/" in body:
        head, _, tail = body.rpartition("/")
        if _try_unit(tail) or tail.strip().lower() in {"a.u.", "au", "counts", "cps"}:
            body, unit = head, tail.strip()
    if unit is None and not m:
        # "wavenumber cm-1", "wavelength in nm", "energy_keV", "wl_nm"
        words = re.split(r"[\s_]+", body.strip())
        if len(words) >= 2 and _try_unit(words[-1]):
            unit = words[-1]
            body = " ".join(w for w in words[:-1] if w.lower() != "in")
    name, medium = _strip_medium(body)
    name = re.sub(r"[_\-]+", " ", name.lower())
    name = re.sub(r"\s+", " ", name).strip(" :=")
    if name == "wavenumber" and unit is None:
        unit = "cm-1"
    return HeaderInfo(raw, name, unit, medium)


def _role_score(name: str) -> tuple[str, float]:
    if not name:
        return "none", 0.0
    # Exact synonyms first (the loop below would return the same on reaching
    # them): common headers then never load rapidfuzz.
    for role, synonyms in _SYNONYMS.items():
        if name in synonyms:
            return role, 100.0
    from rapidfuzz import fuzz, process

    best_role, best = "none", 0.0
    for role, synonyms in _SYNONYMS.items():
        if name in synonyms:
            return role, 100.0
        # One- and two-letter synonyms only ever match exactly.
        long_syn = [s for s in synonyms if len(s) > 2]
        if len(name) > 2 and long_syn:
            hit = process.extractOne(name, long_syn, scorer=fuzz.ratio, score_cutoff=_CUTOFF)
            if hit is not None and hit[1] > best:
                best_role, best = role, float(hit[1])
    tokens = re.split(r"[\s/]+", name)
    if len(tokens) > 1:
        for tok in tokens:
            role = _STRONG_TOKENS.get(tok)
            if role is not None and 95.0 > best:
                best_role, best = role, 95.0
        if best < _CUTOFF:
            for tok in tokens:
                if tok in _WEAK_TOKENS:
                    for role, synonyms in _SYNONYMS.items():
                        if tok in synonyms and role != "ignore":
                            return role, 70.0
    return best_role, best


def is_counter_header(header: str) -> bool:
    """Whether a header names channel or index numbers (never positions or heights)."""
    role, score = _role_score(parse_header(header).name)
    return role == "ignore" and score >= _CUTOFF


def map_columns(
    headers: list[str],
    *,
    where: str,
    columns: dict[str, str] | None = None,
    need_intensity: bool = False,
    label_columns: Collection[int] = (),
) -> dict[str, ColumnChoice]:
    """Assign columns to roles by their headers.

    Parameters
    ----------
    headers : list of str
        Header cells in order.
    where : str
        File name for messages.
    columns : dict, optional
        Explicit choices ``{role: header}``; they win over fuzzy matching.
    need_intensity : bool
        Refuse when no intensity column is found.
    label_columns : collection of int
        Columns holding text (names such as ``Ca II K``;
        :attr:`workbench.io.delimited.Table.label_columns`). Where one ties
        with a column of numbers for a role (a column of names headed
        ``Line`` beside ``Wavelength (nm)``), the numbers take the role;
        alone it keeps it, and reading its cells then fails naming the row.

    Returns
    -------
    dict
        ``{role: ColumnChoice}`` for every role found; ``"position"`` is always present.

    Raises
    ------
    ColumnMappingError
        If no position column is found, two columns tie for one role, or an
        explicit choice names a missing header.
    """
    parsed = [parse_header(h) for h in headers]
    chosen: dict[str, ColumnChoice] = {}
    used: set[int] = set()
    for role, header in (columns or {}).items():
        if role not in ROLES:
            raise ColumnMappingError(
                f"unknown column role {role!r}", f"use one of: {', '.join(ROLES)}"
            )
        idx = [i for i, h in enumerate(headers) if h.strip() == header.strip()]
        if not idx:
            raise ColumnMappingError(
                f"{where}: no column named {header!r} (columns are {headers})",
                "give a header exactly as it appears in the file",
            )
        chosen[role] = ColumnChoice(idx[0], parsed[idx[0]], role, 100.0)
        used.add(idx[0])
    scored = []
    for i, h in enumerate(parsed):
        if i in used:
            continue
        role, score = _role_score(h.name)
        # A header that carries a spectral unit is a position or a width.
        if role in ("none", "intensity") and score < _CUTOFF and h.unit and _is_axis_unit(h.unit):
            role, score = "position", 75.0
        scored.append((score, -i, i, role))
    scored.sort(reverse=True)
    ignored: list[str] = []
    for score, _, i, role in scored:
        if role == "ignore" and score >= _CUTOFF:
            ignored.append(headers[i])
            continue
        if role not in ROLES or score < 70.0:
            continue
        if role in chosen:
            other = chosen[role]
            if other.score == score and other.index not in used:
                # A column of names ties with a column of numbers: the numbers.
                if i in label_columns and other.index not in label_columns:
                    continue
                if other.index in label_columns and i not in label_columns:
                    chosen[role] = ColumnChoice(i, parsed[i], role, float(score))
                    continue
                raise ColumnMappingError(
                    f"{where}: columns {headers[other.index]!r} and {headers[i]!r} "
                    f"both look like the {role} column",
                    f"rename one of them, or choose one: --columns {role}=HEADER on the "
                    f"command line, 'Columns by header' in the app, or "
                    f"columns={{'{role}': HEADER}} in Python",
                )
            continue
        chosen[role] = ColumnChoice(i, parsed[i], role, float(score))
    if "position" not in chosen:
        hint = ""
        if ignored:
            hint = (
                f" ({', '.join(repr(x) for x in ignored)} holds channel or index numbers, "
                "which are not positions: calibrate to wavelength or energy first)"
            )
        raise ColumnMappingError(
            f"{where}: no position column found among {headers}{hint}",
            "name the position column e.g. 'wavelength (nm)' or 'energy (keV)'",
        )
    if need_intensity and "intensity" not in chosen:
        raise ColumnMappingError(
            f"{where}: no intensity column found among {headers}",
            "name the intensity column e.g. 'intensity' or 'counts'",
        )
    return chosen


def _is_axis_unit(unit: str) -> bool:
    try:
        u = normalise_unit(unit)
    except UnitError:
        return False
    return u in ("nm", "angstrom", "um", "pm", "cm-1", "eV", "keV", "meV")


def axis_for(unit: str, name: str = "") -> str:
    """Return ``"energy"`` or ``"wavelength"`` for a canonical unit name."""
    u = normalise_unit(unit)
    axis = "energy" if u in ENERGY_UNITS else "wavelength"
    if name.startswith("energy") and axis == "wavelength":
        raise UnitError(
            f"column {name!r} is named as an energy but its unit is {unit!r}",
            "use an energy unit (eV, keV) or rename the column to 'wavelength'",
        )
    if name.startswith(("wavelength", "lambda", "λ", "wavenumber")) and axis == "energy":
        raise UnitError(
            f"column {name!r} is named as a wavelength but its unit is {unit!r}",
            "use a wavelength unit (nm, Å, µm, cm-1) or rename the column to 'energy'",
        )
    return axis


def medium_from_text(text: str) -> str | None:
    """Find a medium stated in free text (a comment line): ``"air"``, ``"vacuum"`` or None.

    Returns ``"ambiguous"`` when both are named.
    """
    return _strip_medium(text)[1]


_UNIT_LABEL = {"nm": "nm", "angstrom": "Å", "um": "µm", "eV": "eV", "keV": "keV"}


def check_unit_plausibility(
    values: np.ndarray,
    unit: str,
    where: str,
    *,
    stated: bool = False,
    notes: list[str] | None = None,
) -> None:
    """Refuse values that disagree with the unit their file gives them.

    A unit the analyst states (``--unit``, the app's unit choice, ``unit=``)
    is taken as stated: near-infrared work in nm (1950–2400 nm, the K band)
    looks like Å by its numbers alone, and only the analyst knows which it
    is. Then the doubt is recorded as a note instead.

    Parameters
    ----------
    values : numpy.ndarray
        Positions as read (in ``unit``), finite and positive.
    unit : str
        Their unit (any alias).
    where : str
        What the values are (file and column) for the message.
    stated : bool
        True when the analyst stated ``unit`` (not read from the file).
    notes : list of str, optional
        Receives the note when ``stated`` and the values look implausible.

    Raises
    ------
    UnitError
        With a remedy naming the unit the values probably are in, and how to
        keep the unit as it is; not when ``stated``.
    """
    if values.size == 0:
        return
    u = normalise_unit(unit)
    lo, hi = float(values.min()), float(values.max())
    guess = None
    # Ranges: optical emission/absorption work is 100–1100 nm; XRF is 1–150 keV
    # (common practice, no source). The median (a copy and a selection of every
    # value) is taken only when the range leaves the question open.
    if u == "nm":
        if lo >= 1000.0 and hi <= 12000.0 and float(np.median(values)) > 2000.0:
            guess = "angstrom"
        elif hi <= 2.5:
            guess = "um"
    elif u == "angstrom":
        if lo >= 100.0 and hi <= 1100.0:
            guess = "nm"
    elif u == "um":
        if lo >= 100.0 and hi <= 1100.0:
            guess = "nm"
        elif lo >= 1000.0 and hi <= 12000.0:
            guess = "angstrom"
    elif u == "eV":
        if hi > 15.0 and hi <= 150.0:
            guess = "keV"
    elif u == "keV" and lo >= 100.0:
        guess = "eV"
    if guess is None:
        return
    label = _UNIT_LABEL.get(guess, guess)
    if stated:
        if notes is not None:
            notes.append(
                f"{where}: values {lo:g}–{hi:g} would look like {label}; "
                f"read in {_UNIT_LABEL.get(u, u)} as stated"
            )
        return
    quantity = "energy" if guess in ENERGY_UNITS else "wavelength"
    own = _UNIT_LABEL.get(u, u)
    raise UnitError(
        f"{where}: values {lo:g}–{hi:g} are implausible in {unit!r} and look like {label}",
        f"rename the header to '{quantity} ({label})' or pass --unit {guess}; if they "
        f"really are in {own}, state it: --unit {u} on the command line, 'Position unit' "
        f"{own} in the app, or unit='{u}' in Python (a unit you state is taken as stated)",
    )


def parse_column_choices(text: str) -> dict[str, str]:
    """``"ROLE=HEADER,ROLE=HEADER"`` → ``{role: header}``: the column choices of CLI and app.

    Roles are checked here (one of :data:`ROLES`); headers are checked by the
    reader against the file's own (:func:`map_columns`).

    Raises
    ------
    ColumnMappingError
        For a part that is not ``ROLE=HEADER`` or an unknown role.
    """
    out: dict[str, str] = {}
    for part in text.split(","):
        role, sep, header = part.partition("=")
        role = role.strip().lower()
        if not sep or not role or not header.strip():
            raise ColumnMappingError(
                f"{part.strip()!r} is not ROLE=HEADER",
                "write e.g. position=wavelength,intensity=global",
            )
        if role not in ROLES:
            raise ColumnMappingError(
                f"unknown column role {role!r}", f"use one of: {', '.join(ROLES)}"
            )
        out[role] = header.strip()
    return out
