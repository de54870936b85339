"""Public identifiers: a type prefix, a number and an ISO/IEC 7064 MOD 37-2 check character.

``SP-00042-E`` names specimen 42. The check character is computed over the
prefix and the digits by the pure system MOD 37-2 of ISO/IEC 7064 (prime
modulus 37, weights 2^i), so any single mistyped or misread character and any
swap of two adjacent characters — the check character included — is rejected
instead of silently naming another vial. (The hybrid MOD 37,36 system was
tried first and misses about 0.5 % of adjacent swaps.) The check character is
one of 0-9, A-Z or ``*``; all of them fit a QR code's alphanumeric mode. IDs are upper case so that
a QR code can carry them in its compact alphanumeric mode; lookups accept them
in either case and with or without the hyphens.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from enum import StrEnum

_DATA = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ"
_CHECK = _DATA + "*"
_MODULUS = 37


class Kind(StrEnum):
    """What an ID names; the value is its two-letter prefix."""

    LENDER = "LE"
    LOAN = "LN"
    SPECIMEN = "SP"
    POWDER = "PW"
    SOLUTION = "SO"
    ALIQUOT = "AQ"
    COLUMN_BATCH = "CB"
    POSITION = "CP"
    CUT = "CU"
    REFERENCE_MATERIAL = "RM"
    INSTRUMENT_SESSION = "IS"
    LOCATION = "LC"
    SHIPMENT = "SH"
    OPERATOR = "OP"
    DOCUMENT = "DC"
    MATERIAL = "MT"


_BY_PREFIX = {kind.value: kind for kind in Kind}
MAX_DIGITS = 12
_CLEAN = re.compile(r"[\s\-_./]")
_SHAPE = re.compile(r"^([A-Z]{2})(\d{1,12})([0-9A-Z*])$")


def check_character(body: str) -> str:
    """ISO/IEC 7064 MOD 37-2 check character for an alphanumeric string."""
    total = 0
    for char in body.upper():
        total = (2 * (total + _DATA.index(char))) % _MODULUS
    return _CHECK[(1 - total) % _MODULUS]


def is_valid(full: str) -> bool:
    """True when the last character is the correct check character of the rest."""
    full = full.upper()
    body = full[:-1]
    if len(full) < 2 or any(char not in _DATA for char in body):
        return False
    return check_character(body) == full[-1]


@dataclass(frozen=True)
class PublicId:
    """A parsed identifier: kind + number (the row's primary key)."""

    kind: Kind
    number: int

    def __post_init__(self) -> None:
        if not 0 <= self.number < 10**MAX_DIGITS:
            raise ValueError(f"ID numbers run from 0 to {10**MAX_DIGITS - 1}")

    def __str__(self) -> str:
        digits = f"{self.number:05d}"
        return f"{self.kind.value}-{digits}-{check_character(self.kind.value + digits)}"

    @property
    def compact(self) -> str:
        """Without hyphens, as a scanner might type it."""
        return str(self).replace("-", "")


def format_id(kind: Kind, number: int) -> str:
    return str(PublicId(kind, number))


class BadId(ValueError):
    """An identifier that cannot be read; the message says why."""


def parse_id(text: str) -> PublicId:
    """Read an ID typed in any case, with or without separators; verify its check character."""
    cleaned = _CLEAN.sub("", text).upper()
    match = _SHAPE.match(cleaned)
    if not match:
        raise BadId("is not an ID of the form XX-00000-C (two letters, digits, check character)")
    prefix, digits, check = match.groups()
    if digits != f"{int(digits):05d}":
        raise BadId("has the wrong number of digits (at least five, no extra leading zeros)")
    kind = _BY_PREFIX.get(prefix)
    if kind is None:
        known = ", ".join(sorted(_BY_PREFIX))
        raise BadId(f"unknown ID prefix {prefix!r}; known prefixes are {known}")
    if check_character(prefix + digits) != check:
        raise BadId("check character does not match: a character was mistyped or misread")
    return PublicId(kind, int(digits))


def looks_like_id(text: str) -> bool:
    """Cheap test used to tell a scanned/typed ID from a free-text reference (a loan number).

    True when the text has an ID's shape and a known prefix, even if its check
    character is wrong — a mistyped ID must be reported as such, not looked up as text.
    """
    match = _SHAPE.match(_CLEAN.sub("", text).upper())
    return match is not None and match.group(1) in _BY_PREFIX
