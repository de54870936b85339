"""What every command that writes a file shares: its ``--force`` option and what it says,
and ``--despite-discrepancies`` for the reports and exports that vouch for a loan's books.

The rules themselves (never the database, never over a file unless forced, published
whole) live in :mod:`tracker.db.outputs`; this only spells them for the command line.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from tracker.cli.state import errors
from tracker.db import outputs

if TYPE_CHECKING:
    from tracker.db.database import Database

Force = Annotated[
    bool,
    typer.Option(
        "--force",
        help="Replace an existing output file; the old one is kept beside it as "
        "<name>.replaced-<UTC time>. The database and its backups are never replaced.",
    ),
]


Despite = Annotated[
    bool,
    typer.Option(
        "--despite-discrepancies",
        help="Write it even though the loan's books differ from the ledger "
        "(`tracker ledger audit`); every discrepancy is then listed first in what is written.",
    ),
]


def kept_as(replaced: Path | None) -> str | None:
    """Where a replaced file was kept, for ``--json`` (None when nothing was replaced)."""
    return None if replaced is None else str(replaced)


def kept_note(replaced: Path | None) -> str:
    """What a person is told when ``--force`` moved a file aside (nothing otherwise)."""
    return f" (the file it replaced is kept as {replaced})" if replaced is not None else ""


def write_picture(db: Database, path: Path, picture: bytes, option: str, force: bool) -> None:
    """Write a drawn figure to a new file named by ``option`` (by the rules of
    :mod:`tracker.db.outputs`), saying on the error stream where a replaced file was kept."""
    written = outputs.write_new(
        path, picture, option, force=force, database=db.path, clock=db.clock
    )
    say_kept(written.replaced)


def say_kept(replaced: Path | None) -> None:
    """Tell the person, on the error stream, where ``--force`` kept the file it replaced."""
    if replaced is not None:
        errors.print(f"kept the replaced file as {replaced}", markup=False, soft_wrap=True)
