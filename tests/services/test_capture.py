"""The unit of work states every row it writes, and lets none be written past its facts.

A row written after the event's facts were taken, or a statement that changes rows
without the session seeing them, would be a row no event describes: both are refused
and nothing is committed. (Every service's own events are held to their rows by the
audit tests: tests/services/test_audit.py and the property test.)
"""

from __future__ import annotations

import json
from collections.abc import Callable
from datetime import UTC, datetime

import pytest
from sqlalchemy import update

from tracker.db.database import Database
from tracker.domain.models import Location, LocationKind, Operator
from tracker.services.core.uow import unit_of_work


def _place(name: str) -> Location:
    return Location(kind=LocationKind.BUILDING, name=name, created_at=datetime.now(UTC))


def test_a_row_written_after_the_event_is_refused(
    db: Database, counts: Callable[[], dict[str, int]]
) -> None:
    before = counts()
    refused = pytest.raises(RuntimeError, match="after its unit's event")
    with refused, unit_of_work(db, "boss") as uow:
        first = _place("Hall Q")
        uow.session.add(first)
        uow.record("location.added", first, {})
        uow.session.add(_place("Hall R"))  # not among the event's facts
        uow.commit()
    assert counts() == before


def test_a_statement_changing_rows_behind_the_session_is_refused(
    db: Database, counts: Callable[[], dict[str, int]]
) -> None:
    before = counts()
    refused = pytest.raises(RuntimeError, match="no event describes")
    with refused, unit_of_work(db, "boss") as uow:
        uow.session.execute(update(Operator).values(name="Someone Else"))
    assert counts() == before


def test_the_event_states_the_rows_it_wrote(db: Database) -> None:
    with unit_of_work(db, "boss") as uow:
        made = _place("Hall S")
        uow.session.add(made)
        uow.session.flush()
        boss = uow.session.get(Operator, 1)
        assert boss is not None
        boss.name = "Bea Oswald-Kent"
        event = uow.record("location.added", made, {"name": "Hall S"})
        uow.commit()
    facts = json.loads(event.payload)["facts"]
    assert facts["created"]["location"][made.public_id]["name"] == "Hall S"
    assert facts["changed"] == {"operator": {boss.public_id: {"name": "Bea Oswald-Kent"}}}
