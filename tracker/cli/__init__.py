"""The ``tracker`` command: its global options, and the table of its commands.

Each group of commands is one module of :mod:`tracker.cli.groups` holding its Typer app
and every command of it. This module names them in one table (``COMMANDS``) and loads a
command's module only when that command runs (or its own help is asked for): `--version`
and `--help` load no command, no service and no database library.
"""

import importlib
from dataclasses import dataclass
from functools import cache
from typing import Annotated, Any

import typer
from typer.models import TyperInfo

from tracker import __version__
from tracker.cli.state import CommandGroup, State, TrackerGroup


@dataclass(frozen=True)
class Entry:
    """One command of `tracker`, as its help lists it."""

    name: str
    module: str  # of tracker.cli.groups
    help: str  # its line in `tracker --help`
    group: bool  # a group of commands (the module's app), else one command of the module


class Commands(TrackerGroup):
    """`tracker`'s commands, each loaded from its module when it is first asked for."""

    def list_commands(self, ctx: Any) -> list[str]:
        return [entry.name for entry in COMMANDS]

    def get_command(self, ctx: Any, cmd_name: str) -> Any:
        entry = BY_NAME.get(cmd_name)
        return None if entry is None else load(entry)

    def format_commands(self, ctx: Any, formatter: Any) -> None:
        """The list of commands from the table, each line whole, loading none of them."""
        with formatter.section("Commands"):
            formatter.write_dl([(entry.name, entry.help) for entry in COMMANDS])


app = typer.Typer(
    cls=Commands,
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
        from tracker.cli.groups import inspecting

        inspecting.open_or_overview(ctx)


# Every command, in the order `tracker --help` lists them: its name, the module of
# tracker.cli.groups defining it (a group's whole Typer app, or one command of a module whose
# commands stand at the top level) and its line in `tracker --help`, so that listing them
# loads none of them. tests/cli/test_help.py holds each line equal to the command's own help.
COMMANDS: tuple[Entry, ...] = (
    Entry(
        "init",
        "setup",
        "Create a new database with you as its first manager and open its ledger.",
        group=False,
    ),
    Entry(
        "backdating-window",
        "setup",
        "Show or set (managers) how far back an entry may be dated without a manager.",
        group=False,
    ),
    Entry(
        "recovery-window",
        "setup",
        "Show or set (managers) the dissolution recoveries accepted without a flag.",
        group=False,
    ),
    Entry(
        "demo",
        "setup",
        "Build the demo database (invented loans and specimens) and open it.",
        group=False,
    ),
    Entry(
        "backup",
        "setup",
        "Copy the database while others may be writing; verify the copy's ledger.",
        group=False,
    ),
    Entry(
        "restore",
        "setup",
        "Replace the database with a backup, only if the backup's ledger verifies.",
        group=False,
    ),
    Entry(
        "overview",
        "inspecting",
        "Open loans, allowance used, due dates and flags, most urgent first.",
        group=False,
    ),
    Entry(
        "show",
        "inspecting",
        "Show an item, the lineage of everything made from it, and its custody history.",
        group=False,
    ),
    Entry(
        "lookup",
        "inspecting",
        "Say what a scanned label (or a typed ID) names: the item, its label, where it is.",
        group=False,
    ),
    Entry(
        "checkin",
        "bench",
        "Receive a listed specimen: note its condition and where it goes.",
        group=False,
    ),
    Entry(
        "return",
        "bench",
        "Send a specimen back to its lender, recording its condition.",
        group=False,
    ),
    Entry("move", "bench", "Move a specimen or vial to another location.", group=False),
    Entry(
        "drill",
        "bench",
        "Drill powder from a specimen within the loan's terms; mass by difference with its u.",
        group=False,
    ),
    Entry(
        "dissolve",
        "bench",
        "Dissolve all or part of a powder; the solution mass is weighed by difference.",
        group=False,
    ),
    Entry(
        "concentration",
        "bench",
        "Record an element concentration measured in a solution.",
        group=False,
    ),
    Entry("aliquot", "bench", "Weigh out an aliquot of a solution.", group=False),
    Entry(
        "dispose",
        "bench",
        "End a vial's life in the lab, weighing what is left in it as it goes.",
        group=False,
    ),
    Entry(
        "plan",
        "accounts",
        "How much powder to drill for the planned analyses, checked against the loan's terms.",
        group=False,
    ),
    Entry(
        "reconcile",
        "accounts",
        "Each loan's books: permitted, drilled, dissolved, powder left, returned, flags.",
        group=False,
    ),
    Entry(
        "results",
        "accounts",
        "Results per specimen (δ with 2SD and n), optionally on another reference scale.",
        group=False,
    ),
    Entry(
        "screen",
        "accounts",
        "Ages each specimen's ⁸⁷Sr/⁸⁶Sr allows on the loan's curve, and whether they fit.",
        group=False,
    ),
    Entry("operator", "operator", "People who record events.", group=True),
    Entry(
        "key",
        "key",
        "Personal signing keys: every event is signed by its operator's key.",
        group=True,
    ),
    Entry(
        "location", "location", "Buildings, rooms, cabinets, shelves, boxes, positions.", group=True
    ),
    Entry("lender", "lender", "Institutions that lend specimens.", group=True),
    Entry("loan", "loan", "Loan agreements and their terms.", group=True),
    Entry("specimen", "specimen", "Specimens listed on loans.", group=True),
    Entry("reference", "reference", "Reference materials and bracketing standards.", group=True),
    Entry("material", "material", "Materials and their element mass fractions.", group=True),
    Entry("profile", "profile", "Column mapping profiles for instrument exports.", group=True),
    Entry(
        "session", "session", "Instrument sessions: import, match rows, reduce, plot.", group=True
    ),
    Entry("curve", "curve", "Strontium reference curves for age screening.", group=True),
    Entry("report", "report", "Reports for lenders.", group=True),
    Entry("manifest", "manifest", "Lenders' specimen lists (Darwin Core headings).", group=True),
    Entry(
        "export", "export", "Darwin Core and JSON exports for the lender's database.", group=True
    ),
    Entry("shipment", "shipment", "Parcels to and from lenders.", group=True),
    Entry("batch", "batch", "Ion-exchange column batches.", group=True),
    Entry(
        "labels",
        "labels",
        "Labels: the print queue, printing on label stocks (PDF), previews (PNG).",
        group=True,
    ),
    Entry("ledger", "ledger", "The hash-chained custody ledger.", group=True),
    Entry(
        "correct",
        "correct",
        "Correct a recorded value: the original stays in the history, the correction rules.",
        group=True,
    ),
    Entry("db", "db", "Database schema maintenance; logins on a shared database.", group=True),
)
BY_NAME = {entry.name: entry for entry in COMMANDS}


@cache
def _module_commands(module: str, name: str | None) -> Any:
    """A command module's Typer app as a click group (named when it is a group of its own),
    built as `tracker` builds every group (no rich markup, refusals for the command that ran)."""
    typer_app = importlib.import_module(f"tracker.cli.groups.{module}").app
    info = TyperInfo(typer_app, name=name, cls=CommandGroup)
    return typer.main.get_group_from_info(
        info, pretty_exceptions_short=True, suggest_commands=True, rich_markup_mode=None
    )


def load(entry: Entry) -> Any:
    """The command ``entry`` names, its module loaded now (and kept)."""
    if entry.group:
        return _module_commands(entry.module, entry.name)
    return _module_commands(entry.module, None).commands[entry.name]


def main() -> None:
    """Console-script entry point."""
    app(prog_name="tracker")
