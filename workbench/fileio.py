"""Writing files so that nothing is ever half-written.

One helper serves every face that writes a single output file (JSON results,
CSV tables, collection indexes): the bytes go to a temporary file in the same
folder, are flushed and ``fsync``-ed, then moved into place with
:func:`os.replace`, which is atomic on POSIX and Windows. A failure removes the
temporary file and leaves any previous version untouched.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from workbench.errors import InputError

__all__ = ["write_bytes_atomic"]


def write_bytes_atomic(
    path: str | os.PathLike[str], data: bytes, *, make_parents: bool = False
) -> Path:
    """Write ``data`` to ``path`` atomically.

    Parameters
    ----------
    path : str or path-like
        Target file; replaced if it exists.
    data : bytes
        Content.
    make_parents : bool
        Create missing parent folders; otherwise a missing folder is an error.

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    InputError
        When the folder does not exist (and ``make_parents`` is false) or the
        file cannot be written; nothing is left behind.
    """
    target = Path(path)
    parent = target.parent if str(target.parent) else Path(".")
    if make_parents:
        parent.mkdir(parents=True, exist_ok=True)
    elif not parent.is_dir():
        raise InputError(
            f"folder {str(parent)!r} does not exist", "create it first or choose another path"
        )
    try:
        fd, tmp = tempfile.mkstemp(dir=parent, prefix=f".{target.name}.", suffix=".tmp")
    except OSError as exc:
        raise InputError(
            f"cannot write into {str(parent)!r}: {exc.strerror}", "choose a writable folder"
        ) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except OSError as exc:
        Path(tmp).unlink(missing_ok=True)
        raise InputError(
            f"cannot write {str(target)!r}: {exc.strerror}", "choose a writable path"
        ) from None
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target
