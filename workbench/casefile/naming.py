"""Naming rules for case and item numbers: one documented pattern, one clear refusal.

A case number or item number is an identifier that is printed on sheets,
labels and file names and typed into search boxes, so it is kept to
characters that mean the same thing everywhere:

* letters A–Z / a–z and digits 0–9,
* in groups joined by single separators ``-``, ``.`` or ``_``
  (no separator at the start or end, none doubled),
* at most :data:`CASE_NUMBER_MAX` (case) or :data:`ITEM_NUMBER_MAX` (item)
  characters.

Examples that pass: ``NRFL-2026-0417``, ``TEST_2026.001``; items ``1``,
``1a``, ``2.3``, ``4-B``. Refused: ``A/B`` (a path separator), ``<b>X</b>``
(markup), ``case 12`` (a space), ``-12`` (leading separator). Leading and
trailing blanks are removed before the check. (A common laboratory
convention; no source.)

The store applies the rule where a number is created
(:meth:`~workbench.casefile.store.CaseStore.create_case`,
:meth:`~workbench.casefile.store.CaseStore.add_item`), so the CLI and the app
refuse the same names with the same message. It is never applied when a
number is read or a case is imported from a bundle: cases stored before the
rule keep their numbers.
"""

from __future__ import annotations

import re

from workbench.errors import InputError

__all__ = [
    "CASE_NUMBER_MAX",
    "ITEM_NUMBER_MAX",
    "NUMBER_PATTERN",
    "check_case_number",
    "check_item_number",
]

#: The pattern both numbers follow (groups of letters/digits joined by - . or _).
NUMBER_PATTERN: re.Pattern[str] = re.compile(r"[A-Za-z0-9]+(?:[-._][A-Za-z0-9]+)*")

#: Longest case number accepted.
CASE_NUMBER_MAX: int = 64

#: Longest item number accepted.
ITEM_NUMBER_MAX: int = 32

_RULE = "letters and digits in groups joined by single '-', '.' or '_' (e.g. {example})"


def _check(value: object, what: str, max_len: int, example: str) -> str:
    if value is not None and not isinstance(value, str):
        raise InputError(
            f"{what} must be text, got {type(value).__name__}", f"give it as text, e.g. {example}"
        )
    if value is None or not value.strip():
        raise InputError(f"{what} is empty", f"type a {what} such as {example}")
    text = value.strip()
    if len(text) > max_len:
        raise InputError(
            f"{what} is {len(text)} characters long", f"keep it to {max_len} characters or fewer"
        )
    if NUMBER_PATTERN.fullmatch(text) is None:
        bad = sorted({ch for ch in text if not (ch.isascii() and ch.isalnum()) and ch not in "-._"})
        shown = ", ".join(repr(ch) for ch in bad) if bad else "a misplaced separator"
        raise InputError(
            f"{what} {text!r} contains {shown}",
            "use only " + _RULE.format(example=example),
        )
    return text


def check_case_number(value: object) -> str:
    """Return the case number stripped of blanks, or raise one clear InputError.

    Parameters
    ----------
    value : object
        What the user typed.

    Returns
    -------
    str

    Raises
    ------
    InputError
        When it is empty, too long or breaks the pattern (the message names the
        offending characters and the rule).
    """
    return _check(value, "case number", CASE_NUMBER_MAX, "NRFL-2026-0417")


def check_item_number(value: object) -> str:
    """Return the item number stripped of blanks, or raise one clear InputError (see module)."""
    return _check(value, "item number", ITEM_NUMBER_MAX, "1a or 2.3")
