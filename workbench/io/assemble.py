"""What every reader's result shares: its provenance record and, for JCAMP-DX, the block.

:func:`input_source` builds the :class:`~workbench.datamodel.InputSource`
(name, SHA-256, size, format and the notes saying what the reader decided);
:func:`pick_block` chooses a JCAMP-DX data block and :func:`jcamp_context`
resolves its unit, axis and medium.
"""

from __future__ import annotations

from workbench.datamodel import InputSource
from workbench.errors import (
    InputError,
)
from workbench.io.columns import (
    axis_for,
    medium_from_text,
)
from workbench.io.jcamp import JcampBlock, jcamp_unit
from workbench.io.resolve import (
    comment_media,
    resolve_medium,
)
from workbench.io.source import RawInput
from workbench.physics.units import normalise_unit

__all__ = ["input_source", "jcamp_context", "pick_block"]


def input_source(raw: RawInput, kind: str, fmt: str, notes: list[str]) -> InputSource:
    """The provenance record of a reader's result.

    Parameters
    ----------
    raw : RawInput
        The input's bytes, name, SHA-256 and size.
    kind : {"peak_list", "spectrum"}
        What was read.
    fmt : str
        Format name (``"delimited"``, ``"jcamp-dx"``, ``"parquet"``, ``"fits"``,
        ``"json"``, ``"emsa-mas"``).
    notes : list of str
        What the reader decided (columns, units, medium, block, order).

    Returns
    -------
    InputSource
        Name, SHA-256, size, kind, format and notes.
    """
    return InputSource(
        name=raw.name,
        sha256=raw.sha256,
        size_bytes=raw.size_bytes,
        kind=kind,  # type: ignore[arg-type]
        format=fmt,
        notes=tuple(notes),
    )


def pick_block(blocks: list[JcampBlock], block: int | str | None, name: str, notes: list[str]):
    """Choose a JCAMP-DX data block by index or title (default the first, with a note).

    Parameters
    ----------
    blocks : list of JcampBlock
        The file's data blocks.
    block : int, str or None
        0-based index or title (case-insensitive); None for the first.
    name : str
        File name for messages.
    notes : list of str
        Receives a note saying which block was used.

    Returns
    -------
    JcampBlock
        The chosen block.

    Raises
    ------
    InputError
        If the index or title names no block.
    """
    if block is None:
        chosen = blocks[0]
        if len(blocks) > 1:
            titles = ", ".join(f"{b.index}: {b.title!r}" for b in blocks)
            notes.append(
                f"file has {len(blocks)} data blocks ({titles}); used the first, "
                f"{chosen.title!r} (choose with block=)"
            )
        return chosen
    if isinstance(block, int):
        if not 0 <= block < len(blocks):
            raise InputError(
                f"{name} has {len(blocks)} data block(s); block {block} does not exist",
                f"give a block index from 0 to {len(blocks) - 1} or a block title",
            )
        chosen = blocks[block]
    else:
        hits = [b for b in blocks if b.title.strip().lower() == block.strip().lower()]
        if not hits:
            raise InputError(
                f"{name} has no block titled {block!r}",
                f"choose one of: {', '.join(repr(b.title) for b in blocks)}",
            )
        chosen = hits[0]
    notes.append(f"used data block {chosen.index} ({chosen.title!r})")
    return chosen


def jcamp_context(b: JcampBlock, unit: str | None, medium: str | None, name: str, notes):
    """Unit, axis and medium of a JCAMP-DX block.

    Parameters
    ----------
    b : JcampBlock
        The block.
    unit, medium : str or None
        Explicit choices, which override ``##XUNITS`` and any stated medium.
    name : str
        File name for messages.
    notes : list of str
        Receives notes on what was decided.

    Returns
    -------
    tuple
        ``(where, unit, axis, medium)``: a label for messages, the canonical
        unit name, ``"wavelength"`` or ``"energy"``, and the medium.
    """
    where = f"{name} block {b.index} ({b.title!r})"
    if unit is not None:
        u = normalise_unit(unit)
        if b.xunits:
            notes.append(f"unit {u} given explicitly overrides ##XUNITS={b.xunits}")
    else:
        u = normalise_unit(jcamp_unit(b.xunits, where))
    axis = axis_for(u)
    stated: list[tuple[str | None, str]] = [
        (medium_from_text(v), f"##{k}={v}") for k, v in b.labels.items() if "MEDIUM" in k
    ]
    stated += comment_media(b.comments)
    med = resolve_medium(axis, u, medium, stated, name, notes)
    return where, u, axis, med
