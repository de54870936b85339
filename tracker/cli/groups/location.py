"""``tracker location``: the tree of places where things are kept."""

from typing import Annotated

import typer

from tracker.cli.state import (
    database,
    emit,
    perform,
)
from tracker.domain.models import LocationKind
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table
from tracker.services.admin import setup

app = typer.Typer(
    epilog="Example: tracker location list",
    help="Buildings, rooms, cabinets, shelves, boxes, positions.",
    no_args_is_help=True,
)


@app.command("add", epilog="Example: tracker location add box 'Box 7' --in LC-00004-F")
def location_add(
    ctx: typer.Context,
    kind: Annotated[LocationKind, typer.Argument(help="What kind of place.")],
    name: Annotated[str, typer.Argument(help="Its name, e.g. 'Box 7' or '2.14'.")],
    parent: Annotated[str | None, typer.Option("--in", help="The enclosing location's ID.")] = None,
) -> None:
    """Add a place to the location tree."""
    answer = perform(ctx, setup.add_location, {"kind": kind, "name": name, "parent": parent})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {answer.item.path}"))


@app.command("list", epilog="Example: tracker location list")
def location_list(ctx: typer.Context) -> None:
    """List every location with its full path."""
    with database(ctx) as db:
        rows = setup.list_locations(db)

    def table() -> AlignedTable:
        t = plain_table("id", "kind", "path")
        for loc in rows:
            t.add_row(loc.id, loc.kind, loc.path)
        return t

    emit(ctx, rows, table)
