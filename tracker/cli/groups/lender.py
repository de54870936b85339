"""``tracker lender``: the institutions that lend specimens."""

from typing import Annotated

import typer

from tracker.cli.state import database, emit, perform
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table
from tracker.services.loans import lending

Opt = typer.Option

app = typer.Typer(
    epilog="Example: tracker lender list",
    help="Institutions that lend specimens.",
    no_args_is_help=True,
)


@app.command("add", epilog="Example: tracker lender add 'Kestrel Fen Museum' --code KFM")
def lender_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="The institution's name.")],
    institution_code: Annotated[
        str | None, Opt("--code", help="Darwin Core institutionCode.")
    ] = None,
    contact_name: Annotated[str | None, Opt("--contact", help="Contact person.")] = None,
    contact_email: Annotated[str | None, Opt("--email", help="Contact e-mail.")] = None,
) -> None:
    """Register a lending institution."""
    request = {
        "name": name,
        "institution_code": institution_code,
        "contact_name": contact_name,
        "contact_email": contact_email,
    }
    answer = perform(ctx, lending.add_lender, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {name}"))


@app.command("list", epilog="Example: tracker lender list")
def lender_list(ctx: typer.Context) -> None:
    """List lenders."""
    with database(ctx) as db:
        rows = lending.list_lenders(db)

    def table() -> AlignedTable:
        t = plain_table("id", "name", "code", "contact")
        for r in rows:
            t.add_row(r.id, r.name, r.institution_code or "", r.contact_name or "")
        return t

    emit(ctx, rows, table)
