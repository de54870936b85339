"""One login per person on a shared PostgreSQL database.

Three steps, each said once here and shown by the CLI: the owner of the tables grants the
workstation group its privileges (``group_sql``); whoever may create roles creates a
person's login in that group (``login_sql``); a manager binds the login to the person's
operator (``bind_login``, one ledger event). From then on the login records as that
operator only (``uow.agree_with_login``, and the database itself: revision 0010).

SQLite files have no logins: each of these is refused there, and nothing else changes.
"""

from __future__ import annotations

from typing import Annotated

from pydantic import AfterValidator
from sqlalchemy import select, text

from tracker.db import logins
from tracker.db.database import Database
from tracker.domain.base import Base
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import Operator
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, ShortCode, parse
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, OperatorView


def _role_name(value: str) -> str:
    problem = logins.name_problem(value)
    if problem:
        raise ValueError(problem)
    return value


RoleName = Annotated[str, AfterValidator(_role_name)]


class BindLogin(Request):
    operator: ShortCode
    login: RoleName


class LoginSetup(Request):
    login: RoleName
    group: RoleName = logins.DEFAULT_GROUP


class GroupSetup(Request):
    group: RoleName = logins.DEFAULT_GROUP


def _shared_only(db: Database) -> None:
    if db.backend != "postgresql":
        raise InputError(
            "database",
            db.url,
            "logins belong to a shared PostgreSQL database; a SQLite file has none",
        )


def group_sql(db: Database, data: GroupSetup | Raw) -> list[str]:
    """The statements that give the workstation group its privileges (see db/logins.py)."""
    request = parse(GroupSetup, data)
    _shared_only(db)
    with db.engine.connect() as connection:
        database, schema = connection.execute(
            text("SELECT current_database(), current_schema()")
        ).one()
    tables = [table.name for table in Base.metadata.sorted_tables]
    return logins.group_statements(database, schema, request.group, tables)


def grant_group(db: Database, data: GroupSetup | Raw) -> list[str]:
    """Run ``group_sql`` as the tables' owner, in one transaction; returns what it ran."""
    statements = group_sql(db, data)
    with db.engine.begin() as connection:
        who = logins.connected(connection)
        if not who.owner:
            raise RuleViolation(
                "database",
                who.login,
                "only the owner of the tables grants the workstation group its privileges; "
                "connect as the owner, or print the SQL for the owner to run",
            )
        for statement in statements:
            connection.execute(text(statement))
    return statements


def login_sql(db: Database, data: LoginSetup | Raw) -> list[str]:
    request = parse(LoginSetup, data)
    _shared_only(db)
    return logins.login_statements(request.login, request.group)


def create_login(db: Database, data: LoginSetup | Raw) -> list[str]:
    """Create the login in the group unless it is there already; returns what it ran.

    Creating roles needs CREATEROLE (or a superuser): a login without it is told to have
    the printed SQL run by one who has it.
    """
    request = parse(LoginSetup, data)
    statements = login_sql(db, request)
    with db.engine.begin() as connection:
        if logins.is_member(connection, request.login, request.group):
            return []
        facts = logins.login_facts(connection, request.login)
        if facts.owner:
            raise _trusted(request.login)
        allowed = connection.execute(
            text("SELECT rolcreaterole OR rolsuper FROM pg_roles WHERE rolname = session_user")
        ).scalar()
        if not allowed:
            raise RuleViolation(
                "database",
                logins.connected(connection).login,
                "this login may not create logins; print the SQL for the database's "
                "administrator to run",
            )
        for statement in statements:
            connection.execute(text(statement))
    return statements


def _trusted(login: str) -> RuleViolation:
    return RuleViolation(
        "login",
        login,
        "owns the tables or is a superuser: it may act as anyone and cannot be one person's login",
    )


def bind_login(db: Database, actor: str | None, data: BindLogin | Raw) -> Done[OperatorView]:
    """Bind a database login to an operator (managers only): it then records as them only."""
    request = parse(BindLogin, data)
    _shared_only(db)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("binding a database login to an operator")
        session = uow.session
        person = session.scalars(select(Operator).where(Operator.code == request.operator)).first()
        if person is None:
            raise InputError("operator", request.operator, "no such operator")
        facts = logins.login_facts(session.connection(), request.login)
        if not facts.exists or not facts.can_log_in:
            raise RuleViolation(
                "login",
                request.login,
                "no login of this name on the server; create it first (its SQL can be "
                "printed for whoever may create logins)",
            )
        if facts.owner:
            raise _trusted(request.login)
        if not facts.can_record:
            raise RuleViolation(
                "login",
                request.login,
                "may not record events: make it a member of the workstation group first",
            )
        holder = session.scalars(select(Operator).where(Operator.login == request.login)).first()
        if holder is not None:
            raise RuleViolation("login", request.login, f"is already bound to {holder.code}")
        previous, person.login = person.login, request.login
        payload = {"operator": person.code, "login": request.login, "previous": previous}
        return finish(uow, "operator.login_bound", person, payload, lambda: OperatorView.of(person))
