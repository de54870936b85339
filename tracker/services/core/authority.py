"""Who may sign now, read from the ledger; the signer a unit of work signs with.

Every unit of work asks :func:`current` who may sign: the ledger's authority events
(operators, roles, keys — :mod:`tracker.domain.authority`), each admitted only when its
hash and signature hold. The answer is kept on the database handle until another such
event is recorded (one indexed count per unit of work), so a person's first write in a
process replays them and the rest do not.

:func:`signer_for` picks the unlocked key a unit of work signs with, or refuses in one
line saying what is missing (no key registered, revoked, deactivated, not unlocked).
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import func, select, text
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.db.keyring import Keyring
from tracker.domain.authority import AUTHORITY_SQL, Authority
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ledger import Origin, replay_authority
from tracker.domain.models import CustodyEvent
from tracker.domain.models.ledger import LEDGER_COLUMNS
from tracker.domain.signing import Signer

_MEMO = "authority"


def current(session: Session, db: Database) -> Authority:
    """The ledger's authority as the session sees it (replayed only when it changed)."""
    where = text(AUTHORITY_SQL)  # literal: the partial index's own predicate
    marker = tuple(
        session.execute(
            select(func.count(), func.max(CustodyEvent.seq)).select_from(CustodyEvent).where(where)
        ).one()
    )
    kept: tuple[tuple[Any, ...], Authority] | None = db.memo.get(_MEMO)
    if kept is not None and kept[0] == marker:
        return kept[1]
    rows = session.execute(select(*LEDGER_COLUMNS).where(where).order_by(CustodyEvent.seq))
    authority = replay_authority(tuple(row) for row in rows)
    db.memo[_MEMO] = (marker, authority)
    return authority


def upto(db: Database, seq: int) -> Authority:
    """The authority as it stood at event ``seq`` (what an anchor of that event is judged by)."""
    where = text(AUTHORITY_SQL)
    with db.read_session() as session:
        rows = session.execute(
            select(*LEDGER_COLUMNS).where(where, CustodyEvent.seq <= seq).order_by(CustodyEvent.seq)
        )
        return replay_authority(tuple(row) for row in rows)


def read(db: Database) -> Authority:
    """The authority now, outside any unit of work (keys list, unlocking, anchors)."""
    with db.read_session() as session:
        return current(session, db)


def origin(session: Session, db: Database) -> Origin:
    """Where this process's events come from: OS user and host (the keyring's), and on
    PostgreSQL the login the server knows this connection by (its trigger checks it)."""
    user, host = db.keyring.user_and_host()
    if db.backend != "postgresql":
        return Origin(user, host, "")
    login = db.memo.get("session_user")
    if login is None:
        login = str(session.scalar(text("SELECT session_user")))
        db.memo["session_user"] = login
    return Origin(user, host, login)


def signer_for(authority: Authority, code: str, keyring: Keyring) -> Signer | None:
    """The unlocked key ``code`` signs with now; None in a ledger that has no key yet (its
    first key is registered by a manager for themselves); otherwise a one-line refusal."""
    if not authority.keys:
        return None
    valid = authority.valid_keys(code)
    for record in valid:
        signer = keyring.get(record.key_id)
        if signer is not None:
            return signer
    raise why_no_signer(authority, code, bool(valid))


def why_no_signer(authority: Authority, code: str, registered: bool) -> InputError | RuleViolation:
    """Why ``code`` cannot sign now, said for a person."""
    person = authority.people.get(code)
    if person is None:  # the ledger never added anyone of this code
        return InputError("operator", code, "no such operator")
    if not person.active:
        return RuleViolation(
            "operator",
            code,
            f"was deactivated at event #{person.deactivated_seq}; signs nothing more",
        )
    if registered:
        key = authority.valid_keys(code)[0].key_id
        return InputError(
            "operator", code, f"key {key} is not unlocked (its passphrase unlocks it)"
        )
    revoked = [k for k in authority.keys.values() if k.operator == code]
    if revoked:
        last = max(revoked, key=lambda k: k.registered_seq)
        problem = authority.key_problem(code, last.key_id)
        return RuleViolation("operator", code, f"{problem}; a manager registers a new key for them")
    return RuleViolation(
        "operator",
        code,
        "has no registered signing key; make one on this machine and ask a manager to register it",
    )


NO_KEYS_YET = (
    "this database has no signing keys yet: a manager makes one and registers it for "
    "themselves before anything else is recorded"
)
