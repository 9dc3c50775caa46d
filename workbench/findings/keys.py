"""Ed25519 key pairs for analysts: creation, storage on disk, loading.

A private key is kept as PEM PKCS#8, encrypted with the analyst's passphrase
(``BestAvailableEncryption``); the public key as PEM SubjectPublicKeyInfo,
which is what ``openssl pkeyutl -pubin`` reads. A key is named by its
*fingerprint*: ``"SHA256:"`` followed by the lowercase hex SHA-256 of the raw
32-byte public key. Loading public keys and fingerprints live in
:mod:`workbench.crypto` (re-exported here).
"""

from __future__ import annotations

import os
import re
import tempfile
from dataclasses import dataclass
from pathlib import Path

from workbench.crypto import fingerprint_of, load_public_key
from workbench.errors import InputError, KeyFileError

__all__ = [
    "MIN_PASSPHRASE_LENGTH",
    "PASSPHRASE_ENV",
    "KeyPair",
    "fingerprint_of",
    "generate_key_pair",
    "load_private_key",
    "load_public_key",
    "public_key_pem_of",
    "read_passphrase",
    "save_key_pair",
]

#: Environment variable read for the passphrase when no file is given.
PASSPHRASE_ENV: str = "WORKBENCH_PASSPHRASE"

#: Shortest passphrase accepted for a new private key.
MIN_PASSPHRASE_LENGTH: int = 8

_NAME_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")


@dataclass(frozen=True)
class KeyPair:
    """A freshly generated key pair, ready to be saved.

    Attributes
    ----------
    private_key_pem : bytes
        PKCS#8 PEM, encrypted with the passphrase given at creation.
    public_key_pem : bytes
        SubjectPublicKeyInfo PEM.
    fingerprint : str
        ``"SHA256:<64 hex>"`` of the raw public key.
    """

    private_key_pem: bytes
    public_key_pem: bytes
    fingerprint: str


def _check_passphrase(passphrase: str) -> bytes:
    if not isinstance(passphrase, str) or not passphrase:
        raise KeyFileError(
            "the passphrase is empty",
            f"choose a passphrase of at least {MIN_PASSPHRASE_LENGTH} characters",
        )
    if len(passphrase) < MIN_PASSPHRASE_LENGTH:
        raise KeyFileError(
            f"the passphrase has {len(passphrase)} characters, fewer than {MIN_PASSPHRASE_LENGTH}",
            f"choose a passphrase of at least {MIN_PASSPHRASE_LENGTH} characters",
        )
    return passphrase.encode("utf-8")


def generate_key_pair(passphrase: str) -> KeyPair:
    """Create a new Ed25519 key pair.

    Parameters
    ----------
    passphrase : str
        Protects the private key; at least :data:`MIN_PASSPHRASE_LENGTH` characters.

    Returns
    -------
    KeyPair
        Encrypted private PEM, public PEM and fingerprint.

    Raises
    ------
    KeyFileError
        If the passphrase is empty or too short.
    """
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    secret = _check_passphrase(passphrase)
    key = Ed25519PrivateKey.generate()
    private_pem = key.private_bytes(
        serialization.Encoding.PEM,
        serialization.PrivateFormat.PKCS8,
        serialization.BestAvailableEncryption(secret),
    )
    public_pem = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    return KeyPair(private_pem, public_pem, fingerprint_of(key.public_key()))


def _write_new(path: Path, data: bytes, mode: int) -> None:
    """Write ``data`` to ``path`` atomically, failing if ``path`` exists."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        os.fchmod(fd, mode)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        # os.link refuses an existing target, so a key is never overwritten,
        # even by a concurrent writer; the temp name is then removed.
        os.link(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def save_key_pair(keypair: KeyPair, directory: str | os.PathLike[str], name: str) -> Path:
    """Write ``<name>.key.pem`` (mode 0600) and ``<name>.pub.pem`` into ``directory``.

    Parameters
    ----------
    keypair : KeyPair
        The pair from :func:`generate_key_pair`.
    directory : path-like
        Existing or new directory (created with mode 0700 if missing).
    name : str
        File stem: letters, digits, ``.``, ``_``, ``-``; at most 64 characters.

    Returns
    -------
    pathlib.Path
        Path of the private key file.

    Raises
    ------
    InputError
        If the name is unusable.
    KeyFileError
        If either file already exists (nothing is overwritten or written).
    """
    if not _NAME_RE.match(name or ""):
        raise InputError(
            f"key name {name!r} is not usable as a file name",
            "use letters, digits, '.', '_' or '-' (at most 64 characters), e.g. 'j.smith'",
        )
    folder = Path(directory)
    folder.mkdir(mode=0o700, parents=True, exist_ok=True)
    private_path = folder / f"{name}.key.pem"
    public_path = folder / f"{name}.pub.pem"
    for p in (private_path, public_path):
        if p.exists():
            raise KeyFileError(
                f"{p} already exists; an existing key is never overwritten",
                "choose another --name or --out directory, or move the old key away first",
            )
    try:
        _write_new(private_path, keypair.private_key_pem, 0o600)
    except FileExistsError as exc:
        raise KeyFileError(
            f"{private_path} appeared while writing; it was not overwritten",
            "choose another --name",
        ) from exc
    try:
        _write_new(public_path, keypair.public_key_pem, 0o644)
    except FileExistsError as exc:
        private_path.unlink()  # do not leave half a pair behind
        raise KeyFileError(
            f"{public_path} appeared while writing; nothing was kept",
            "choose another --name",
        ) from exc
    return private_path


def load_private_key(pem: bytes, passphrase: str, *, source: str = "private key") -> object:
    """Decrypt and load an Ed25519 private key.

    Parameters
    ----------
    pem : bytes
        Contents of a ``.key.pem`` file.
    passphrase : str
        The passphrase chosen at creation.
    source : str
        Name of the file, for error messages.

    Returns
    -------
    Ed25519PrivateKey
        The key.

    Raises
    ------
    KeyFileError
        ``file is not a PEM key``, ``wrong passphrase`` or ``not an Ed25519 private key``.
    """
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    if not isinstance(pem, bytes | bytearray) or b"-----BEGIN " not in pem:
        raise KeyFileError(
            f"{source}: file is not a PEM key (no '-----BEGIN' line)",
            "give the .key.pem file written by 'workbench keys create'",
        )
    if b"PRIVATE KEY-----" not in pem:
        raise KeyFileError(
            f"{source}: not an Ed25519 private key (the PEM holds no private key; "
            "is it the .pub.pem file?)",
            "give the .key.pem file, not the public key",
        )
    secret = passphrase.encode("utf-8") if passphrase else None
    try:
        key = serialization.load_pem_private_key(bytes(pem), password=secret)
    except TypeError as exc:
        # Raised for a missing passphrase on an encrypted key, or one given for a plain key.
        raise KeyFileError(
            f"{source}: wrong passphrase ({exc})", "give the passphrase chosen at creation"
        ) from exc
    except ValueError as exc:
        text = str(exc).lower()
        # A wrong passphrase on an encrypted key usually fails the padding check
        # ("bad decrypt"); about one time in 256 the padding happens to be valid
        # and the garbage fails to parse as ASN.1 instead: still a wrong passphrase.
        encrypted = b"ENCRYPTED PRIVATE KEY" in pem and secret is not None
        if encrypted or "password" in text or "decrypt" in text:
            raise KeyFileError(
                f"{source}: wrong passphrase", "give the passphrase chosen when the key was made"
            ) from exc
        raise KeyFileError(
            f"{source}: file is not a PEM key that can be read ({exc})",
            "give the .key.pem file written by 'workbench keys create'",
        ) from exc
    except Exception as exc:  # unsupported algorithms raise UnsupportedAlgorithm
        raise KeyFileError(
            f"{source}: not an Ed25519 private key ({exc})",
            "use a key made by 'workbench keys create'",
        ) from exc
    if not isinstance(key, Ed25519PrivateKey):
        raise KeyFileError(
            f"{source}: not an Ed25519 private key (found {type(key).__name__})",
            "use a key made by 'workbench keys create'",
        )
    return key


def public_key_pem_of(private_key: object) -> bytes:
    """Return the SubjectPublicKeyInfo PEM of a private key's public half."""
    from cryptography.hazmat.primitives import serialization

    return private_key.public_key().public_bytes(  # type: ignore[attr-defined]
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )


def read_passphrase(
    passphrase_file: str | os.PathLike[str] | None, *, confirm: bool = False
) -> str:
    """Get a passphrase without it ever appearing on a command line.

    Sources, in order: the file ``passphrase_file`` (its first line; a
    trailing newline is dropped), the environment variable
    :data:`PASSPHRASE_ENV`, or an interactive prompt (``getpass``) when
    standard input is a terminal.

    Parameters
    ----------
    passphrase_file : path-like, optional
        File holding the passphrase.
    confirm : bool
        Ask twice at the prompt (for a new key).

    Returns
    -------
    str
        The passphrase.

    Raises
    ------
    InputError
        If the file cannot be read.
    KeyFileError
        If no source gives a passphrase, or the two prompts differ.
    """
    import getpass
    import sys

    if passphrase_file is not None:
        try:
            text = Path(passphrase_file).read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            raise InputError(
                f"cannot read the passphrase file {passphrase_file} ({exc})",
                "give a readable UTF-8 text file holding the passphrase on its first line",
            ) from exc
        lines = text.splitlines()
        return lines[0] if lines else ""
    env = os.environ.get(PASSPHRASE_ENV)
    if env:
        return env
    if sys.stdin is not None and sys.stdin.isatty():
        first = getpass.getpass("Passphrase: ")
        if confirm and getpass.getpass("Passphrase again: ") != first:
            raise KeyFileError("the two passphrases differ", "type the same passphrase twice")
        return first
    raise KeyFileError(
        "no passphrase given",
        f"use --passphrase-file FILE or set {PASSPHRASE_ENV} (it is never taken from the "
        "command line)",
    )
