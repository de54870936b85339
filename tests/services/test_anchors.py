"""Rollback detection on both backends: anchors catch what the chain alone cannot."""

from __future__ import annotations

from pathlib import Path

import pytest
from sqlalchemy import text

from tests import factories as make
from tests import keys
from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.services.admin import setup
from tracker.services.core import authority
from tracker.services.core.uow import append_event
from tracker.services.ledger import chain


def _drop_append_only_triggers(db: Database) -> None:
    """What someone with full access to the database can do (and the chain cannot stop)."""
    with db.engine.begin() as conn:
        if db.backend == "sqlite":
            conn.execute(text("DROP TRIGGER custody_event_no_update"))
            conn.execute(text("DROP TRIGGER custody_event_no_delete"))
        else:
            conn.execute(text("DROP TRIGGER custody_event_append_only ON custody_event"))


def _delete_events_after(db: Database, seq: int) -> None:
    with db.engine.begin() as conn:
        conn.execute(text("DELETE FROM label WHERE queued_event_seq > :s"), {"s": seq})
        conn.execute(text("DELETE FROM custody_event WHERE seq > :s"), {"s": seq})


def test_anchor_holds_while_the_ledger_grows(db: Database, tmp_path: Path) -> None:
    kept = chain.write_anchor(db, "boss", tmp_path / "head.json").anchor
    make.specimen(db, make.loan(db))
    report = chain.verify_against(db, chain.read_anchor(tmp_path / "head.json"))
    assert report.ok and report.chain.head_seq > kept.seq


def test_deleting_the_newest_events_passes_the_chain_but_fails_the_anchor(
    db: Database, tmp_path: Path
) -> None:
    make.loan(db)
    cut_at = chain.verify(db).head_seq
    make.specimen(db, make.loan(db))
    anchor = chain.write_anchor(db, "boss", tmp_path / "head.json").anchor
    _drop_append_only_triggers(db)
    _delete_events_after(db, cut_at)

    assert chain.verify(db).ok  # a shorter chain is still a valid chain
    report = chain.verify_against(db, anchor)
    assert not report.ok and report.chain.ok
    gone = anchor.seq - cut_at
    assert f"{gone} newest event(s) are gone" in (report.anchor.problem or "")


def test_events_cut_and_re_appended_with_valid_hashes_fail_the_anchor(
    db: Database, tmp_path: Path
) -> None:
    """A careful tamperer rebuilds the tail with valid hashes: the chain passes, the anchor not."""
    make.specimen(db, make.loan(db))
    anchor = chain.write_anchor(db, "boss", tmp_path / "head.json").anchor
    _drop_append_only_triggers(db)
    _delete_events_after(db, anchor.seq - 2)
    with db.write_session() as session, session.begin():
        for n in range(3):
            append_event(
                session,
                at=db.clock(),
                operator="boss",
                action="location.added",
                object_ref="",
                parent_ref="",
                payload={"n": n},
                signer=keys.signer("boss"),
                origin=authority.origin(session, db),
            )
    assert chain.verify(db).ok
    report = chain.verify_against(db, anchor)
    assert not report.ok and "rewritten" in (report.anchor.problem or "")


def test_an_anchor_from_another_database_is_recognised(db: Database, tmp_path: Path) -> None:
    first = {"code": "x", "name": "Xan Other"}
    other = setup.init_database(tmp_path / "other.sqlite", first, signer=keys.signer("x"))
    try:
        foreign = chain.current_anchor(other, "x")
    finally:
        other.close()
    report = chain.verify_against(db, foreign)
    assert not report.ok and "another ledger" in (report.anchor.problem or "")


def test_unreadable_anchor_files_are_refused_with_the_file_named(tmp_path: Path) -> None:
    for name, content in [("empty.json", b""), ("bin.json", b"\xff\xfe\x00"), ("big", b"x" * 5000)]:
        path = tmp_path / name
        path.write_bytes(content)
        with pytest.raises(InputError) as caught:
            chain.read_anchor(path)
        assert caught.value.field == "anchor file" and caught.value.value == str(path)
    with pytest.raises(InputError, match="cannot be read"):
        chain.read_anchor(tmp_path / "missing.json")
