"""Top-level commands that read one thing: the overview (or the terminal interface),
an item's detail, a scanned label.

Each command imports the services and renderers it uses when it runs: these are the
commands a person runs most, each for one quick answer, and none should pay for loading
what the others need.
"""

import sys
from typing import Annotated

import typer
from rich.text import Text

from tracker.cli.state import database, emit, state
from tracker.domain.text_rules import visible

Arg = typer.Argument

app = typer.Typer()  # its commands join the top level (see tracker/cli/__init__.py)


OVERVIEW_EPILOG = "Example: tracker --db tracker-demo.sqlite overview"


@app.command("overview", epilog=OVERVIEW_EPILOG)
def show_overview(ctx: typer.Context) -> None:
    """Open loans, allowance used, due dates and flags, most urgent first."""
    from tracker.present.loans import overview_table
    from tracker.services.read import reconcile

    with database(ctx) as db:
        lines = reconcile.reconcile(db, specimens=False)
    emit(ctx, lines, lambda: overview_table(lines))


def interactive(ctx: typer.Context) -> bool:
    """A person at a terminal (not a pipe, not a script asking for --json)."""
    return not state(ctx).as_json and sys.stdin.isatty() and sys.stdout.isatty()


def open_or_overview(ctx: typer.Context) -> None:
    """The terminal interface for a person at a terminal; the printed overview otherwise."""
    if not interactive(ctx):
        show_overview(ctx)
        return
    from tracker.ui import run_tui

    code = run_tui(state(ctx).target, state(ctx).actor)
    if code:
        raise typer.Exit(code)


SHOW_EPILOG = "Example: tracker --json show SP-00001-W"


@app.command("show", epilog=SHOW_EPILOG)
def show(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Any ID: specimen, powder, solution, loan, ...")],
) -> None:
    """Show an item, the lineage of everything made from it, and its custody history."""
    from tracker.present.items import item_detail
    from tracker.services.read import lineage

    with database(ctx) as db:
        detail = lineage.show_item(db, item)
    emit(ctx, detail, lambda: item_detail(detail))


LOOKUP_EPILOG = "Example: tracker lookup HTTPS://LAB.EXAMPLE/T/PW-00001-5"


@app.command("lookup", epilog=LOOKUP_EPILOG)
def lookup(
    ctx: typer.Context,
    scanned: Annotated[str, Arg(help="What the scanner typed: an ID or the lab's link.")],
) -> None:
    """Say what a scanned label (or a typed ID) names: the item, its label, where it is."""
    from tracker.services.labels import handling

    with database(ctx) as db:
        found = handling.read_scan(db, scanned)

    def human() -> Text:
        text = Text.assemble((found.id, "bold"), visible(f"  {found.kind}  {found.what}"))
        if found.status:
            text.append(f"  [{found.status}]")
        if found.label:
            text.append(visible("\nlabel: " + " / ".join(found.label)))
        text.append(visible(f"\nlocation: {found.location or 'not recorded'}"))
        for ancestor in found.ancestors:
            text.append(visible(f"\nfrom: {ancestor}"))
        return text

    emit(ctx, found, human)
