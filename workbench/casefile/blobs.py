"""Content-addressed store of original files: ``files/ab/cdef...`` by SHA-256.

A file is written to a temporary name in its final directory, flushed and
``fsync``-ed, then moved into place with :func:`os.replace`; if the name
already exists its content is re-hashed instead of overwritten, so nothing
stored is ever replaced. Temporary files start with ``.tmp-`` and are ignored
everywhere else.
"""

from __future__ import annotations

import os
import re
import tempfile
from collections.abc import Iterator
from pathlib import Path

from workbench.casefile.hashing import sha256_hex
from workbench.errors import StoreIntegrityError

__all__ = ["BlobStore", "is_sha256"]

_HEX64 = re.compile(r"^[0-9a-f]{64}$")


def is_sha256(text: str) -> bool:
    """Return whether ``text`` is 64 lowercase hex digits."""
    return bool(_HEX64.match(text or ""))


class BlobStore:
    """Files named by their SHA-256 under a root directory.

    Parameters
    ----------
    root : Path
        The ``files/`` directory (created when missing).
    """

    def __init__(self, root: Path) -> None:
        self.root = Path(root)
        self.root.mkdir(parents=True, exist_ok=True)

    def path(self, sha256: str) -> Path:
        """Return where the file with this hash lives."""
        if not is_sha256(sha256):
            raise StoreIntegrityError(
                f"{sha256!r} is not a SHA-256 hex digest", "check the record that names it"
            )
        return self.root / sha256[:2] / sha256[2:]

    def put(self, data: bytes) -> str:
        """Store bytes (idempotently) and return their SHA-256.

        Raises
        ------
        StoreIntegrityError
            If a file already stored under that hash has other content.
        """
        data = bytes(data)
        digest = sha256_hex(data)
        target = self.path(digest)
        if target.exists():
            self._check(target, digest)
            return digest
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".tmp-", dir=target.parent)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            if target.exists():  # another writer got there first
                self._check(target, digest)
            else:
                os.replace(tmp, target)
                tmp = ""
                dir_fd = os.open(target.parent, os.O_RDONLY)
                try:
                    os.fsync(dir_fd)
                finally:
                    os.close(dir_fd)
        finally:
            if tmp and os.path.exists(tmp):
                os.unlink(tmp)
        return digest

    def _check(self, path: Path, digest: str) -> None:
        found = sha256_hex(path.read_bytes())
        if found != digest:
            raise StoreIntegrityError(
                f"stored file {path} should have SHA-256 {digest} but has {found} "
                "(replaced or corrupted)",
                "restore the file from a backup or a case bundle, then run 'custody verify'",
            )

    def exists(self, sha256: str) -> bool:
        """Return whether a file with this hash is stored."""
        return self.path(sha256).is_file()

    def get(self, sha256: str) -> bytes:
        """Read a stored file, verifying its hash.

        Raises
        ------
        StoreIntegrityError
            If the file is missing or its content does not match its name.
        """
        path = self.path(sha256)
        try:
            data = path.read_bytes()
        except FileNotFoundError as exc:
            raise StoreIntegrityError(
                f"stored file {path} (SHA-256 {sha256}) is missing",
                "restore it from a backup or a case bundle, then run 'custody verify'",
            ) from exc
        found = sha256_hex(data)
        if found != sha256:
            raise StoreIntegrityError(
                f"stored file {path} should have SHA-256 {sha256} but has {found} "
                "(replaced or corrupted)",
                "restore the file from a backup or a case bundle, then run 'custody verify'",
            )
        return data

    def iter_hashes(self) -> Iterator[tuple[str, Path]]:
        """Yield ``(name_hash, path)`` for every stored file (temporary files skipped)."""
        if not self.root.is_dir():
            return
        for sub in sorted(self.root.iterdir()):
            if not sub.is_dir() or len(sub.name) != 2:
                continue
            for f in sorted(sub.iterdir()):
                if f.name.startswith(".tmp-") or not f.is_file():
                    continue
                yield sub.name + f.name, f
