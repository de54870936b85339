"""Every file a person hands over: read whole, for a service that keeps it by its bytes.

One reader for the command line and the interface alike, so a file that is missing, a
folder, unreadable or far too large is refused in the same words wherever it was named:
one line naming the field and the path, before any database work. It sits beside
:mod:`tracker.db.outputs`, the one writer, and like it uses the standard library only.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from tracker.domain.errors import InputError

# Bigger than any file a service accepts, so the service's own limit names the problem;
# only a file far beyond it is refused here, before it is read into memory at all.
MAX_UPLOAD_BYTES = 256 * 1024 * 1024


def read_upload(
    path: Path | None, field: str, limit: int = MAX_UPLOAD_BYTES
) -> dict[str, Any] | None:
    """The file's name and bytes for a service's ``Upload``; None when no path was given.

    ``field`` names what the path was typed into (an option, a form's field), so the
    refusal names it: ``photo: /tmp/x.jpg: cannot be read (No such file or directory)``.
    A leading ``~`` is the person's home folder, as a shell would read it.
    """
    return None if path is None else read_file(path, field, limit)


def read_file(path: Path, field: str, limit: int = MAX_UPLOAD_BYTES) -> dict[str, Any]:
    """A named file's name and bytes, refused in one line naming ``field`` and the path."""
    path = path.expanduser()
    try:
        with path.open("rb") as handle:
            content = handle.read(limit + 1)
    except OSError as error:
        raise InputError(field, str(path), f"cannot be read ({error.strerror})") from None
    if len(content) > limit:
        raise InputError(field, str(path), f"is larger than {limit:,} bytes: refused")
    return {"filename": path.name, "content": content}


def read_typed_path(text: str, field: str, missing: str) -> dict[str, Any]:
    """A path typed into a form: ``missing`` says what to type when the field is empty."""
    if not text.strip():
        raise InputError(field, None, missing)
    return read_file(Path(text.strip()), field)
