"""The ledger detects tampering: altered payloads, deleted and swapped events (both backends)."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import datetime, timedelta

import pytest
from sqlalchemy import text

from tests import factories as make
from tracker.db.database import Database
from tracker.services.ledger.chain import verify


@pytest.fixture
def busy(db: Database) -> Iterator[Database]:
    """A database with a dozen events and the append-only triggers dropped (as a tamperer would)."""
    spec = make.specimen(db, make.loan(db))
    make.solution(db, make.powder(db, spec))
    with db.engine.begin() as conn:
        if db.backend == "sqlite":
            conn.execute(text("DROP TRIGGER custody_event_no_update"))
            conn.execute(text("DROP TRIGGER custody_event_no_delete"))
        else:
            conn.execute(text("DROP TRIGGER custody_event_append_only ON custody_event"))
    yield db


def test_append_only_triggers_refuse_edits(db: Database) -> None:
    make.loan(db)
    for statement in (
        "UPDATE custody_event SET payload = '{}' WHERE seq = 2",
        "DELETE FROM custody_event WHERE seq = 2",
    ):
        with pytest.raises(Exception, match="append-only"), db.engine.begin() as conn:
            conn.execute(text(statement))
    assert verify(db).ok


def test_intact_ledger_reports_its_head(busy: Database) -> None:
    report = verify(busy)
    assert report.ok and report.events == report.head_seq == 8
    assert len(report.head_hash) == 64


def test_one_changed_payload_character_is_found(busy: Database) -> None:
    with busy.engine.begin() as conn:
        conn.execute(
            text(
                "UPDATE custody_event SET payload = replace(payload, 'enamel', 'enamal') "
                "WHERE action = 'powder.drilled'"
            )
        )
        seq = conn.execute(
            text("SELECT seq FROM custody_event WHERE action = 'powder.drilled'")
        ).scalar()
    report = verify(busy)
    assert not report.ok and report.broken_seq == seq
    assert "altered" in (report.reason or "")


def test_changed_operator_column_is_found(busy: Database) -> None:
    """Blaming someone else for a check-in breaks the chain at that event."""
    with busy.engine.begin() as conn:
        seq = conn.execute(
            text("SELECT seq FROM custody_event WHERE action = 'specimen.checked_in'")
        ).scalar()
        conn.execute(
            text("UPDATE custody_event SET operator = 'boss' WHERE seq = :seq"), {"seq": seq}
        )
    report = verify(busy)
    assert not report.ok and report.broken_seq == seq


def test_deleted_event_is_found(busy: Database) -> None:
    with busy.engine.begin() as conn:
        conn.execute(text("DELETE FROM custody_event WHERE seq = 6"))
    report = verify(busy)
    assert not report.ok and report.broken_seq == 6 and "missing" in (report.reason or "")


def test_deleted_and_renumbered_events_are_found(busy: Database) -> None:
    """A careful tamperer closes the gap; the previous-hash link still breaks."""
    with busy.engine.begin() as conn:
        conn.execute(text("DELETE FROM custody_event WHERE seq = 6"))
        last: int = conn.execute(text("SELECT max(seq) FROM custody_event")).scalar_one()
        for seq in range(7, last + 1):
            conn.execute(
                text("UPDATE custody_event SET seq = :new WHERE seq = :old"),
                {"new": seq - 1, "old": seq},
            )
    report = verify(busy)
    assert not report.ok and report.broken_seq == 6 and "link" in (report.reason or "")


def test_swapped_events_are_found(busy: Database) -> None:
    with busy.engine.begin() as conn:
        conn.execute(text("UPDATE custody_event SET seq = 1000000 WHERE seq = 4"))
        conn.execute(text("UPDATE custody_event SET seq = 4 WHERE seq = 5"))
        conn.execute(text("UPDATE custody_event SET seq = 5 WHERE seq = 1000000"))
    report = verify(busy)
    assert not report.ok and report.broken_seq == 4


def test_a_back_dated_event_is_found(busy: Database) -> None:
    """Moving an event one second earlier breaks it, whichever way the backend stores time."""
    with busy.engine.connect() as conn:
        at = conn.execute(text("SELECT at FROM custody_event WHERE seq = 5")).scalar_one()
    earlier = at - timedelta(seconds=1) if isinstance(at, datetime) else _sqlite_minus_one(at)
    with busy.engine.begin() as conn:
        conn.execute(text("UPDATE custody_event SET at = :at WHERE seq = 5"), {"at": earlier})
    report = verify(busy)
    assert not report.ok and report.broken_seq == 5 and "altered" in (report.reason or "")


def _sqlite_minus_one(stored: str) -> str:
    moment = datetime.strptime(stored, "%Y-%m-%d %H:%M:%S.%f") - timedelta(seconds=1)
    return moment.strftime("%Y-%m-%d %H:%M:%S.%f")


@pytest.mark.parametrize("db_url", ["sqlite"], indirect=True)  # PostgreSQL stores timestamps
@pytest.mark.parametrize("reshape", ["drop microseconds", "add an offset"])
def test_a_time_stored_in_another_shape_counts_as_altered(db: Database, reshape: str) -> None:
    """SQLite keeps time as text; tracker always writes it with microseconds, so text in
    another shape was not written by tracker (verify reads the text, it does not reparse)."""
    assert db.backend == "sqlite"
    make.loan(db)
    with db.engine.begin() as conn:
        conn.execute(text("DROP TRIGGER custody_event_no_update"))
        stored = conn.execute(text("SELECT at FROM custody_event WHERE seq = 2")).scalar_one()
        assert len(stored) == 26 and stored[10] == " "  # how SQLAlchemy stores it
        other = stored[:19] if reshape == "drop microseconds" else f"{stored}+00:00"
        conn.execute(text("UPDATE custody_event SET at = :at WHERE seq = 2"), {"at": other})
    report = verify(db)
    assert not report.ok and report.broken_seq == 2
