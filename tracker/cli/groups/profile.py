"""``tracker profile``: column mapping profiles for instrument exports."""

import json
from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.fields import Fills
from tracker.cli.settings_files import definition_file, named_file
from tracker.cli.state import database, emit, perform
from tracker.present.text import done
from tracker.services.instrument import sessions

app = typer.Typer(
    help="Column mapping profiles for instrument exports.",
    no_args_is_help=True,
    epilog="Example: tracker profile list",
)


@app.command(
    "save", epilog="Example: tracker profile save mc-ca demo_db/instrument/mc-ca-profile.toml"
)
def profile_save(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name to save it under.")],
    file: Annotated[
        Path, typer.Argument(help="TOML or JSON file (see schemas/profile)."), Fills("definition")
    ],
) -> None:
    """Save a column mapping profile (replaces one of the same name)."""
    with named_file(file):
        answer = perform(
            ctx, sessions.save_profile, {"name": name, "definition": definition_file(file)}
        )
    emit(ctx, answer, lambda: done(answer, f"profile {name}"))


@app.command("list", epilog="Example: tracker --json profile list")
def profile_list(ctx: typer.Context) -> None:
    """List saved profiles."""
    with database(ctx) as db:
        rows = sessions.list_profiles(db)
    emit(
        ctx,
        rows,
        lambda: (
            "\n".join(f"{p.name}: {json.dumps(p.definition)}" for p in rows) or "no profiles yet"
        ),
    )
