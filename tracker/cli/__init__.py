"""The ``tracker`` command: its global options, and the table of its command modules.

Each group of commands is one module of :mod:`tracker.cli.groups` holding its Typer app
and every command of it; this module only adds them (``COMMANDS``).
"""

import importlib
from typing import Annotated

import typer

from tracker import __version__
from tracker.cli.groups import inspecting
from tracker.cli.state import CommandGroup, State, TrackerGroup

app = typer.Typer(
    cls=TrackerGroup,
    help="Sample tracking and chain of custody for isotope-geochemistry labs.\n\n"
    "Run with no command to open the terminal interface (on a terminal) or print the loans "
    "overview (when the output is piped or --json is given).",
    epilog="Example: tracker --db lab.sqlite --as amira show SP-00001-W",
    add_completion=False,
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"tracker {__version__}")
        raise typer.Exit()


@app.callback(invoke_without_command=True)
def root(
    ctx: typer.Context,
    db: Annotated[
        str | None,
        typer.Option("--db", envvar="TRACKER_DB", help="Database file or URL (postgresql://...)."),
    ] = None,
    actor: Annotated[
        str | None,
        typer.Option(
            "--as", envvar="TRACKER_OPERATOR", help="Operator code recorded in the ledger."
        ),
    ] = None,
    as_json: Annotated[
        bool, typer.Option("--json", help="Print exactly one JSON document on stdout.")
    ] = False,
    version: Annotated[
        bool, typer.Option("--version", callback=_version, is_eager=True, help="Show the version.")
    ] = False,
) -> None:
    """Global options; with no command, open the terminal interface or show the overview."""
    ctx.obj = State(db=db, actor=actor, as_json=as_json)
    if ctx.invoked_subcommand is None:
        inspecting.open_or_overview(ctx)


# Every command module, in the order `tracker --help` lists them: a group's name and its
# module, or None for a module whose commands stand at the top level. Each module defines
# its `app` and every command of it; nothing else registers commands.
COMMANDS: tuple[tuple[str | None, str], ...] = (
    (None, "setup"),
    (None, "inspecting"),
    (None, "bench"),
    (None, "accounts"),
    ("operator", "operator"),
    ("key", "key"),
    ("location", "location"),
    ("lender", "lender"),
    ("loan", "loan"),
    ("specimen", "specimen"),
    ("reference", "reference"),
    ("material", "material"),
    ("profile", "profile"),
    ("session", "session"),
    ("curve", "curve"),
    ("report", "report"),
    ("manifest", "manifest"),
    ("export", "export"),
    ("shipment", "shipment"),
    ("batch", "batch"),
    ("labels", "labels"),
    ("ledger", "ledger"),
    ("correct", "correct"),
    ("db", "db"),
)


def _register() -> None:
    for name, module in COMMANDS:
        group = importlib.import_module(f"tracker.cli.groups.{module}").app
        app.add_typer(group, name=name, cls=CommandGroup)


_register()


def main() -> None:
    """Console-script entry point."""
    app(prog_name="tracker")
