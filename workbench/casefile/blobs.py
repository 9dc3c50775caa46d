"""Content-addressed store of original files: ``files/ab/cdef...`` by SHA-256.

A file is written to a temporary name in its final directory, flushed and
``fsync``-ed, then moved into place with :func:`os.replace`; if the name
already exists its content is re-hashed instead of overwritten, so nothing
stored is ever replaced. Temporary files start with ``.tmp-`` and are ignored
everywhere else.

Files that must appear only if a transaction commits (a bundle import) are
first written to a staging folder ``files/.staging-*/`` (:meth:`BlobStore.stage`)
and moved into place after the commit; a refusal removes the folder. A
staging folder left by a crash after the commit is finished by
:meth:`BlobStore.recover_staged` when the store is next opened for writing
(its files are moved in only if some row names them, else removed).
"""

from __future__ import annotations

import os
import re
import shutil
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path

from workbench.casefile.hashing import sha256_hex
from workbench.errors import StoreIntegrityError

__all__ = ["BlobStore", "Staging", "is_sha256"]

_HEX64 = re.compile(r"^[0-9a-f]{64}$")


def is_sha256(text: str) -> bool:
    """Return whether ``text`` is 64 lowercase hex digits."""
    return bool(_HEX64.match(text or ""))


class BlobStore:
    """Files named by their SHA-256 under a root directory.

    Parameters
    ----------
    root : Path
        The ``files/`` directory (created when missing, unless ``create`` is False).
    create : bool
        False for a read-only view (verification never creates anything).
    """

    def __init__(self, root: Path, *, create: bool = True) -> None:
        self.root = Path(root)
        if create:
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

    # ------------------------------------------------------------------ staging
    def stage(self) -> Staging:
        """Start a staging folder for files that appear only after a commit."""
        self.root.mkdir(parents=True, exist_ok=True)
        return Staging(self, Path(tempfile.mkdtemp(prefix=".staging-", dir=self.root)))

    def recover_staged(self, is_named: Callable[[str], bool]) -> None:
        """Finish staging folders left by a crash: keep files some row names, drop the rest."""
        if not self.root.is_dir():
            return
        for folder in sorted(self.root.glob(".staging-*")):
            if not folder.is_dir():
                continue
            for f in sorted(folder.iterdir()):
                if is_sha256(f.name) and is_named(f.name) and not self.exists(f.name):
                    if sha256_hex(f.read_bytes()) == f.name:
                        self._move_in(f, f.name)
            shutil.rmtree(folder, ignore_errors=True)

    def _move_in(self, source: Path, digest: str) -> None:
        target = self.path(digest)
        target.parent.mkdir(parents=True, exist_ok=True)
        if target.exists():
            self._check(target, digest)
            source.unlink()
            return
        os.replace(source, target)
        dir_fd = os.open(target.parent, os.O_RDONLY)
        try:
            os.fsync(dir_fd)
        finally:
            os.close(dir_fd)


class Staging:
    """Files written aside, moved into a :class:`BlobStore` only by :meth:`commit`."""

    def __init__(self, blobs: BlobStore, folder: Path) -> None:
        self.blobs = blobs
        self.folder = folder
        self.names: list[str] = []

    def put(self, data: bytes) -> str:
        """Write bytes to the staging folder (skipped if already stored); return the SHA-256."""
        data = bytes(data)
        digest = sha256_hex(data)
        if self.blobs.exists(digest):
            self.blobs._check(self.blobs.path(digest), digest)
            return digest
        target = self.folder / digest
        if not target.exists():
            with open(target, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            self.names.append(digest)
        return digest

    def commit(self) -> None:
        """Move every staged file into place, then remove the staging folder."""
        for digest in self.names:
            self.blobs._move_in(self.folder / digest, digest)
        shutil.rmtree(self.folder, ignore_errors=True)

    def discard(self) -> None:
        """Remove the staging folder and everything in it."""
        shutil.rmtree(self.folder, ignore_errors=True)
