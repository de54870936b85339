"""The ledger detects tampering: altered payloads, deleted and swapped events (both backends)."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from sqlalchemy import text

from tests import factories as make
from tracker.db.database import Database
from tracker.services.ledger import verify


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
        last = conn.execute(text("SELECT max(seq) FROM custody_event")).scalar()
        for seq in range(7, last + 1):
            conn.execute(
                text("UPDATE custody_event SET seq = :new WHERE seq = :old"),
                {"new": seq - 1, "old": seq},
            )
    report = verify(busy)
    assert not report.ok and report.broken_seq == 6 and "link" in (report.reason or "")


def test_swapped_events_are_found(busy: Database) -> None:
    with busy.engine.begin() as conn:
        conn.execute(text("UPDATE custody_event SET seq = -1 WHERE seq = 4"))
        conn.execute(text("UPDATE custody_event SET seq = 4 WHERE seq = 5"))
        conn.execute(text("UPDATE custody_event SET seq = 5 WHERE seq = -1"))
    report = verify(busy)
    assert not report.ok and report.broken_seq == 4
