"""Top-level commands that set a database up and keep it safe: init, the backdating
window, the dissolution recovery window, the demo, backup and restore."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.fields import Fills
from tracker.cli.groups import inspecting
from tracker.cli.state import (
    database,
    emit,
    errors,
    passphrase,
    perform,
    program,
    state,
    unlock,
)
from tracker.domain.models import Role
from tracker.present.text import done
from tracker.services.admin import backdating, backups, recovery_window, setup
from tracker.services.ledger import chain

app = typer.Typer()  # its commands join the top level (see tracker/cli/__init__.py)


INIT_EPILOG = "Example: tracker --db lab.sqlite init --code amira --name 'Amira Haddad'"


@app.command("init", epilog=INIT_EPILOG)
def init(
    ctx: typer.Context,
    code: Annotated[str, typer.Option("--code", help="Your operator code (what --as takes).")],
    name: Annotated[str, typer.Option("--name", help="Your full name.")],
) -> None:
    """Create a new database with you as its first manager and open its ledger.

    Makes your signing key (asking for a new passphrase, twice): the private key goes to
    your config folder, encrypted with it; the ledger's first event registers the public
    key and is signed with it.
    """
    from tracker.db.keyfiles import write_key
    from tracker.domain.signing import new_signer
    from tracker.services.admin.setup import init_database
    from tracker.services.core.inputs import parse

    parse(setup.NewOperator, {"code": code, "name": name})  # before any question
    signer = new_signer()
    key_file = write_key(code, signer, passphrase(f"your new key ({code})", new=True))
    try:
        db = init_database(state(ctx).target, {"code": code, "name": name}, signer=signer)
    except BaseException:
        key_file.path.unlink(missing_ok=True)  # the key of a ledger that was not opened
        raise
    try:
        answer = {
            "database": db.url,
            "operator": code,
            "role": Role.MANAGER.value,
            "key_id": signer.key_id,
            "key_file": str(key_file.path),
        }
        emit(
            ctx,
            answer,
            lambda: (
                f"created {db.url}; operator {code} (manager), signing key "
                f"{signer.key_id} kept in {key_file.path}"
            ),
        )
    finally:
        db.close()


BACKDATING_EPILOG = "Example: tracker --as amira backdating-window '4 days'"


@app.command("backdating-window", epilog=BACKDATING_EPILOG)
def backdating_window(
    ctx: typer.Context,
    window: Annotated[
        str | None,
        typer.Argument(
            help="How far back, with its unit: '4 days', '36 hours'.", show_default=False
        ),
    ] = None,
) -> None:
    """Show or set (managers) how far back an entry may be dated without a manager.

    An entry dated further back (drilled-at, received-at ... older than the window when it
    is recorded) needs a manager; it keeps both times and is flagged by reconcile and in
    the return report.
    """
    if window is None:
        with database(ctx) as db:
            shown = backdating.show_backdating_window(db)
        note = " (tracker's default)" if shown.default else ""
        emit(ctx, shown, lambda: f"backdating window: {shown.said}{note}")
        return
    answer = perform(ctx, backdating.set_backdating_window, {"window": window})
    emit(ctx, answer, lambda: done(answer, f"backdating window: {answer.item.said}"))


RECOVERY_EPILOG = "Example: tracker --as amira recovery-window 95 105"


@app.command("recovery-window", epilog=RECOVERY_EPILOG)
def recovery_window_command(
    ctx: typer.Context,
    low_percent: Annotated[
        float | None, typer.Argument(help="Lowest recovery accepted, %.", show_default=False)
    ] = None,
    high_percent: Annotated[
        float | None, typer.Argument(help="Highest recovery accepted, %.", show_default=False)
    ] = None,
) -> None:
    """Show or set (managers) the dissolution recoveries accepted without a flag.

    A solution's recovery is the element it holds over what the dissolved powder's material
    should hold; one outside the window is flagged by show and in the return report.
    """
    if low_percent is None and high_percent is None:
        with database(ctx) as db:
            shown = recovery_window.show_recovery_window(db)
        note = " (tracker's default)" if shown.default else ""
        emit(ctx, shown, lambda: f"dissolution recovery window: {shown.said}{note}")
        return
    request = {"low_percent": low_percent, "high_percent": high_percent}
    answer = perform(ctx, recovery_window.set_recovery_window, request)
    emit(ctx, answer, lambda: done(answer, f"dissolution recovery window: {answer.item.said}"))


DEMO_FILE = "tracker-demo.sqlite"


DEMO_EPILOG = f"Example: tracker demo --out {DEMO_FILE}"


@app.command("demo", epilog=DEMO_EPILOG)
def demo(
    ctx: typer.Context,
    out: Annotated[
        Path | None,
        typer.Option(
            "--out",
            help=f"New file for the demo database (an existing file is refused); default "
            f"the new file named by --db or TRACKER_DB, else {DEMO_FILE} here, or "
            "tracker-demo-2.sqlite … when that is taken.",
        ),
    ] = None,
    no_open: Annotated[
        bool,
        typer.Option("--no-open", help="Print the overview instead of opening the interface."),
    ] = False,
) -> None:
    """Build the demo database (invented loans and specimens) and open it.

    On a terminal the interface opens on the demo; piped, with --json or with --no-open
    the loans overview is printed instead. The demo's people sign with invented keys; their
    key files are left in your config folder, locked with the demo's passphrase
    "demo passphrase, invented" (README, Quick start).
    """
    from tracker.db.keyring import PROCESS
    from tracker.demo import build_demo, demo_file, demo_operators, demo_signer, free_demo_path

    named = state(ctx).db  # --db or TRACKER_DB: the demo is built there
    out = out or (demo_file(named) if named else free_demo_path(Path.cwd(), DEMO_FILE))
    steps = build_demo(out)
    for code in demo_operators():  # invented, public keys: the demo opens without asking
        PROCESS.add(demo_signer(code))
    errors.print(
        f"built {out} from the demo scenario ({steps} steps, all invented data)",
        markup=False,
        soft_wrap=True,
    )
    errors.print(
        f"explore it: {program()} --db {out} show KF-2026-014", markup=False, soft_wrap=True
    )
    state(ctx).db = str(out)
    if no_open:
        inspecting.show_overview(ctx)
    else:
        inspecting.open_or_overview(ctx)


BACKUP_EPILOG = (
    "Example: tracker --db lab.sqlite backup /mnt/backup/lab-2026-11-30.sqlite. "
    "PostgreSQL: use pg_dump (see docs/backups.md)."
)


@app.command("backup", epilog=BACKUP_EPILOG)
def backup(
    ctx: typer.Context,
    path: Annotated[
        Path, typer.Argument(help="New file to write (never overwritten)."), Fills("backup file")
    ],
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


RESTORE_EPILOG = (
    "Example: tracker --db lab.sqlite --as amira restore /mnt/backup/lab-2026-11-30.sqlite "
    "--anchor head-2026-11-30.json"
)


@app.command("restore", epilog=RESTORE_EPILOG)
def restore(
    ctx: typer.Context,
    path: Annotated[
        Path, typer.Argument(help="Backup file made by `tracker backup`."), Fills("backup file")
    ],
    anchor: Annotated[
        Path | None,
        typer.Option("--anchor", help="Also require the backup to hold this anchored head."),
        Fills("anchor file"),
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
