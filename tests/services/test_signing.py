"""Who did each step, proven: every event signed, manager's actions only by managers' keys.

On both backends. The checks against outside references: the OS user and host come from
``getpass`` and ``socket`` directly, PostgreSQL's login from ``SELECT session_user``, and
signatures are verified with ``cryptography``'s Ed25519 directly (RFC 8032), not through
tracker's own verifier.
"""

from __future__ import annotations

import getpass
import json
import socket
from collections.abc import Callable
from typing import Any

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey
from sqlalchemy import insert, select, text

from tests import factories as make
from tests import keys
from tests.conftest import snapshot_counts
from tracker.db.database import Database
from tracker.db.keyring import PROCESS
from tracker.domain.authority import FORMAT_2
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ledger import canonical_json, seal
from tracker.domain.models import CustodyEvent
from tracker.domain.signing import Signer
from tracker.services.admin import keys as key_service
from tracker.services.admin import setup
from tracker.services.core import authority
from tracker.services.ledger import chain
from tracker.services.loans import amendments, specimens

Counts = Callable[[], dict[str, int]]


def amend(db: Database, actor: str, loan: str) -> Any:
    """A manager's action: raising a loan's allowance."""
    request = {
        "loan": loan,
        "kind": "allowance",
        "effective_from": "2026-01-06",
        "reason": "lender agreed by letter",
        "max_total_mass": "60 mg",
    }
    return amendments.amend_loan(db, actor, request)


def events(db: Database) -> list[CustodyEvent]:
    with db.read_session() as session:
        return list(session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq)))


def insert_event(
    db: Database, signer: Signer, operator: str, action: str, obj: str, payload: dict[str, Any]
) -> int:
    """What anyone allowed to INSERT can do: append a well-chained event, signed with a key
    they hold (the append-only triggers allow a plain INSERT; the hash chain is kept)."""
    with db.engine.begin() as conn:
        seq, prev = conn.execute(
            select(CustodyEvent.seq, CustodyEvent.hash).order_by(CustodyEvent.seq.desc())
        ).first() or (0, "0" * 64)
    with db.write_session() as session, session.begin():
        origin = authority.origin(session, db)
        at = db.clock()
        body = canonical_json(payload)
        sealed = seal(seq + 1, at, operator, origin, action, obj, "", prev, body, signer)
        session.execute(
            insert(CustodyEvent),
            {
                "seq": seq + 1,
                "at": at,
                "operator": operator,
                "action": action,
                "object_ref": obj,
                "parent_ref": "",
                "payload": body,
                "prev_hash": prev,
                "hash": sealed.hash,
                "format": FORMAT_2,
                "os_user": origin.os_user,
                "host": origin.host,
                "db_user": origin.db_user,
                "key_id": sealed.key_id,
                "signature": sealed.signature,
            },
        )
    return seq + 1


def operator_id(db: Database, code: str) -> str:
    return next(o.id for o in setup.list_operators(db) if o.code == code)


def drop_append_only_triggers(db: Database) -> None:
    """What the database owner can do."""
    with db.engine.begin() as conn:
        if db.backend == "sqlite":
            conn.execute(text("DROP TRIGGER custody_event_no_update"))
        else:
            conn.execute(text("DROP TRIGGER custody_event_append_only ON custody_event"))


# ---------------------------------------------------------------- every event signed


def test_every_event_is_signed_and_says_where_it_came_from(db: Database) -> None:
    make.powder(db, make.specimen(db, make.loan(db)))
    with db.engine.connect() as conn:
        login = conn.scalar(text("SELECT session_user")) if db.backend == "postgresql" else ""
    stored = events(db)
    owners = {"boss": keys.signer("boss"), "tech": keys.signer("tech")}
    for event in stored:
        assert event.format == "tracker-ledger/2"
        assert (event.os_user, event.host) == (getpass.getuser(), socket.gethostname())
        assert event.db_user == login
        signer = owners[event.operator]
        assert event.key_id == signer.key_id
        public = Ed25519PublicKey.from_public_bytes(bytes.fromhex(signer.public_hex))
        public.verify(bytes.fromhex(event.signature or ""), event.hash.encode("ascii"))
    report = chain.verify(db)
    assert report.ok and report.signed == report.events == len(stored)
    assert report.unsigned == 0 and report.signing_since == 1


def test_the_first_event_registers_the_founders_key_and_is_signed_by_it(db: Database) -> None:
    first = events(db)[0]
    registered = json.loads(first.payload)["key"]
    assert registered == {
        "id": keys.signer("boss").key_id,
        "operator": "boss",
        "public_key": keys.signer("boss").public_hex,
    }
    assert first.key_id == registered["id"]


# ---------------------------------------------------------------- refusals that write nothing


def test_a_technicians_manager_action_is_refused_even_after_editing_the_role_column(
    db: Database, counts: Counts
) -> None:
    loan = make.loan(db)
    before = counts()
    with pytest.raises(RuleViolation) as plain:
        amend(db, "tech", loan)
    with db.engine.begin() as conn:
        conn.execute(text("UPDATE operator SET role = 'manager' WHERE code = 'tech'"))
    with pytest.raises(RuleViolation) as edited:
        amend(db, "tech", loan)
    for caught in (plain, edited):
        assert caught.value.field == "operator" and caught.value.value == "tech"
        assert "amending a loan needs an operator with the manager role (tech is a technician)" in (
            caught.value.reason
        )
    assert counts() == before
    assert [o.role for o in setup.list_operators(db) if o.code == "tech"] == ["technician"]


def test_a_revoked_key_signs_nothing_more(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    waiting = make.specimen(db, loan, checked_in=False)
    revoked = key_service.revoke_key(db, "boss", {"operator": "tech", "reason": "laptop lost"})
    before = counts()
    with pytest.raises(RuleViolation) as caught:
        specimens.check_in(db, "tech", {"specimen": waiting, "condition": "complete"})
    assert caught.value.field == "operator" and caught.value.value == "tech"
    assert f"was revoked at event #{revoked.event_seq} (laptop lost)" in caught.value.reason
    assert counts() == before
    # a manager registers a new key; the old events still verify under the old key
    new = keys.signer("tech-2")
    PROCESS.add(new)
    key_service.register_key(db, "boss", {"operator": "tech", "public_key": new.public_hex})
    specimens.check_in(db, "tech", {"specimen": waiting, "condition": "complete"})
    report = chain.verify(db)
    assert report.ok and report.signed == report.events
    assert events(db)[-1].key_id == new.key_id


def test_a_deactivated_operator_signs_nothing_more(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    done = setup.deactivate_operator(db, "boss", {"operator": "tech", "reason": "left the lab"})
    assert done.item.active is False
    before = counts()
    with pytest.raises(RuleViolation) as caught:
        make.powder(db, "SP-00001-W")
    assert "deactivated" in caught.value.reason
    assert counts() == before
    # an event inserted by hand, signed with tech's (still unrevoked) key, is caught
    seq = insert_event(db, keys.signer("tech"), "tech", "item.moved", loan, {"to": "LC-00001-X"})
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == seq
    assert f"tech was deactivated at event #{done.event_seq}" in (report.reason or "")


def test_an_unlocked_key_is_needed_and_an_unregistered_one_does_not_do(
    db: Database, counts: Counts
) -> None:
    waiting = make.specimen(db, make.loan(db), checked_in=False)
    before = counts()
    PROCESS.forget(keys.signer("tech").key_id)
    PROCESS.add(keys.signer("someone else"))  # unknown to this ledger
    with pytest.raises(InputError) as caught:
        specimens.check_in(db, "tech", {"specimen": waiting, "condition": "complete"})
    assert caught.value.reason == (
        f"key {keys.signer('tech').key_id} is not unlocked (its passphrase unlocks it)"
    )
    assert counts() == before


def test_a_manager_action_needs_a_manager_and_editing_a_table_does_not_make_one(
    db: Database, counts: Counts
) -> None:
    before = counts()
    with db.engine.begin() as conn:
        conn.execute(text("UPDATE operator SET role = 'manager' WHERE code = 'tech'"))
    with pytest.raises(RuleViolation, match="adding an operator needs"):
        setup.add_operator(db, "tech", keys.person("eve", "Eve Intruder"))
    with pytest.raises(RuleViolation, match="registering a signing key needs"):
        key_service.register_key(
            db, "tech", {"operator": "tech", "public_key": keys.signer("t2").public_hex}
        )
    assert counts() == before


# ---------------------------------------------------------------- what verify finds


def test_a_raw_insert_of_a_manager_action_signed_by_a_technician_is_found(db: Database) -> None:
    loan = make.loan(db)
    with db.engine.begin() as conn:
        conn.execute(text("UPDATE operator SET role = 'manager' WHERE code = 'tech'"))
    seq = insert_event(db, keys.signer("tech"), "tech", "loan.amended", loan, {"kind": "allowance"})
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == seq
    assert report.reason == ("amending a loan needs a manager's signature; tech is a technician")


def test_a_forged_role_change_confers_nothing_and_verify_names_it(
    db: Database, counts: Counts
) -> None:
    """A technician appends a well-chained `operator.role_changed` making themselves a
    manager, signed with their own key: later actions still find them a technician."""
    seq = insert_event(
        db,
        keys.signer("tech"),
        "tech",
        "operator.role_changed",
        operator_id(db, "tech"),
        {"operator": "tech", "role": "manager", "was": "technician", "reason": "self"},
    )
    before = counts()
    with pytest.raises(RuleViolation, match=r"\(tech is a technician\)"):
        setup.add_operator(db, "tech", keys.person("eve", "Eve Intruder"))
    assert counts() == before
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == seq
    assert "changing an operator's role needs a manager's signature" in (report.reason or "")


def test_a_forged_key_registration_under_a_managers_name_is_found(db: Database) -> None:
    """Claiming to be boss with a key nobody registered: the signature names no known key."""
    intruder = keys.signer("intruder")
    payload = {
        "key": {"id": intruder.key_id, "operator": "tech", "public_key": intruder.public_hex}
    }
    seq = insert_event(db, intruder, "boss", "key.registered", operator_id(db, "tech"), payload)
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == seq
    assert "which no earlier event registered" in (report.reason or "")


@pytest.mark.parametrize("column", ["signature", "key_id"])
def test_an_altered_signature_or_key_is_found(db: Database, column: str) -> None:
    make.specimen(db, make.loan(db))
    target = events(db)[-2]
    drop_append_only_triggers(db)
    if column == "signature":
        new = ("1" if target.signature and target.signature[0] == "0" else "0") + (
            target.signature or ""
        )[1:]
    else:
        new = keys.signer("boss" if target.operator == "tech" else "tech").key_id
    with db.engine.begin() as conn:
        conn.execute(
            text(f"UPDATE custody_event SET {column} = :v WHERE seq = :s"),
            {"v": new, "s": target.seq},
        )
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == target.seq
    assert "signature" in (report.reason or "") or "registered to" in (report.reason or "")


def test_a_signature_removed_to_pass_as_an_old_event_is_found(db: Database) -> None:
    """Turning a signed event into an unsigned (format 1) one breaks its hash; the owner who
    rehashes it too is still refused: an unsigned event after signing began."""
    make.loan(db)
    target = events(db)[-1]
    drop_append_only_triggers(db)
    from tracker.domain.ledger import FORMAT, NO_ORIGIN, event_hash

    digest = event_hash(
        FORMAT,
        target.seq,
        target.at,
        target.operator,
        NO_ORIGIN,
        target.action,
        target.object_ref,
        target.parent_ref,
        target.prev_hash,
        target.payload,
    )
    with db.engine.begin() as conn:
        conn.execute(
            text(
                "UPDATE custody_event SET format = 'tracker-ledger/1', key_id = NULL, "
                "signature = NULL, hash = :h WHERE seq = :s"
            ),
            {"h": digest, "s": target.seq},
        )
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == target.seq
    assert "unsigned event recorded after signing began" in (report.reason or "")


# ---------------------------------------------------------------- roles and operators


def test_roles_change_by_signed_events_and_the_last_manager_stays_one(
    db: Database, counts: Counts
) -> None:
    before = counts()
    with pytest.raises(RuleViolation, match="last manager"):
        setup.change_role(db, "boss", {"operator": "boss", "role": "technician", "reason": "x y"})
    with pytest.raises(RuleViolation, match="is you"):
        setup.deactivate_operator(db, "boss", {"operator": "boss", "reason": "leaving"})
    assert counts() == before
    promoted = setup.change_role(
        db, "boss", {"operator": "tech", "role": "manager", "reason": "new lab manager"}
    )
    assert promoted.item.role == "manager"
    amend(db, "tech", make.loan(db))  # now a manager's action by tech is signed by a manager
    assert chain.verify(db).ok


@pytest.mark.parametrize(
    "db_url", [pytest.param("postgresql", marks=pytest.mark.postgresql)], indirect=True
)
def test_postgresql_refuses_an_event_that_claims_another_login(db: Database) -> None:
    before = snapshot_counts(db)
    with pytest.raises(Exception, match="is not the session user"), db.engine.begin() as conn:
        conn.execute(
            text(
                "INSERT INTO custody_event (seq, at, operator, action, object_ref, parent_ref, "
                "payload, prev_hash, hash, format, db_user) SELECT seq + 1, at, operator, "
                "action, object_ref, parent_ref, payload, hash, repeat('e', 64), format, "
                "'someone_else' FROM custody_event ORDER BY seq DESC LIMIT 1"
            )
        )
    assert snapshot_counts(db) == before
    with db.engine.begin() as conn:  # without a value the login is filled in by the server
        conn.execute(
            text(
                "INSERT INTO custody_event (seq, at, operator, action, object_ref, parent_ref, "
                "payload, prev_hash, hash) SELECT seq + 1, at, operator, action, object_ref, "
                "parent_ref, payload, hash, repeat('f', 64) FROM custody_event "
                "ORDER BY seq DESC LIMIT 1"
            )
        )
        login = conn.scalar(text("SELECT session_user"))
        stored = conn.scalar(text("SELECT db_user FROM custody_event ORDER BY seq DESC LIMIT 1"))
    assert stored == login
