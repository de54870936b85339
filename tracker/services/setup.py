"""Opening a ledger, and the people and places it knows."""

from __future__ import annotations

from pathlib import Path

from sqlalchemy import func, select

from tracker import __version__
from tracker.db.database import Database, open_database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.facts import FACTS, Written
from tracker.domain.ledger import FORMAT
from tracker.domain.models import Location, LocationKind, Operator, Role
from tracker.domain.timeutil import Clock, utcnow
from tracker.services.capture import capturing
from tracker.services.common import finish
from tracker.services.inputs import Name, Raw, Request, ShortCode, parse
from tracker.services.lookup import get_by_id
from tracker.services.uow import append_event, unit_of_work
from tracker.services.views import Done, LocationView, OperatorView


class NewOperator(Request):
    code: ShortCode
    name: Name
    role: Role = Role.TECHNICIAN


def init_database(
    target: str | Path, first_operator: NewOperator | Raw, clock: Clock = utcnow
) -> Database:
    """Create a database, its first operator (a manager) and the ledger's first event."""
    request = parse(NewOperator, first_operator)
    db = open_database(target, create=True, clock=clock)
    with db.write_session() as session, session.begin():
        if session.scalar(select(func.count()).select_from(Operator)):
            db.close()
            raise RuleViolation("--db", db.url, "already initialised")
        now = clock()
        written = Written()
        with capturing(session, written) as capture:
            operator = Operator(
                code=request.code, name=request.name, role=Role.MANAGER, created_at=now
            )
            session.add(operator)
            session.flush()
            payload = {
                "format": FORMAT,
                "tracker": __version__,
                "operator": operator.code,
                "name": operator.name,
                "role": Role.MANAGER.value,
                FACTS: written.facts(),
            }
            capture.seal()
            append_event(
                session,
                at=now,
                operator=operator.code,
                action="ledger.opened",
                object_ref=operator.public_id,
                parent_ref="",
                payload=payload,
            )
    return db


def add_operator(db: Database, actor: str | None, data: NewOperator | Raw) -> Done[OperatorView]:
    """Register a person who may record events (managers only)."""
    request = parse(NewOperator, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("adding an operator")
        if uow.session.scalars(select(Operator).where(Operator.code == request.code)).first():
            raise RuleViolation("code", request.code, "an operator with this code already exists")
        operator = Operator(
            code=request.code, name=request.name, role=request.role, created_at=uow.now
        )
        uow.session.add(operator)
        payload = {"code": request.code, "name": request.name, "role": request.role.value}
        return finish(uow, "operator.added", operator, payload, lambda: OperatorView.of(operator))


def list_operators(db: Database) -> list[OperatorView]:
    with db.read_session() as session:
        return [
            OperatorView.of(o) for o in session.scalars(select(Operator).order_by(Operator.code))
        ]


class NewLocation(Request):
    kind: LocationKind
    name: Name
    parent: str | None = None  # LC- ID of the enclosing location


# Which kinds may sit inside which: a box goes on a shelf, not a shelf in a box.
_DEPTH = {
    LocationKind.BUILDING: 0,
    LocationKind.ROOM: 1,
    LocationKind.CABINET: 2,
    LocationKind.FREEZER: 2,
    LocationKind.SHELF: 3,
    LocationKind.BOX: 4,
    LocationKind.POSITION: 5,
}


def add_location(db: Database, actor: str | None, data: NewLocation | Raw) -> Done[LocationView]:
    """Add a place (building, room, cabinet or freezer, shelf, box, position) to the tree."""
    request = parse(NewLocation, data)
    with unit_of_work(db, actor) as uow:
        parent = (
            get_by_id(uow.session, Location, "parent", request.parent) if request.parent else None
        )
        if parent is not None and _DEPTH[parent.kind] >= _DEPTH[request.kind]:
            raise RuleViolation(
                "kind", request.kind.value, f"cannot be placed inside a {parent.kind.value}"
            )
        if parent is None and request.kind is not LocationKind.BUILDING:
            raise InputError("parent", None, f"a {request.kind.value} needs an enclosing location")
        parent_id = parent.id if parent else None
        clash = select(Location).where(  # "== None" renders as IS NULL
            Location.parent_id == parent_id, Location.name == request.name
        )
        if uow.session.scalars(clash).first():
            raise RuleViolation("name", request.name, "already exists at this place")
        location = Location(kind=request.kind, name=request.name, parent=parent, created_at=uow.now)
        uow.session.add(location)
        return finish(
            uow,
            "location.added",
            location,
            {
                "kind": request.kind.value,
                "name": request.name,
                "parent": parent.public_id if parent else None,
            },
            lambda: LocationView.of(location),
            parent=parent,
        )


def list_locations(db: Database) -> list[LocationView]:
    with db.read_session() as session:
        rows = session.scalars(select(Location)).all()
        return sorted((LocationView.of(r) for r in rows), key=lambda v: v.path)
