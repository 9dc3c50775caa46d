"""Chemical element symbols and atomic numbers (IUPAC, Z = 1 … 118)."""

from __future__ import annotations

from workbench.errors import ValueRangeError

__all__ = ["SYMBOLS", "atomic_number", "is_element_symbol", "symbol"]

#: Element symbols indexed by Z − 1 (IUPAC periodic table; common knowledge).
SYMBOLS: tuple[str, ...] = tuple(
    (
        "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn "
        "Ga Ge As Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce "
        "Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn "
        "Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl "
        "Mc Lv Ts Og"
    ).split()
)

_Z: dict[str, int] = {s: i + 1 for i, s in enumerate(SYMBOLS)}


def is_element_symbol(text: str) -> bool:
    """Return True if ``text`` is an element symbol exactly as IUPAC spells it."""
    return text in _Z


def atomic_number(element: str) -> int:
    """Return the atomic number of an element symbol.

    Parameters
    ----------
    element : str
        Symbol such as ``"Fe"``; case is normalised (``"fe"`` and ``"FE"`` work).

    Returns
    -------
    int
        Atomic number Z.

    Raises
    ------
    ValueRangeError
        If the symbol is not an element.
    """
    key = element.strip()
    key = key[:1].upper() + key[1:].lower()
    if key not in _Z:
        raise ValueRangeError(
            f"{element!r} is not a chemical element symbol",
            "use the IUPAC symbol, e.g. 'Fe', 'Pb', 'Na'",
        )
    return _Z[key]


def symbol(Z: int) -> str:
    """Return the element symbol for atomic number ``Z`` (1 … 118)."""
    if not 1 <= int(Z) <= len(SYMBOLS):
        raise ValueRangeError(f"atomic number {Z} is outside 1..118", "give Z between 1 and 118")
    return SYMBOLS[int(Z) - 1]
