"""A return report verifies the events after this computer's checkpoint, not a decade of
history each time, and says what its word on the chain rests on; a checkpoint the ledger no
longer matches is never trusted, and tampering after it is still found (both backends)."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import text

from tests import factories as make
from tests.services.test_signing import drop_append_only_triggers
from tracker.db.database import Database
from tracker.db.location import checkpoint_dir
from tracker.domain.ids import Kind, format_id, parse_id
from tracker.services.ledger import checkpoints, loan_audit
from tracker.services.ledger.audit import audit
from tracker.services.ledger.chain import verify
from tracker.services.read import reports


@pytest.fixture
def own_folder(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Iterator[Path]:
    """This test's own checkpoint folder, so nothing another test verified counts."""
    folder = tmp_path / "checkpoints"
    monkeypatch.setenv("TRACKER_CHECKPOINT_DIR", str(folder))
    yield folder


def test_the_first_report_verifies_everything_and_the_next_only_what_is_new(
    db: Database, own_folder: Path
) -> None:
    loan = make.loan(db)
    make.powder(db, make.specimen(db, loan))
    first = reports.build_return_report(db, loan).ledger
    assert first.intact and first.verified_from == 1 and first.checkpoint_at is None
    assert first.verification == f"all {first.seq:,} events verified for this report"
    assert len(list(own_folder.glob("*.json"))) == 1  # kept outside the database
    make.powder(db, make.specimen(db, loan))  # new events after the checkpoint
    second = reports.build_return_report(db, loan).ledger
    assert second.intact and second.verified_from == first.seq + 1
    assert second.checkpoint_at is not None and second.seq > first.seq
    assert second.verification.startswith(f"events #1–#{first.seq:,} verified earlier on ")
    assert f"events #{first.seq + 1:,}–#{second.seq:,} verified for this report" in (
        second.verification
    )
    walked = checkpoints.verify_since_checkpoint(db).chain  # nothing new since the report
    assert walked.ok and walked.events == 0 and walked.head_seq == verify(db).head_seq


def test_an_event_altered_after_the_checkpoint_is_found(db: Database, own_folder: Path) -> None:
    loan = make.loan(db)
    reports.build_return_report(db, loan)  # the checkpoint
    make.powder(db, make.specimen(db, loan))
    drop_append_only_triggers(db)  # as someone editing the database by hand would
    with db.engine.begin() as conn:
        conn.execute(
            text(
                "UPDATE custody_event SET payload = replace(payload, 'enamel', 'enamal') "
                "WHERE action = 'powder.drilled'"
            )
        )
    head = reports.build_return_report(db, loan, despite_discrepancies=True).ledger
    assert not head.intact and head.verification.startswith("verification stopped at event #")


def test_a_checkpoint_the_ledger_no_longer_matches_is_not_trusted(
    db: Database, own_folder: Path
) -> None:
    loan = make.loan(db)
    reports.build_return_report(db, loan)
    (kept,) = own_folder.glob("*.json")
    checkpoint = checkpoints.Checkpoint.model_validate_json(kept.read_bytes())
    spoiled = checkpoint.model_copy(update={"hash": "0" * 64})  # as if another ledger's
    kept.write_text(spoiled.model_dump_json(), encoding="utf-8")
    head = reports.build_return_report(db, loan).ledger
    assert head.intact and head.verified_from == 1 and head.checkpoint_at is None
    assert "does not match: the ledger holds another hash for event" in head.verification
    assert "verified in full instead" in head.verification
    moved_on = checkpoints.Checkpoint.model_validate_json(kept.read_bytes())
    assert moved_on.hash == head.hash  # the full verification kept a new checkpoint


def test_a_spoiled_or_unwritable_checkpoint_folder_costs_only_a_full_verification(
    db: Database, own_folder: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    loan = make.loan(db)
    reports.build_return_report(db, loan)
    (kept,) = own_folder.glob("*.json")
    kept.write_bytes(b"\x00not a checkpoint")
    assert reports.build_return_report(db, loan).ledger.verified_from == 1
    blocked = own_folder / "a file where the folder should be"
    blocked.write_text("", encoding="utf-8")
    monkeypatch.setenv("TRACKER_CHECKPOINT_DIR", str(blocked))
    assert checkpoint_dir() == blocked
    head = reports.build_return_report(db, loan).ledger  # nothing kept, nothing refused
    assert head.intact and head.verified_from == 1


def _tamper(db: Database, statement: str) -> None:
    """A stored value changed by hand, with no event (as the database's owner could)."""
    with db.engine.begin() as conn:
        conn.execute(text(statement))


def test_reconcile_s_audit_covers_the_loans_changed_since_the_last_whole_audit(
    db: Database, own_folder: Path
) -> None:
    changing, quiet = make.loan(db), make.loan(db)
    make.powder(db, make.specimen(db, changing))
    untouched = parse_id(make.powder(db, make.specimen(db, quiet))).number
    first = loan_audit.audit_changes(db)  # no mark yet: the whole lab
    whole = first.rows
    assert first.ok and first.scope == ""
    mark = checkpoints.kept_for(db)
    assert mark is not None and mark.audited_seq == first.chain.head_seq
    drilled = parse_id(make.powder(db, make.specimen(db, changing))).number
    second = loan_audit.audit_changes(db)
    assert second.ok and second.scope == f"the loans changed since event #{mark.audited_seq:,}"
    assert 0 < second.rows < whole  # the changed loan's rows, not the quiet one's
    moved = checkpoints.kept_for(db)
    assert moved is not None and moved.audited_seq == second.chain.head_seq

    _tamper(db, f"UPDATE powder SET mass_mg = 1.0 WHERE id = {untouched}")
    assert loan_audit.audit_changes(db).ok  # the limit, said in its docstring: no event since
    make.powder(db, make.specimen(db, changing))
    _tamper(db, f"UPDATE powder SET mass_mg = 1.5 WHERE id = {drilled}")
    changed = loan_audit.audit_changes(db)
    assert [(d.table, d.field) for d in changed.discrepancies] == [("powder", "mass_mg")]
    assert changed.discrepancies[0].key == format_id(Kind.POWDER, drilled)

    full = audit(db)  # the whole lab finds both, and drops the mark
    assert {d.key for d in full.discrepancies} == {
        format_id(Kind.POWDER, drilled),
        format_id(Kind.POWDER, untouched),
    }
    dropped = checkpoints.kept_for(db)
    assert dropped is not None and dropped.audited_seq is None
    assert len(loan_audit.audit_changes(db).discrepancies) == 2  # no mark: the whole lab again


def test_an_event_naming_only_a_cut_brings_its_loan_into_the_changes_audited(
    db: Database, own_folder: Path
) -> None:
    """The loan of an item deep in its tree (a column's cut) is found through every level
    above it: an event naming only the cut brings the whole loan into the audit."""
    from tests.services.test_instrument import bench
    from tracker.services.corrections import measured_values

    lab = bench(db)
    assert loan_audit.audit_changes(db).ok  # the whole lab, and the mark
    (specimen,) = [a for a in reports_ancestors(db, lab.cut) if a.startswith("SP-")]
    _tamper(
        db, f"UPDATE specimen SET catalog_number = 'CAT X' WHERE id = {parse_id(specimen).number}"
    )
    correction = {"cut": lab.cut, "recovered": "9.100 ug", "reason": "read again"}
    measured_values.correct_recovery(db, "tech", correction)  # names the cut, not the loan
    found = loan_audit.audit_changes(db)
    assert [(d.table, d.key, d.field) for d in found.discrepancies] == [
        ("specimen", specimen, "catalog_number")
    ]


def reports_ancestors(db: Database, item: str) -> list[str]:
    """The IDs above an item, as a scan reads them."""
    from tracker.services.labels.handling import read_scan

    return [line.split()[0] for line in read_scan(db, item).ancestors]
