"""The kinds of refusal every entry point must tell apart.

``InputError`` (exit 2): the request itself is malformed — an unknown unit, a
negative mass, an ID that does not exist. ``RuleViolation`` (exit 1): the
request is well formed but the domain forbids it — over an allowance, checking
in twice. Both carry one line naming the field and the offending value.
``Busy`` (exit 3): another writer held the database for longer than this one
would wait; nothing was written and the same request may simply be tried again.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from datetime import datetime


class TrackerError(Exception):
    """Base class: a refusal with a one-line, user-facing message."""

    exit_code = 2

    def __init__(self, field: str, value: object, reason: str) -> None:
        self.field = field
        self.value = value
        self.reason = reason
        super().__init__(self.one_line())

    def __str__(self) -> str:
        return self.one_line()  # follows a field renamed on the way out (see tracker.cli.fields)

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


class Busy(TrackerError):
    """The writer lock was not free within the wait: exit code 3, nothing written.

    It names what held the lock and since when, as far as the backend can tell (see
    ``tracker.db.writer_lock``), so a person knows whether to wait or to go and ask.
    """

    exit_code = 3

    def __init__(self, holder: str, since: datetime | None) -> None:
        self.holder, self.since = holder, since
        super().__init__("database", None, f"busy: {holder}")

    def one_line(self) -> str:
        if self.since is None:  # the holder cannot be told (the holder text says why)
            return f"the database is busy: {self.holder}; try again"
        return f"the database is busy: {self.holder} since {local_time(self.since)}; try again"

    def as_dict(self) -> dict[str, object]:
        since = None if self.since is None else self.since.isoformat()
        said = {"reason": self.one_line(), "holder": self.holder, "since": since}
        return {**super().as_dict(), **said}


def local_time(moment: datetime) -> str:
    """A moment in this machine's local time, to the second, with its zone's name."""
    return moment.astimezone().strftime("%Y-%m-%d %H:%M:%S %Z")


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
