"""Private key files on this machine: one file per key, in the user's config folder.

``<config>/keys/<operator>-<key ID>.key`` holds the key as encrypted PKCS #8 PEM
(:func:`tracker.domain.signing.locked_bytes`). The folder is made readable by its owner only,
each file is written through :mod:`tracker.db.outputs` with mode 0600 from its first byte,
and a key file (or a passphrase file) that others may read is refused before it is read.
A private key is never written anywhere else, least of all into a database.
"""

from __future__ import annotations

import os
import re
import stat
from dataclasses import dataclass
from pathlib import Path

from tracker.db import outputs
from tracker.db.location import config_dir
from tracker.domain.errors import InputError
from tracker.domain.signing import KeyFileError, Signer, WrongPassphrase, locked_bytes, unlock_bytes

SUFFIX = ".key"
MAX_KEY_FILE = 64 * 1024  # an encrypted Ed25519 key is a few hundred bytes
_NAME = re.compile(r"^(?P<operator>.+)-(?P<key_id>[0-9a-f]{16})\.key$")


def keys_dir() -> Path:
    return config_dir() / "keys"


@dataclass(frozen=True)
class KeyFile:
    path: Path
    operator: str
    key_id: str


def key_files(operator: str | None = None) -> list[KeyFile]:
    """The key files on this machine (of one operator, when given), by name."""
    try:
        names = sorted(path.name for path in keys_dir().iterdir())
    except OSError:
        return []
    found = []
    for name in names:
        match = _NAME.match(name)
        if match and (operator is None or match["operator"] == operator):
            found.append(KeyFile(keys_dir() / name, match["operator"], match["key_id"]))
    return found


def file_for(key_id: str) -> KeyFile | None:
    return next((f for f in key_files() if f.key_id == key_id), None)


def write_key(operator: str, signer: Signer, passphrase: str) -> KeyFile:
    """Encrypt ``signer`` with ``passphrase`` into a new key file (never over another)."""
    try:
        data = locked_bytes(signer, passphrase)
    except KeyFileError as error:
        raise InputError("passphrase", None, str(error)) from None
    folder = keys_dir()
    if not folder.is_dir():
        folder.mkdir(parents=True, mode=0o700)
    path = folder / f"{operator}-{signer.key_id}{SUFFIX}"
    outputs.write_new(path, data, "key file", private=True)
    return KeyFile(path, operator, signer.key_id)


def require_private(path: Path, field: str) -> None:
    """Refuse a file that anyone but its owner may read or write (on POSIX systems)."""
    if os.name != "posix":
        return
    try:
        mode = stat.S_IMODE(path.stat().st_mode)
    except OSError as error:
        raise InputError(field, str(path), f"cannot be read ({error.strerror})") from None
    if mode & 0o077:
        raise InputError(
            field,
            str(path),
            f"may be read by others (mode {mode:04o}); make it private first: chmod 600 {path}",
        )


def read_private(path: Path, field: str, limit: int = MAX_KEY_FILE) -> bytes:
    """A private file's bytes, once it is known to be private."""
    require_private(path, field)
    try:
        with path.open("rb") as handle:
            data = handle.read(limit + 1)
    except OSError as error:
        raise InputError(field, str(path), f"cannot be read ({error.strerror})") from None
    if len(data) > limit:
        raise InputError(field, str(path), "is too large to be what it should be")
    return data


def unlock(key_file: KeyFile, passphrase: str) -> Signer:
    """The signer in ``key_file``; one line when the file or the passphrase is wrong."""
    data = read_private(key_file.path, "key file")
    try:
        signer = unlock_bytes(data, passphrase)
    except WrongPassphrase:
        raise InputError(
            "passphrase",
            None,
            f"does not unlock {key_file.operator}'s key {key_file.key_id} ({key_file.path})",
        ) from None
    except KeyFileError as error:
        raise InputError("key file", str(key_file.path), str(error)) from None
    if signer.key_id != key_file.key_id:
        raise InputError("key file", str(key_file.path), "holds another key than its name says")
    return signer
