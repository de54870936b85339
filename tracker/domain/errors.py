"""The two kinds of refusal every entry point must tell apart.

``InputError`` (exit 2): the request itself is malformed — an unknown unit, a
negative mass, an ID that does not exist. ``RuleViolation`` (exit 1): the
request is well formed but the domain forbids it — over an allowance, checking
in twice. Both carry one line naming the field and the offending value.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager


class TrackerError(Exception):
    """Base class: a refusal with a one-line, user-facing message."""

    exit_code = 2

    def __init__(self, field: str, value: object, reason: str) -> None:
        self.field = field
        self.value = value
        self.reason = reason
        super().__init__(self.one_line())

    def __str__(self) -> str:
        return self.one_line()  # follows a field renamed on the way out (see cli_fields)

    def one_line(self) -> str:
        shown = _show(self.value)
        return f"{self.field}: {shown}: {self.reason}" if shown else f"{self.field}: {self.reason}"

    def as_dict(self) -> dict[str, object]:
        return {
            "error": type(self).__name__,
            "field": self.field,
            "value": None if self.value is None else str(self.value),
            "reason": self.reason,
            "exit_code": self.exit_code,
        }


class InputError(TrackerError):
    """Malformed input: exit code 2, nothing written."""

    exit_code = 2


class NotFound(InputError):
    """An ID or reference that names nothing in this database."""


class RuleViolation(TrackerError):
    """Well-formed input refused by a domain rule: exit code 1, nothing written."""

    exit_code = 1


def at_cell(file: str, row: int, column: str) -> str:
    """How a refusal names a place in an imported file: the file, its row and its column."""
    return f"{file}, row {row}, column {column}"


@contextmanager
def in_file(file: str) -> Iterator[None]:
    """Refusals about "row N, column C" raised inside also name the file they are about."""
    try:
        yield
    except TrackerError as error:
        if error.field.startswith("row "):
            error.field = f"{file}, {error.field}"
        raise


def _show(value: object) -> str:
    if value is None:
        return ""
    text = str(value)
    if len(text) > 60:  # keep both ends: a long path still ends in its file name
        text = text[:24] + "..." + text[-33:]
    return repr(text) if isinstance(value, str) else text
