"""Settings files a command reads (profiles, manifest mappings): read safely, and a
definition the service refuses named by the file and its key."""

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from tracker.cli.state import read_upload
from tracker.domain.errors import InputError, TrackerError, at_cell
from tracker.domain.textfiles import MAX_SETTINGS_BYTES, FileProblem, load_settings


def definition_file(path: Path) -> dict[str, Any]:
    """A settings file (TOML or JSON) read safely; problems name the file, row and column."""
    upload = read_upload(path, "FILE", limit=MAX_SETTINGS_BYTES) or {}
    try:
        return load_settings(upload["content"], path.suffix.lower())
    except FileProblem as problem:
        where = at_cell(path.name, problem.row, problem.column)
        raise InputError(where, None, problem.reason) from None


@contextmanager
def named_file(path: Path) -> Iterator[None]:
    """A definition the service refuses names the file and the key (its "column")."""
    try:
        yield
    except TrackerError as error:
        if error.field.startswith("definition"):
            error.field = f"{path.name}, key {error.field.removeprefix('definition.')}"
        raise
