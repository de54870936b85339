"""``tracker operator``: the people who record events, their roles, their keys."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.state import (
    database,
    emit,
    perform,
    read_upload,
)
from tracker.domain.models import Role
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table
from tracker.services.admin import setup

app = typer.Typer(
    epilog="Example: tracker operator list", help="People who record events.", no_args_is_help=True
)


@app.command(
    "add",
    epilog="Example: tracker --as amira operator add tomas --name 'Tomas Rieger' --role technician "
    "--key tomas.pub",
)
def operator_add(
    ctx: typer.Context,
    code: Annotated[str, typer.Argument(help="Short code typed after --as.")],
    name: Annotated[str, typer.Option("--name", help="Full name.")],
    role: Annotated[Role, typer.Option("--role", help="technician or manager.")] = Role.TECHNICIAN,
    public_key: Annotated[
        Path | None,
        typer.Option("--key", help="Their public key file (from `tracker key new`), if made."),
    ] = None,
) -> None:
    """Register an operator, and their public signing key if given (managers only)."""
    request: dict[str, object] = {"code": code, "name": name, "role": role}
    if public_key is not None:
        request["public_key"] = _public_key(ctx, public_key, "public key")
    answer = perform(ctx, setup.add_operator, request)
    emit(ctx, answer, lambda: done(answer, f"operator {code} ({role.value})"))


def _public_key(ctx: typer.Context, path: Path, option: str) -> str:
    from tracker.services.admin.keys import public_key_from

    upload = read_upload(path, option, limit=64 * 1024)
    assert upload is not None
    return public_key_from(upload["content"], option)


@app.command(
    "deactivate",
    epilog="Example: tracker --as amira operator deactivate tomas --reason 'left the lab'",
)
def operator_deactivate(
    ctx: typer.Context,
    operator: Annotated[
        str, typer.Argument(help="The operator to deactivate.", metavar="OPERATOR")
    ],
    reason: Annotated[str, typer.Option("--reason", help="Why, for the ledger.")],
) -> None:
    """Stop an operator from recording anything; their keys sign nothing more (managers)."""
    answer = perform(ctx, setup.deactivate_operator, {"operator": operator, "reason": reason})
    emit(ctx, answer, lambda: done(answer, f"operator {operator} deactivated"))


@app.command(
    "role",
    epilog="Example: tracker --as amira operator role priya manager --reason 'lab manager now'",
)
def operator_role(
    ctx: typer.Context,
    operator: Annotated[str, typer.Argument(help="The operator.", metavar="OPERATOR")],
    role: Annotated[Role, typer.Argument(help="technician or manager.")],
    reason: Annotated[str, typer.Option("--reason", help="Why, for the ledger.")],
) -> None:
    """Make an operator a manager or a technician (managers; the last manager stays one)."""
    request = {"operator": operator, "role": role, "reason": reason}
    answer = perform(ctx, setup.change_role, request)
    emit(ctx, answer, lambda: done(answer, f"operator {operator} is now a {role.value}"))


@app.command("list", epilog="Example: tracker operator list")
def operator_list(ctx: typer.Context) -> None:
    """List operators and their roles."""
    with database(ctx) as db:
        rows = setup.list_operators(db)

    def table() -> AlignedTable:
        logins = any(o.login for o in rows)  # shared databases: each person's own login
        t = plain_table("code", "name", "role", "active", *(["login"] if logins else []))
        for o in rows:
            login = [o.login or "none"] if logins else []
            t.add_row(o.code, o.name, o.role, "yes" if o.active else "no", *login)
        return t

    emit(ctx, rows, table)
