"""Read-only commands: the overview and one item's detail."""

from typing import Annotated

import typer

from tracker.cli.render import item_detail, overview_table
from tracker.cli.state import database, emit
from tracker.services import lineage, reconcile


def show_overview(ctx: typer.Context) -> None:
    """Open loans, allowance used, due dates and flags, most urgent first."""
    with database(ctx) as db:
        lines = reconcile.reconcile(db, specimens=False)
    emit(ctx, lines, lambda: overview_table(lines))


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
