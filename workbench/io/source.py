"""Getting the user's bytes: paths, raw bytes or pasted text, with a size limit.

The original bytes are kept exactly as received; their SHA-256 and length go
into :class:`~workbench.datamodel.InputSource`. Decoding to text always works
on a copy (:func:`decode_text`).
"""

from __future__ import annotations

import hashlib
import os
import threading
from dataclasses import dataclass

from workbench.errors import FileFormatError

__all__ = [
    "DEFAULT_MAX_BYTES",
    "BackgroundSha256",
    "RawInput",
    "decode_text",
    "load_source",
    "read_source",
]

#: Default refusal limit for an input file (512 MiB).
DEFAULT_MAX_BYTES: int = 512 * 1024 * 1024

_KNOWN_SUFFIXES = (
    ".csv",
    ".tsv",
    ".txt",
    ".dat",
    ".jdx",
    ".dx",
    ".jcamp",
    ".parquet",
    ".pq",
    ".asc",
    ".xy",
    ".fits",
    ".fit",
    ".json",
    ".msa",
    ".emsa",
    ".xlsx",
    ".xlsm",
    ".xlsb",
    ".xls",
    ".ods",
)


@dataclass(frozen=True)
class RawInput:
    """Bytes of one input with their identity.

    Attributes
    ----------
    name : str
        File name without directories, or ``"<pasted>"``.
    data : bytes
        The original bytes, unchanged.
    sha256 : str
        Hex SHA-256 of ``data``.
    """

    name: str
    data: bytes
    sha256: str

    @property
    def size_bytes(self) -> int:
        """Length of the original bytes."""
        return len(self.data)


def _too_big(name: str, size: int, max_bytes: int) -> FileFormatError:
    return FileFormatError(
        f"{name} is {size:,} bytes, over the limit of {max_bytes:,} bytes",
        "decimate the spectrum or split the file into parts (or raise max_bytes)",
    )


def _read_path(path: str, max_bytes: int) -> tuple[str, bytes]:
    name = os.path.basename(path) or path
    try:
        size = os.stat(path).st_size
    except FileNotFoundError:
        raise FileFormatError(f"file {path!r} not found", "check the path and name") from None
    except OSError as exc:
        raise FileFormatError(f"cannot open {path!r}: {exc.strerror}", "check the path") from None
    if os.path.isdir(path):
        raise FileFormatError(f"{path!r} is a directory", "give a file inside it")
    if size > max_bytes:
        raise _too_big(name, size, max_bytes)
    try:
        with open(path, "rb") as fh:
            # Read one byte past the limit so a file that grew meanwhile is still refused.
            data = fh.read(max_bytes + 1)
    except OSError as exc:
        raise FileFormatError(
            f"cannot read {path!r}: {exc.strerror}", "check the file's permissions"
        ) from None
    if len(data) > max_bytes:
        raise _too_big(name, len(data), max_bytes)
    return name, data


def load_source(
    source: bytes | str | os.PathLike[str],
    *,
    name: str | None = None,
    max_bytes: int = DEFAULT_MAX_BYTES,
) -> RawInput:
    """Get the bytes of an input.

    Parameters
    ----------
    source : bytes, str or path-like
        A path, the raw bytes of a file, or pasted text. A ``str`` without a
        line break that names an existing file (or ends in a data-file
        suffix such as ``.csv``) is taken as a path; any other ``str`` is
        pasted text and is stored as UTF-8.
    name : str, optional
        Name to record; defaults to the file name, ``"<bytes>"`` or ``"<pasted>"``.
    max_bytes : int
        Refuse inputs larger than this, before reading them whole.

    Returns
    -------
    RawInput
        The bytes and their SHA-256.

    Raises
    ------
    FileFormatError
        If the file is missing, unreadable or too large.
    """
    label, data = read_source(source, name=name, max_bytes=max_bytes)
    return RawInput(name=label, data=data, sha256=hashlib.sha256(data).hexdigest())


def read_source(
    source: bytes | str | os.PathLike[str],
    *,
    name: str | None = None,
    max_bytes: int = DEFAULT_MAX_BYTES,
) -> tuple[str, bytes]:
    """The name and bytes of an input: :func:`load_source` without the hash.

    Parameters
    ----------
    source : bytes, str or path-like
        As for :func:`load_source`.
    name : str, optional
        Name to record.
    max_bytes : int
        Refuse inputs larger than this, before reading them whole.

    Returns
    -------
    tuple of (str, bytes)
        The name to record and the original bytes.

    Raises
    ------
    FileFormatError
        If the file is missing, unreadable or too large.
    """
    if isinstance(source, bytes | bytearray | memoryview):
        data = bytes(source)
        if len(data) > max_bytes:
            raise _too_big(name or "<bytes>", len(data), max_bytes)
        default = "<bytes>"
    elif isinstance(source, os.PathLike):
        default, data = _read_path(os.fspath(source), max_bytes)
    elif isinstance(source, str):
        looks_like_path = "\n" not in source and "\r" not in source and len(source) < 4096
        if looks_like_path and (
            os.path.exists(source)
            or source.lower().endswith(_KNOWN_SUFFIXES)
            or os.sep in source.strip()
        ):
            default, data = _read_path(source, max_bytes)
        else:
            data = source.encode("utf-8")
            if len(data) > max_bytes:
                raise _too_big(name or "<pasted>", len(data), max_bytes)
            default = "<pasted>"
    else:
        raise FileFormatError(
            f"cannot read an input of type {type(source).__name__}",
            "give a path, the file's bytes or pasted text",
        )
    return name or default, data


class BackgroundSha256:
    """SHA-256 of bytes computed in a thread while the caller parses them.

    hashlib releases the GIL while it hashes a large buffer, so on a machine
    with a free core the hash (about 16 ms for 20 MB) costs no time on top of
    parsing. :meth:`hexdigest` waits for it.

    Parameters
    ----------
    data : bytes
        The bytes to hash (not copied; bytes are immutable).
    """

    def __init__(self, data: bytes) -> None:
        self._digest: str | None = None
        self._thread = threading.Thread(target=self._run, args=(data,), daemon=True)
        self._thread.start()

    def _run(self, data: bytes) -> None:
        self._digest = hashlib.sha256(data).hexdigest()

    def hexdigest(self) -> str:
        """Hex SHA-256 of the bytes (waits for the thread)."""
        self._thread.join()
        assert self._digest is not None  # the thread cannot fail on bytes
        return self._digest


def decode_text(data: bytes, name: str) -> tuple[str, str]:
    """Decode bytes to text: UTF-8 (with or without BOM), UTF-16 with BOM, else latin-1.

    Latin-1 is used only when the bytes are plausibly text (no NUL bytes and
    almost no control characters); anything else is refused as binary.

    Parameters
    ----------
    data : bytes
        The original bytes (not modified).
    name : str
        File name for messages.

    Returns
    -------
    tuple of (str, str)
        The text and the encoding used.

    Raises
    ------
    FileFormatError
        If the bytes are empty, binary, or undecodable.
    """
    if not data.strip():
        raise FileFormatError(f"{name} is empty", "give a file with a header row and data rows")
    if data.startswith(b"\xef\xbb\xbf"):
        encoding = "utf-8-sig"
    elif data.startswith((b"\xff\xfe", b"\xfe\xff")):
        encoding = "utf-16"
    else:
        encoding = "utf-8"
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError:
        if encoding != "utf-8":
            raise FileFormatError(
                f"{name} starts with a {encoding} byte-order mark but is not valid {encoding}",
                "re-save the file as UTF-8 text",
            ) from None
        if not _plausibly_text(data):
            raise FileFormatError(
                f"{name} is not a text file (binary content)",
                "export the data as CSV/TSV text, JCAMP-DX or Parquet",
            ) from None
        text, encoding = data.decode("latin-1"), "latin-1"
    if "\x00" in text:
        raise FileFormatError(
            f"{name} contains NUL characters (binary content or wrong encoding)",
            "export the data as UTF-8 CSV/TSV text, JCAMP-DX or Parquet",
        )
    if not text.strip():
        raise FileFormatError(f"{name} is empty", "give a file with a header row and data rows")
    return text, encoding


def _plausibly_text(data: bytes) -> bool:
    if b"\x00" in data:
        return False
    sample = data[:65536]
    controls = sum(1 for b in sample if b < 0x20 and b not in (0x09, 0x0A, 0x0D, 0x0C))
    controls += sample.count(0x7F)
    high = sum(1 for b in sample if b >= 0x80)
    return controls <= 0.005 * len(sample) and high <= 0.3 * len(sample)
