"""Commands that set a database up: init, operators, locations, schema upgrades."""

from pathlib import Path
from typing import Annotated

import typer
from rich.table import Table

from tracker.cli.state import (
    cli_fields,
    database,
    emit,
    passphrase,
    perform,
    read_upload,
    state,
)
from tracker.domain.models import LocationKind, Role
from tracker.present.text import done, plain_table
from tracker.services.admin import backdating, setup

operator_app = typer.Typer(
    epilog="Example: tracker operator list", help="People who record events.", no_args_is_help=True
)
location_app = typer.Typer(
    epilog="Example: tracker location list",
    help="Buildings, rooms, cabinets, shelves, boxes, positions.",
    no_args_is_help=True,
)
db_app = typer.Typer(
    epilog="Example: tracker db upgrade",
    help="Database schema maintenance; logins on a shared database.",
    no_args_is_help=True,
)


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

    with cli_fields(ctx):
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


INIT_EPILOG = "Example: tracker --db lab.sqlite init --code amira --name 'Amira Haddad'"


@operator_app.command(
    "add",
    epilog="Example: tracker --as amira operator add tomas --name 'Tomas Rieger' --role technician "
    "--key tomas.pub",
)
def operator_add(
    ctx: typer.Context,
    code: Annotated[str, typer.Argument(help="Short code typed after --as.")],
    name: Annotated[str, typer.Option("--name", help="Full name.")],
    role: Annotated[Role, typer.Option("--role", help="technician or manager.")] = Role.TECHNICIAN,
    key: Annotated[
        Path | None,
        typer.Option("--key", help="Their public key file (from `tracker key new`), if made."),
    ] = None,
) -> None:
    """Register an operator, and their public signing key if given (managers only)."""
    request: dict[str, object] = {"code": code, "name": name, "role": role}
    if key is not None:
        request["public_key"] = _public_key(ctx, key, "--key")
    answer = perform(ctx, setup.add_operator, request)
    emit(ctx, answer, lambda: done(answer, f"operator {code} ({role.value})"))


def _public_key(ctx: typer.Context, path: Path, option: str) -> str:
    from tracker.services.admin.keys import public_key_from

    upload = read_upload(path, option, limit=64 * 1024)
    assert upload is not None
    with cli_fields(ctx):
        return public_key_from(upload["content"], option)


@operator_app.command(
    "deactivate",
    epilog="Example: tracker --as amira operator deactivate tomas --reason 'left the lab'",
)
def operator_deactivate(
    ctx: typer.Context,
    code: Annotated[str, typer.Argument(help="The operator to deactivate.", metavar="OPERATOR")],
    reason: Annotated[str, typer.Option("--reason", help="Why, for the ledger.")],
) -> None:
    """Stop an operator from recording anything; their keys sign nothing more (managers)."""
    answer = perform(ctx, setup.deactivate_operator, {"operator": code, "reason": reason})
    emit(ctx, answer, lambda: done(answer, f"operator {code} deactivated"))


@operator_app.command(
    "role",
    epilog="Example: tracker --as amira operator role priya manager --reason 'lab manager now'",
)
def operator_role(
    ctx: typer.Context,
    code: Annotated[str, typer.Argument(help="The operator.", metavar="OPERATOR")],
    role: Annotated[Role, typer.Argument(help="technician or manager.")],
    reason: Annotated[str, typer.Option("--reason", help="Why, for the ledger.")],
) -> None:
    """Make an operator a manager or a technician (managers; the last manager stays one)."""
    request = {"operator": code, "role": role, "reason": reason}
    answer = perform(ctx, setup.change_role, request)
    emit(ctx, answer, lambda: done(answer, f"operator {code} is now a {role.value}"))


@operator_app.command("list", epilog="Example: tracker operator list")
def operator_list(ctx: typer.Context) -> None:
    """List operators and their roles."""
    with database(ctx) as db:
        rows = setup.list_operators(db)

    def table() -> Table:
        logins = any(o.login for o in rows)  # shared databases: each person's own login
        t = plain_table("code", "name", "role", "active", *(["login"] if logins else []))
        for o in rows:
            login = [o.login or "none"] if logins else []
            t.add_row(o.code, o.name, o.role, "yes" if o.active else "no", *login)
        return t

    emit(ctx, rows, table)


@location_app.command("add", epilog="Example: tracker location add box 'Box 7' --in LC-00004-X")
def location_add(
    ctx: typer.Context,
    kind: Annotated[LocationKind, typer.Argument(help="What kind of place.")],
    name: Annotated[str, typer.Argument(help="Its name, e.g. 'Box 7' or '2.14'.")],
    inside: Annotated[str | None, typer.Option("--in", help="The enclosing location's ID.")] = None,
) -> None:
    """Add a place to the location tree."""
    answer = perform(ctx, setup.add_location, {"kind": kind, "name": name, "parent": inside})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {answer.item.path}"))


@location_app.command("list", epilog="Example: tracker location list")
def location_list(ctx: typer.Context) -> None:
    """List every location with its full path."""
    with database(ctx) as db:
        rows = setup.list_locations(db)

    def table() -> Table:
        t = plain_table("id", "kind", "path")
        for loc in rows:
            t.add_row(loc.id, loc.kind, loc.path)
        return t

    emit(ctx, rows, table)


@db_app.command("upgrade", epilog="Example: tracker --db lab.sqlite db upgrade")
def db_upgrade(ctx: typer.Context) -> None:
    """Bring the database schema to this version (SQLite files are backed up first)."""
    from tracker.db.database import upgrade_database

    old, new = upgrade_database(state(ctx).target)
    answer = {"from": old, "to": new, "changed": old != new}
    emit(ctx, answer, lambda: f"schema {old} → {new}" if old != new else f"schema already at {new}")


BACKDATING_EPILOG = "Example: tracker --as amira backdating-window '4 days'"


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
