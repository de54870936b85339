"""Opening a ledger, and the people and places it knows.

The founder (``init_database``) signs the ledger's first event with the key made for them
at ``tracker init``, which that event registers. Adding an operator may register their
public key in the same event; a role change and a deactivation are events too, and the
ledger — not the ``operator`` table — is what says who is a manager and who is active
(:mod:`tracker.domain.authority`).
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from pydantic import Field
from sqlalchemy import func, select

from tracker import __version__
from tracker.db.database import Database, open_database
from tracker.db.keyring import Keyring
from tracker.domain.authority import key_payload
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.facts import FACTS, Written
from tracker.domain.ledger import CURRENT_FORMAT
from tracker.domain.models import Location, LocationKind, Operator, Role
from tracker.domain.signing import Signer
from tracker.domain.timeutil import Clock, utcnow
from tracker.services.core import authority as signing
from tracker.services.core.capture import capturing
from tracker.services.core.common import finish
from tracker.services.core.inputs import Name, Raw, Request, ShortCode, Text, parse
from tracker.services.core.lookup import get_by_id
from tracker.services.core.uow import UnitOfWork, append_event, unit_of_work
from tracker.services.core.views import Done, LocationView, OperatorView

PublicKeyHex = Annotated[str, Field(pattern=r"^[0-9a-f]{64}$")]


class NewOperator(Request):
    code: ShortCode
    name: Name
    role: Role = Role.TECHNICIAN
    public_key: PublicKeyHex | None = None  # their signing key, registered by the same event


def init_database(
    target: str | Path,
    first_operator: NewOperator | Raw,
    clock: Clock = utcnow,
    *,
    signer: Signer,
    keyring: Keyring | None = None,
) -> Database:
    """Create a database, its first operator (a manager) and the ledger's first event, which
    registers the founder's key and is signed by it. ``keyring`` (default: this process's)
    keeps the founder's key unlocked for what the caller records next."""
    request = parse(NewOperator, first_operator)
    db = open_database(target, create=True, clock=clock)
    if keyring is not None:
        db.keyring = keyring
    db.keyring.add(signer)
    with db.write_session() as session, session.begin():
        if session.scalar(select(func.count()).select_from(Operator)):
            db.close()
            raise RuleViolation("database", db.url, "already initialised")
        now = clock()
        written = Written()
        with capturing(session, written) as capture:
            operator = Operator(
                code=request.code, name=request.name, role=Role.MANAGER, created_at=now
            )
            session.add(operator)
            session.flush()
            payload = {
                "format": CURRENT_FORMAT,
                "tracker": __version__,
                "operator": operator.code,
                "name": operator.name,
                "role": Role.MANAGER.value,
                "key": key_payload(operator.code, signer.public_hex),
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
                signer=signer,
                origin=signing.origin(session, db),
            )
    return db


def add_operator(db: Database, actor: str | None, data: NewOperator | Raw) -> Done[OperatorView]:
    """Register a person who may record events, and their public key if given (managers)."""
    request = parse(NewOperator, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("adding an operator")
        if uow.session.scalars(select(Operator).where(Operator.code == request.code)).first():
            raise RuleViolation("code", request.code, "an operator with this code already exists")
        if request.public_key is not None:
            _refuse_known_key(uow, request.public_key, "public-key")
        operator = Operator(
            code=request.code, name=request.name, role=request.role, created_at=uow.now
        )
        uow.session.add(operator)
        payload: dict[str, object] = {
            "code": request.code,
            "name": request.name,
            "role": request.role.value,
        }
        if request.public_key is not None:
            payload["key"] = key_payload(request.code, request.public_key)
        return finish(uow, "operator.added", operator, payload, lambda: OperatorView.of(operator))


def _refuse_known_key(uow: UnitOfWork, public_hex: str, field: str) -> None:
    key = key_payload("", public_hex)["id"]
    if key in uow.authority.keys:
        owner = uow.authority.keys[key]
        raise RuleViolation(
            field, key, f"is already registered to {owner.operator} (event #{owner.registered_seq})"
        )


class OperatorChange(Request):
    operator: ShortCode
    reason: Text = Field(min_length=3)
    role: Role | None = None  # a role change; None: a deactivation


def deactivate_operator(
    db: Database, actor: str | None, data: OperatorChange | Raw
) -> Done[OperatorView]:
    """Stop an operator from recording anything (managers): their keys sign nothing more."""
    request = parse(OperatorChange, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("deactivating an operator")
        target = _operator(uow, request.operator)
        if not uow.authority.people[target.code].active:
            raise RuleViolation("OPERATOR", target.code, "is already deactivated")
        if target.code == uow.operator.code:
            raise RuleViolation("OPERATOR", target.code, "is you; another manager does it")
        target.active = False
        payload = {"operator": target.code, "reason": request.reason}
        return finish(
            uow, "operator.deactivated", target, payload, lambda: _view(uow, target, active=False)
        )


def change_role(db: Database, actor: str | None, data: OperatorChange | Raw) -> Done[OperatorView]:
    """Make an operator a manager or a technician (managers); the last manager stays one."""
    request = parse(OperatorChange, data)
    if request.role is None:
        raise InputError("role", None, "say which role: manager or technician")
    role = request.role
    with unit_of_work(db, actor) as uow:
        uow.require_manager("changing an operator's role")
        target = _operator(uow, request.operator)
        person = uow.authority.people[target.code]
        if person.role == role.value:
            raise InputError("role", role.value, f"{target.code} already has this role")
        if person.role == Role.MANAGER.value and uow.authority.managers() == [target.code]:
            raise RuleViolation("OPERATOR", target.code, "is the last manager; name another first")
        target.role = role
        payload = {
            "operator": target.code,
            "role": role.value,
            "was": person.role,
            "reason": request.reason,
        }
        return finish(
            uow, "operator.role_changed", target, payload, lambda: _view(uow, target, role=role)
        )


def _operator(uow: UnitOfWork, code: str) -> Operator:
    """An operator the ledger knows (a row without its event is no operator)."""
    found = uow.session.scalars(select(Operator).where(Operator.code == code)).one_or_none()
    if found is None or code not in uow.authority.people:
        raise InputError("operator", code, "no such operator")
    return found


def _view(
    uow: UnitOfWork, row: Operator, *, role: Role | None = None, active: bool | None = None
) -> OperatorView:
    person = uow.authority.people[row.code]
    return OperatorView(
        id=row.public_id,
        code=row.code,
        name=row.name,
        role=(role.value if role else person.role),
        active=person.active if active is None else active,
    )


def list_operators(db: Database) -> list[OperatorView]:
    """Every operator, with the role and state the ledger's signed events give them (the
    ``operator`` table's columns only for one the ledger does not know)."""
    with db.read_session() as session:
        people = signing.current(session, db).people
        views = []
        for row in session.scalars(select(Operator).order_by(Operator.code)):
            view = OperatorView.of(row)
            person = people.get(row.code)
            if person is not None:
                view = view.model_copy(update={"role": person.role, "active": person.active})
            views.append(view)
        return views


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
