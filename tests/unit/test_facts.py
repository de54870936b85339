"""The facts of a row, in the form docs/ledger.md documents for a lender.

Expected values are written out by hand (times, days, digests computed with hashlib,
check characters with python-stdnum's ISO/IEC 7064 MOD 37-2), never taken from tracker.
"""

from __future__ import annotations

import hashlib
from datetime import UTC, date, datetime, timedelta, timezone
from decimal import Decimal

from stdnum.iso7064 import mod_37_2

from tracker.domain.facts import Written, layout, row_facts, values_of
from tracker.domain.models import (
    ContainerStatus,
    Document,
    EventRef,
    Label,
    LabelStatus,
    LabSetting,
    LoanTerms,
    Location,
    LocationKind,
    Powder,
)


def _public(prefix: str, number: int) -> str:
    body = f"{prefix}{number:05d}"
    return f"{prefix}-{number:05d}-{mod_37_2.calc_check_digit(body)}"  # python-stdnum


def _powder(**changes: object) -> Powder:
    values: dict[str, object] = {
        "id": 7,
        "specimen_id": 42,
        "tissue": "enamel",
        "tare_mg": Decimal("812.341"),
        "gross_mg": Decimal("815.853"),
        "readability_mg": Decimal("0.001"),
        "mass_mg": Decimal("3.512"),
        "mass_u_mg": Decimal("0.0004"),
        "drilled_at": datetime(2026, 3, 4, 10, 15, 30, 250, tzinfo=timezone(timedelta(hours=2))),
        "drilled_by": "tomas",
        "location_id": 3,
        "created_at": datetime(2026, 3, 4, 8, 15, 31, tzinfo=UTC),
    }
    values.update(changes)
    return Powder(**values)


def test_a_rows_facts_read_as_the_readme_says() -> None:
    powder = _powder()
    rules = layout("powder")
    assert rules.key_of(values_of(powder)) == _public("PW", 7)
    facts = row_facts(rules, values_of(powder))
    assert "id" not in facts  # the key is not repeated
    assert facts["specimen_id"] == _public("SP", 42)  # references by public ID
    assert facts["location_id"] == _public("LC", 3)
    assert facts["drilled_by"] == "tomas"  # operators by their code
    assert facts["drilled_at"] == "2026-03-04T08:15:30.000250Z"  # UTC, microseconds, Z
    assert facts["mass_mg"] == "3.512"  # an exact measured value: its digits
    assert facts["status"] == "available"  # the model's default, as a flush writes it
    assert facts["residual_mg"] is None and facts["site"] is None
    assert len(facts) == len(Powder.__table__.columns) - 1


def test_exact_decimals_days_flags_and_file_contents() -> None:
    exact = row_facts(layout("powder"), values_of(_powder(mass_mg=Decimal("6.0200"))))
    assert exact["mass_mg"] == "6.0200"  # the digits typed, never 6.0200000000000005
    tiny = row_facts(layout("powder"), values_of(_powder(mass_u_mg=Decimal("1E-7"))))
    assert tiny["mass_u_mg"] == "0.0000001"  # never in exponent form
    terms = LoanTerms(
        id=2,
        loan_id=5,
        version=2,
        kind="original",
        effective_from=date(2026, 6, 1),
        permitted_tissues=["enamel"],
        due_on=date(2027, 1, 31),
        return_specimens=False,
        powder_disposition="destroy",
        solution_disposition="destroy",
        recorded_by="ines",
        recorded_at=datetime(2026, 5, 30, tzinfo=UTC),
    )
    facts = row_facts(layout("loan_terms"), values_of(terms))
    assert layout("loan_terms").key_of(values_of(terms)) == "2"  # no public ID: its number
    assert (facts["effective_from"], facts["due_on"]) == ("2026-06-01", "2027-01-31")
    assert facts["return_specimens"] is False and facts["report_data"] is True
    assert facts["permitted_tissues"] == ["enamel"] and facts["loan_id"] == _public("LN", 5)
    content = b"%PDF-1.4 an invented agreement"
    document = Document(
        id=1,
        sha256="x",
        filename="a.pdf",
        media_type="application/pdf",
        size_bytes=len(content),
        content=content,
        added_at=datetime(2026, 1, 1, tzinfo=UTC),
    )
    stated = row_facts(layout("document"), values_of(document))
    assert stated["content"] == "sha256:" + hashlib.sha256(content).hexdigest()


def test_keys_without_a_public_id() -> None:
    assert layout("lab_setting").key_of({"key": "uri_prefix"}) == "uri_prefix"
    assert layout("event_ref").key_of({"seq": 12, "ref": "SP-00001-W"}) == "12/SP-00001-W"
    label = Label(id=9, item_ref="PW-00007-1", status=LabelStatus.QUEUED, queued_event_seq=3)
    assert layout("label").key_of(values_of(label)) == "9"
    assert LabSetting.__tablename__ == "lab_setting" and EventRef.__tablename__ == "event_ref"


def test_written_states_each_row_once_with_its_final_values() -> None:
    written = Written()
    made = Location(id=1, kind=LocationKind.BUILDING, name="Hall A", created_at=datetime.now(UTC))
    written.created(made)
    made.name = "Hall B"
    written.changed(made, ["name"])  # made in the same unit: its creation says it all
    moved = _powder(status=ContainerStatus.AVAILABLE)
    written.changed(moved, ["location_id"])
    moved.location_id = 4
    gone = _powder(id=8)
    written.changed(gone, ["status"])
    written.deleted(gone)
    facts = written.facts()
    assert facts["created"]["location"][_public("LC", 1)]["name"] == "Hall B"
    assert facts["changed"] == {"powder": {_public("PW", 7): {"location_id": _public("LC", 4)}}}
    assert facts["deleted"] == {"powder": [_public("PW", 8)]}
    assert written.names() == {_public("LC", 1), _public("PW", 7), _public("PW", 8)}


def test_nothing_written_states_nothing() -> None:
    assert Written().facts() == {}
