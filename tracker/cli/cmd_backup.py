"""Backups: copy a live SQLite database, and put one back after checking its ledger."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.state import cli_fields, database, emit, errors, state, unlock
from tracker.present.text import done
from tracker.services.admin import backups
from tracker.services.ledger import chain

BACKUP_EPILOG = (
    "Example: tracker --db lab.sqlite backup /mnt/backup/lab-2026-11-30.sqlite. "
    "PostgreSQL: use pg_dump (see docs/backups.md)."
)
RESTORE_EPILOG = (
    "Example: tracker --db lab.sqlite --as amira restore /mnt/backup/lab-2026-11-30.sqlite "
    "--anchor head-2026-11-30.json"
)


def backup(
    ctx: typer.Context,
    path: Annotated[Path, typer.Argument(help="New file to write (never overwritten).")],
) -> None:
    """Copy the database while others may be writing; verify the copy's ledger.

    The copy is made with SQLite's online backup API and is readable by its owner only.
    Keep the head it prints (or `tracker ledger anchor`) with it.
    """
    with database(ctx) as db:
        made = backups.backup(db, path)
    emit(
        ctx,
        made,
        lambda: (
            f"backed up to {made.path} ({made.size_bytes} bytes, sha256 {made.sha256}); "
            + (
                f"ledger intact: head #{made.head_seq} {made.head_hash}"
                if made.ledger_ok
                else f"ledger BROKEN at {made.problem}"
            )
        ),
    )
    if not made.ledger_ok:
        errors.print("warning: the database's own ledger is broken; the copy keeps it as it is")
        raise typer.Exit(1)


def restore(
    ctx: typer.Context,
    path: Annotated[Path, typer.Argument(help="Backup file made by `tracker backup`.")],
    anchor: Annotated[
        Path | None,
        typer.Option("--anchor", help="Also require the backup to hold this anchored head."),
    ] = None,
    accept_loss: Annotated[
        bool,
        typer.Option("--accept-loss", help="Restore even if newer events would be lost."),
    ] = False,
) -> None:
    """Replace the database with a backup, only if the backup's ledger verifies.

    Nothing is replaced when the backup's chain is broken, when it misses the given
    anchor, or when the database holds newer events (unless --accept-loss, which needs
    a manager). The
    replaced file is kept beside it (<file>.replaced-<time>), and the restore is
    recorded in the restored ledger.
    """
    kept = chain.read_anchor(anchor) if anchor is not None else None
    settings = state(ctx)
    with cli_fields(ctx):
        restored = backups.open_backup(path)  # the restore is signed in the backup's ledger
        try:
            unlock(restored, settings.actor)
        finally:
            restored.close()
    answer = backups.restore(
        settings.target, settings.actor, path, accept_loss=accept_loss, anchor=kept
    )
    item = answer.item
    aside = item.replaced_kept_as
    kept_text = f"; the replaced file is kept as {aside}" if aside else ""
    lost_text = f"; {item.events_lost} newer event(s) dropped" if item.events_lost else ""
    emit(ctx, answer, lambda: done(answer, f"restored {item.restored_from}{kept_text}{lost_text}"))
