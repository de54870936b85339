"""Personal signing keys: Ed25519 key pairs, their IDs, signatures, and key files' bytes.

Every ledger event of format "tracker-ledger/2" is signed by its operator's private key
over the event's hash (the 64 ASCII characters of the lower-case hex SHA-256), and an
anchor over its own canonical text (:mod:`tracker.domain.anchors`). Ed25519 (RFC 8032) is
deterministic: the same key signing the same bytes always gives the same 64-byte signature,
so the demo and the benchmark, which sign with invented keys derived from public seeds,
build the same ledger on every machine.

A key's ID is the first 16 hex digits of the SHA-256 of its 32 raw public-key bytes: short
enough to read aloud, and only a name — the public key itself travels in the ledger event
that registers it, and every check uses that.

A private key is kept as PKCS #8 PEM encrypted with its owner's passphrase
(``BestAvailableEncryption`` of the ``cryptography`` package: PBES2, PBKDF2-HMAC-SHA256 and
AES-256-CBC). That key derivation is light (2,048 rounds in cryptography 50, read from a
file it wrote), so the passphrase must be long: :data:`MIN_PASSPHRASE` characters at least.
Nothing here touches a file or a database.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

# Longer than NIST SP 800-63B's minimum of 8 for memorised secrets (from memory), because
# the key file's PBKDF2 is light: a few words, not a word.
MIN_PASSPHRASE = 12
PUBLIC_HEX = 64  # 32 bytes
SIGNATURE_HEX = 128  # 64 bytes
KEY_ID_HEX = 16


class KeyFileError(ValueError):
    """The bytes are not a key this module can read; the message says why, for a person."""


class WrongPassphrase(KeyFileError):
    """The passphrase does not decrypt the key file."""


def key_id(public_hex: str) -> str:
    """A key's short name: the first 16 hex digits of SHA-256 over its raw public bytes."""
    return hashlib.sha256(bytes.fromhex(public_hex)).hexdigest()[:KEY_ID_HEX]


@dataclass(frozen=True)
class Signer:
    """An unlocked private key. It lives in memory only; ``sign`` is all it does."""

    private: Ed25519PrivateKey

    @property
    def public_hex(self) -> str:
        return self.private.public_key().public_bytes_raw().hex()

    @property
    def key_id(self) -> str:
        return key_id(self.public_hex)

    def sign(self, data: bytes) -> str:
        """The Ed25519 signature of ``data``, as 128 lower-case hex digits."""
        return self.private.sign(data).hex()

    def sign_hash(self, event_hash: str) -> str:
        """An event's signature: over the ASCII bytes of its hex hash (see the module)."""
        return self.sign(event_hash.encode("ascii"))


def new_signer() -> Signer:
    return Signer(Ed25519PrivateKey.generate())


def seeded_signer(seed: str) -> Signer:
    """An invented key derived from a public seed (demo, benchmark, tests): anyone who knows
    the seed can sign with it, so a ledger signed with one proves nothing about people."""
    return Signer(Ed25519PrivateKey.from_private_bytes(hashlib.sha256(seed.encode()).digest()))


def public_key(public_hex: str) -> Ed25519PublicKey:
    """The public key from its 64 hex digits; refused when it is not one."""
    try:
        return Ed25519PublicKey.from_public_bytes(bytes.fromhex(public_hex))
    except ValueError:
        raise KeyFileError("is not an Ed25519 public key (64 hex digits)") from None


def verify(public: Ed25519PublicKey, signature_hex: str, data: bytes) -> bool:
    """True when ``signature_hex`` is ``public``'s signature of ``data``."""
    try:
        public.verify(bytes.fromhex(signature_hex), data)
    except (InvalidSignature, ValueError):
        return False
    return True


def locked_bytes(signer: Signer, passphrase: str) -> bytes:
    """The private key as encrypted PKCS #8 PEM (what a key file holds)."""
    if len(passphrase) < MIN_PASSPHRASE:
        raise KeyFileError(f"is shorter than {MIN_PASSPHRASE} characters; use a few words")
    return signer.private.private_bytes(
        serialization.Encoding.PEM,
        serialization.PrivateFormat.PKCS8,
        serialization.BestAvailableEncryption(passphrase.encode("utf-8")),
    )


def unlock_bytes(data: bytes, passphrase: str) -> Signer:
    """The signer a key file holds, decrypted with ``passphrase``."""
    try:
        key = serialization.load_pem_private_key(data, passphrase.encode("utf-8"))
    except TypeError:  # not encrypted: tracker never writes such a file
        raise KeyFileError("holds a private key without a passphrase; refused") from None
    except ValueError as error:
        if "password" in str(error).lower():
            raise WrongPassphrase("the passphrase does not unlock it") from None
        raise KeyFileError("is not a private key file (encrypted PKCS #8 PEM)") from None
    if not isinstance(key, Ed25519PrivateKey):
        raise KeyFileError("holds a key that is not Ed25519")
    return Signer(key)


def public_pem(public_hex: str) -> bytes:
    """A public key as SubjectPublicKeyInfo PEM: the file a person hands to a manager."""
    return public_key(public_hex).public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )


def public_hex_of(data: bytes) -> str:
    """The public key a file holds: PEM as :func:`public_pem` writes it, or 64 hex digits."""
    text = data.strip()
    if text.startswith(b"-----BEGIN"):
        try:
            key = serialization.load_pem_public_key(text)
        except ValueError:
            raise KeyFileError("is not a public key file (PEM)") from None
        if not isinstance(key, Ed25519PublicKey):
            raise KeyFileError("holds a public key that is not Ed25519")
        return key.public_bytes_raw().hex()
    try:
        candidate = text.decode("ascii").lower()
    except UnicodeDecodeError:
        raise KeyFileError("is not a public key file (PEM or 64 hex digits)") from None
    public_key(candidate)
    return candidate
