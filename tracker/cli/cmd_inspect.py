"""Read-only commands: the overview (or the terminal interface) and one item's detail."""

import sys
from typing import Annotated

import typer

from tracker.cli.state import database, emit, state
from tracker.present.items import item_detail
from tracker.present.loans import overview_table
from tracker.services.read import lineage, reconcile


def show_overview(ctx: typer.Context) -> None:
    """Open loans, allowance used, due dates and flags, most urgent first."""
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


OVERVIEW_EPILOG = "Example: tracker --db tracker-demo.sqlite overview"


def show(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Any ID: specimen, powder, solution, loan, ...")],
) -> None:
    """Show an item, the lineage of everything made from it, and its custody history."""
    with database(ctx) as db:
        detail = lineage.show_item(db, item)
    emit(ctx, detail, lambda: item_detail(detail))


SHOW_EPILOG = "Example: tracker --json show SP-00001-W"
