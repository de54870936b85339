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

A label's QR code may carry the ID behind a lab-configured URI prefix
(``HTTPS://LAB.EXAMPLE/T/SP-00042-E``); :func:`parse_id` then accepts the scanned
link as well, and refuses a link with another prefix rather than guessing.
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
    PRINT_JOB = "PJ"


_BY_PREFIX = {kind.value: kind for kind in Kind}
MAX_DIGITS = 12
_CLEAN = re.compile(r"[\s\-_./]")
_SHAPE = re.compile(r"^([A-Z]{2})(\d{1,12})([0-9A-Z*])$")
# A URI scheme followed by its colon (RFC 3986): IDs never contain a colon.
_URI = re.compile(r"^[A-Za-z][A-Za-z0-9+.\-]*:")
_LINK = re.compile(r"^[A-Za-z][A-Za-z0-9+.\-]*://")


def check_character(body: str) -> str:
    """ISO/IEC 7064 MOD 37-2 check character for an alphanumeric string."""
    return _CHECK[(1 - _running(0, body.upper())) % _MODULUS]


def _running(total: int, chars: str) -> int:
    """The MOD 37-2 running sum over ``chars``, continued from ``total``."""
    for char in chars:
        total = (2 * (total + _DATA.index(char))) % _MODULUS
    return total


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
        return format_id(self.kind, self.number)

    @property
    def compact(self) -> str:
        """Without hyphens, as a scanner might type it."""
        return str(self).replace("-", "")


# The running sum after each kind's two-letter prefix: every ID of a kind starts from it.
_PREFIX_SUM = {kind: _running(0, kind.value) for kind in Kind}
_PREFIX = {kind: kind.value for kind in Kind}


def format_id(kind: Kind, number: int) -> str:
    """The printed form of an ID (``SP-00042-E``); every public ID is made here, so it is
    kept fast: the prefix's share of the check sum is computed once per kind."""
    if not 0 <= number < 10**MAX_DIGITS:
        raise ValueError(f"ID numbers run from 0 to {10**MAX_DIGITS - 1}")
    digits = f"{number:05d}"
    total = _PREFIX_SUM[kind]
    for char in digits:
        total = (2 * (total + ord(char) - 48)) % _MODULUS  # a digit's value is its ordinal - 48
    return f"{_PREFIX[kind]}-{digits}-{_CHECK[(1 - total) % _MODULUS]}"


class BadId(ValueError):
    """An identifier that cannot be read; the message says why."""


def strip_uri_prefix(text: str, uri_prefix: str | None = None) -> str:
    """The ID part of a scanned payload: ``text`` without the lab's URI prefix.

    Scanners type exactly what the QR code holds, so a label printed with the
    lab's prefix arrives as a link. A link with any other prefix is refused:
    another lab's tracker hands out the same IDs, and a silent match would
    name the wrong vial.
    """
    stripped = text.strip()
    if uri_prefix and stripped.upper().startswith(uri_prefix.upper()):
        return stripped[len(uri_prefix) :]
    if _URI.match(stripped):
        if uri_prefix:
            raise BadId(f"is a link, but not to this lab's labels (they start {uri_prefix!r})")
        raise BadId("is a link, but this lab prints no link prefix on its labels")
    return text


def is_link(text: str) -> bool:
    """Does ``text`` start with a URI scheme? Only then can the lab's URI prefix matter
    (prefixes must start with one), so a bare ID is read without looking the prefix up."""
    return _URI.match(text.strip()) is not None


def parse_id(text: str, uri_prefix: str | None = None) -> PublicId:
    """Read an ID typed or scanned in any case, with or without separators; verify its check."""
    cleaned = _CLEAN.sub("", strip_uri_prefix(text, uri_prefix)).upper()
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
        # The right character is not named: the mistake may be anywhere in the ID, and
        # "fixing" the last character would name another item.
        raise BadId(
            f"check character {check!r} does not fit {prefix}-{digits}: a character was "
            "mistyped or misread somewhere in the ID; scan the label again, or read the "
            "whole ID again"
        )
    return PublicId(kind, int(digits))


def looks_like_id(text: str, uri_prefix: str | None = None) -> bool:
    """Cheap test used to tell a scanned/typed ID from a free-text reference (a loan number).

    True when the text has an ID's shape and a known prefix, even if its check
    character is wrong — a mistyped ID must be reported as such, not looked up as text.
    A scanned link (the lab's URI prefix, or any ``scheme://``) counts as an ID, so
    that it is read — or refused — as one rather than searched for as a loan number.
    """
    stripped = text.strip()
    if _LINK.match(stripped) or (uri_prefix and stripped.upper().startswith(uri_prefix.upper())):
        return True
    match = _SHAPE.match(_CLEAN.sub("", text).upper())
    return match is not None and match.group(1) in _BY_PREFIX


_ID_START = re.compile(r"^\s*([A-Za-z]{2})[\s\-_./]?\d")


def meant_as_id(text: str) -> bool:
    """Was ``text`` meant as an ID, even a broken one (``SP-12-??``)? A known prefix then a
    digit; used to word the refusal of something that names nothing."""
    match = _ID_START.match(text)
    return looks_like_id(text) or (match is not None and match.group(1).upper() in _BY_PREFIX)
