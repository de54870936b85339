"""``tracker db``: schema upgrades, and one login per person on a shared PostgreSQL database."""

from typing import Annotated

import typer

from tracker.cli.state import database, emit, state
from tracker.db.logins import DEFAULT_GROUP
from tracker.present.text import done
from tracker.services.admin import logins

Group = Annotated[
    str, typer.Option("--group", help="The group role every workstation login is a member of.")
]
Show = Annotated[bool, typer.Option("--print", help="Print the SQL instead of running it.")]

app = typer.Typer(
    epilog="Example: tracker db upgrade",
    help="Database schema maintenance; logins on a shared database.",
    no_args_is_help=True,
)


@app.command("upgrade", epilog="Example: tracker --db lab.sqlite db upgrade")
def db_upgrade(ctx: typer.Context) -> None:
    """Bring the database schema to this version (SQLite files are backed up first)."""
    from tracker.db.database import upgrade_database

    old, new = upgrade_database(state(ctx).target)
    answer = {"from": old, "to": new, "changed": old != new}
    emit(ctx, answer, lambda: f"schema {old} → {new}" if old != new else f"schema already at {new}")


def _sql(statements: list[str], *notes: str) -> str:
    return "\n".join([*(f"{statement};" for statement in statements), *notes])


GRANTS_EPILOG = (
    "Example: tracker --db postgresql://tracker_owner@db.lab/tracker_lab db workstation-grants"
)


@app.command("workstation-grants", epilog=GRANTS_EPILOG)
def workstation_grants(
    ctx: typer.Context, group: Group = DEFAULT_GROUP, show: Show = False
) -> None:
    """Give the workstation group its privileges: read everything, add rows, change only what
    the services change, delete nothing. Run as the owner of the tables, once and again
    after every `tracker db upgrade`.
    """
    request = {"group": group}
    with database(ctx) as db:
        statements = logins.group_sql(db, request) if show else logins.grant_group(db, request)
    answer = {"group": group, "statements": statements, "ran": not show}
    emit(
        ctx,
        answer,
        lambda: (
            _sql(statements)
            if show
            else f"workstation group {group}: {len(statements)} statements run"
        ),
    )


ADD_LOGIN_EPILOG = (
    "Example: tracker --db postgresql://tracker_owner@db.lab/tracker_lab --as amira "
    "db add-login tomas tomas_h"
)


@app.command("add-login", epilog=ADD_LOGIN_EPILOG)
def add_login(
    ctx: typer.Context,
    operator: Annotated[str, typer.Argument(help="The person's operator code.")],
    login: Annotated[str, typer.Argument(help="Their database login (role name).")],
    group: Group = DEFAULT_GROUP,
    show: Show = False,
) -> None:
    """Give a person their own database login: create it in the workstation group (unless it
    exists) and bind it to their operator (a manager's ledger event). With --print, show the
    SQL for whoever may create roles; run the command again without it to bind.
    """
    request = {"login": login, "group": group}
    with database(ctx) as db:
        if show:
            statements = logins.login_sql(db, request)
            printed = {"operator": operator, "login": login, "statements": statements}
            emit(
                ctx,
                printed,
                lambda: _sql(
                    statements,
                    f"-- then give {login} a password (psql: \\password {login}) or the lab's "
                    "own authentication, and bind it, as a manager:",
                    f"--   tracker --db URL --as MANAGER db add-login {operator} {login}",
                ),
            )
            return
        ran = logins.create_login(db, request)
        bound = logins.bind_login(db, state(ctx).actor, {"operator": operator, "login": login})
    answer = {"created": ran, "bound": bound}
    emit(ctx, answer, lambda: done(bound, f"login {login} for operator {operator}"))
