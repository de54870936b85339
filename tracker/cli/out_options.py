"""What every command that writes a file shares: its ``--force`` option and what it says,
and ``--despite-discrepancies`` for the reports and exports that vouch for a loan's books.

The rules themselves (never the database, never over a file unless forced, published
whole) live in :mod:`tracker.db.outputs`; this only spells them for the command line.
"""

from pathlib import Path
from typing import Annotated

import typer

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
