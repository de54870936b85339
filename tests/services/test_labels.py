"""The label queue on SQLite and PostgreSQL: bench actions queue inside their own event,
the manual queue and cancel record one event each, and the lab's link prefix is honoured
wherever an ID is read."""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import pytest
from sqlalchemy import select
from stdnum.iso7064 import mod_37_2

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation, TrackerError
from tracker.domain.models import CustodyEvent, Label, LabelStatus
from tracker.services.bench import chemistry, drilling, solutions
from tracker.services.labels import handling
from tracker.services.ledger.chain import verify
from tracker.services.loans import specimens


def _events(db: Database) -> list[CustodyEvent]:
    with db.read_session() as session:
        return list(session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq)))


def _labels(db: Database) -> list[Label]:
    with db.read_session() as session:
        return list(session.scalars(select(Label).order_by(Label.id)))


def _queued_by_one_event(
    db: Database, action: Callable[[], Any], item: Callable[[Any], str], counts: Counts
) -> None:
    before = counts()
    answer = action()
    after = counts()
    assert after["ledger_head"] == before["ledger_head"] + 1  # one event, not two
    assert after["label"] == before["label"] + 1
    event = _events(db)[-1]
    label = _labels(db)[-1]
    assert (label.item_ref, label.status, label.queued_event_seq) == (
        item(answer),
        LabelStatus.QUEUED,
        event.seq,
    )
    assert label.queued_by == event.operator and event.object_ref == item(answer)
    assert json.loads(event.payload)["label"] == "queued"  # the ledger says so too


def test_each_bench_action_queues_its_label_inside_its_own_event(
    db: Database, counts: Counts
) -> None:
    spec = make.specimen(db, make.loan(db), checked_in=False)
    _queued_by_one_event(
        db,
        lambda: specimens.check_in(db, "tech", {"specimen": spec, "condition": "ok"}),
        lambda a: a.item.id,
        counts,
    )
    drill = {"specimen": spec, "tissue": "enamel", "tare": "1.000 mg", "gross": "3.000 mg"}
    _queued_by_one_event(db, lambda: drilling.drill(db, "tech", drill), lambda a: a.item.id, counts)
    powder = _labels(db)[-1].item_ref
    dissolve = {
        "powder": powder,
        "acid": "2 M HNO3",
        "vial_tare": "5.0000 g",
        "vial_gross": "6.0000 g",
    }
    _queued_by_one_event(
        db, lambda: solutions.dissolve(db, "tech", dissolve), lambda a: a.item.id, counts
    )
    solution = _labels(db)[-1].item_ref
    make.concentration(db, solution)
    take = {"solution": solution, "tare": "2.0000 g", "gross": "2.1000 g"}
    _queued_by_one_event(
        db, lambda: solutions.take_aliquot(db, "tech", take), lambda a: a.item.id, counts
    )
    batch = make.batch(db)
    blank = {"batch": batch, "kind": "blank"}
    _queued_by_one_event(
        db, lambda: chemistry.add_position(db, "tech", blank), lambda a: a.item.id, counts
    )
    assert [label.item_ref[:2] for label in _labels(db)] == ["SP", "PW", "SO", "AQ", "CP"]
    assert verify(db).ok


def test_a_refused_bench_action_queues_nothing(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    before = counts()
    with pytest.raises(InputError):
        drilling.drill(
            db,
            "tech",
            {"specimen": spec, "tissue": "enamel", "tare": "3.000 mg", "gross": "1.000 mg"},
        )
    assert counts() == before


def test_queue_by_hand_is_one_event_for_all_items(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    powder = make.powder(db, spec)
    for label_id in (spec, powder):  # clear what the bench actions queued
        handling.cancel_labels(db, "tech", {"items": [label_id], "reason": "test set-up"})
    material = {"name": "Invented carbonate", "element": "Ca"}
    reference = chemistry.add_reference_material(db, "boss", material).item.id
    before = counts()
    answer = handling.queue_labels(
        db, "tech", {"items": [spec, powder.lower(), reference], "copies": 2}
    )
    assert counts()["ledger_head"] == before["ledger_head"] + 1
    assert counts()["label"] == before["label"] + 6
    assert answer.item.items == [spec, spec, powder, powder, reference, reference]
    event = _events(db)[-1]
    assert event.action == "labels.queued" and event.object_ref == ""  # several items
    payload = json.loads(event.payload)
    facts = payload.pop("facts")
    assert payload == {"items": [spec, powder, reference], "copies": 2}
    listed = handling.list_labels(db)
    assert [row.item for row in listed] == [spec, spec, powder, powder, reference, reference]
    assert all(row.queued_event == event.seq for row in listed)
    # the six rows that name the event are among its facts, as they were stored
    stated = facts["created"]["label"]
    assert len(stated) == 6 and {row["queued_event_seq"] for row in stated.values()} == {event.seq}
    assert sorted(row["item_ref"] for row in stated.values()) == sorted(answer.item.items)


@pytest.mark.parametrize(
    ("items", "error", "field", "fragment"),
    [
        (["{loan_id}"], InputError, "items", "has no label"),
        (["{spec}", "{spec_lower}"], InputError, "items", "a second time"),
        (["{spec}"], RuleViolation, "items", "already has a label in the queue"),
        (["SP-99999-" + mod_37_2.calc_check_digit("SP99999")], InputError, "items", "no specimen"),
        ([], InputError, "items", "at least one"),
        ([" , ,"], InputError, "items", "at least one"),
    ],
)
def test_queue_refusals_write_nothing(
    db: Database,
    counts: Counts,
    items: list[str],
    error: type[TrackerError],
    field: str,
    fragment: str,
) -> None:
    loan = make.loan(db)
    spec = make.specimen(db, loan)  # checked in: its label is queued
    with db.read_session() as session:
        from tracker.services.core.lookup import get_loan

        loan_id = get_loan(session, "loan", loan).public_id
    filled = [
        i.format(loan_id=loan_id, spec=spec, spec_lower=spec.lower().replace("-", ""))
        for i in items
    ]
    before = counts()
    with pytest.raises(error) as caught:
        handling.queue_labels(db, "tech", {"items": filled})
    assert caught.value.field == field and fragment in caught.value.reason
    assert counts() == before


def test_cancel_takes_labels_off_the_queue_with_one_event(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    before = counts()
    answer = handling.cancel_labels(db, "tech", {"items": [spec], "reason": "returned unopened"})
    assert answer.item.items == [spec]
    assert counts()["ledger_head"] == before["ledger_head"] + 1
    assert handling.list_labels(db) == []
    assert [r.status for r in handling.list_labels(db, everything=True)] == ["cancelled"]
    with pytest.raises(RuleViolation, match="no label in the queue"):
        handling.cancel_labels(db, "tech", {"items": [spec], "reason": "again"})


def test_ids_typed_in_one_text_are_separated_by_commas(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    spec = make.specimen(db, loan)
    other = make.specimen(db, loan)
    before = counts()
    answer = handling.cancel_labels(
        db, "tech", {"items": f" {spec} ,, {other},", "reason": "mis-scan"}
    )
    assert answer.item.items == [spec, other]
    assert counts()["ledger_head"] == before["ledger_head"] + 1
    assert handling.list_labels(db) == []


PREFIX = "HTTPS://LAB.EXAMPLE/T/"  # invented


def test_the_link_prefix_is_a_manager_setting_recorded_in_the_ledger(
    db: Database, counts: Counts
) -> None:
    before = counts()
    with pytest.raises(RuleViolation, match="manager"):
        handling.set_uri_prefix(db, "tech", {"uri_prefix": PREFIX})
    with pytest.raises(InputError, match="not a URI prefix"):
        handling.set_uri_prefix(db, "boss", {"uri_prefix": "lab example t"})
    assert counts() == before
    handling.set_uri_prefix(db, "boss", {"uri_prefix": PREFIX})
    assert handling.label_settings(db).uri_prefix == PREFIX
    event = _events(db)[-1]
    payload = json.loads(event.payload)
    facts = payload.pop("facts")
    assert (event.action, payload) == (
        "labels.uri_prefix_set",
        {"uri_prefix": PREFIX, "previous": None},
    )
    assert facts["created"]["lab_setting"]["uri_prefix"]["value"] == PREFIX
    handling.set_uri_prefix(db, "boss", {"uri_prefix": None})
    assert handling.label_settings(db).uri_prefix is None
    gone = json.loads(_events(db)[-1].payload)["facts"]
    # a setting is cleared in place (no service deletes a row), so its value is stated empty
    assert list(gone) == ["changed"]
    assert gone["changed"]["lab_setting"]["uri_prefix"]["value"] == ""
    assert verify(db).ok


def test_a_scanned_link_is_accepted_wherever_an_id_is(db: Database) -> None:
    handling.set_uri_prefix(db, "boss", {"uri_prefix": PREFIX})
    spec = make.specimen(db, make.loan(db))
    powder = drilling.drill(
        db,
        "tech",
        {
            "specimen": PREFIX.lower() + spec,
            "tissue": "enamel",
            "tare": "1.000 mg",
            "gross": "2.000 mg",
        },
    ).item.id
    assert handling.read_scan(db, PREFIX + powder).id == powder
    assert handling.facts_for(db, [spec])[0].payload == PREFIX + spec
    with pytest.raises(InputError, match="not to this lab's labels") as caught:
        handling.read_scan(db, "HTTPS://OTHER-LAB.EXAMPLE/T/" + powder)
    assert caught.value.field == "scanned"


def test_a_link_is_refused_when_the_lab_prints_none(db: Database) -> None:
    spec = make.specimen(db, make.loan(db))
    with pytest.raises(InputError, match="prints no link prefix"):
        handling.read_scan(db, PREFIX + spec)


def test_a_scan_says_what_the_label_names(db: Database) -> None:
    spec = make.specimen(db, make.loan(db))
    powder = make.powder(db, spec, mg="2.150")
    found = handling.read_scan(db, powder.lower().replace("-", ""))
    assert (found.id, found.kind, found.status) == (powder, "powder", "available")
    assert found.label[1] == "enamel · 2.150 mg"
    assert [a.split()[0] for a in found.ancestors][-1] == spec


def test_a_wrong_check_character_asks_for_a_rescan_without_naming_the_right_one(
    db: Database,
) -> None:
    spec = make.specimen(db, make.loan(db))
    expected = mod_37_2.calc_check_digit(spec[:8].replace("-", ""))  # python-stdnum
    assert spec[-1] == expected
    wrong = "0" if expected != "0" else "1"
    with pytest.raises(InputError) as caught:
        handling.read_scan(db, spec[:-1] + wrong)
    reason = caught.value.reason
    assert f"check character '{wrong}'" in reason and "scan the label again" in reason
    assert f"'{expected}'" not in reason  # naming it would invite "fixing" the last character
