"""Manifest dates, chart names and numbers as the standards define them.

Dates: ISO 8601 as the Darwin Core term list (TDWG) takes eventDate. Chart names: the
ICS International Chronostratigraphic Chart v2023/09. "Today" is the test clock's day,
worked out here from the clock, never read from tracker's answer.
"""

from __future__ import annotations

import json
from datetime import timedelta

import pytest
from sqlalchemy import select
from sqlalchemy.orm import undefer

from tests import factories
from tests.conftest import TickingClock, snapshot_counts
from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.domain.models import CustodyEvent, Specimen
from tracker.services.loans import manifests


def request(loan: str, text: str) -> dict[str, object]:
    return {"loan": loan, "filename": "list.csv", "content": text.encode("utf-8")}


def refused(db: Database, loan: str, text: str, *words: str) -> str:
    """The one-line refusal of an import, checked to name its words and to write nothing."""
    before = snapshot_counts(db)
    with pytest.raises(InputError) as caught:
        manifests.import_manifest(db, "boss", request(loan, text))
    line = f"{caught.value.field}: {caught.value.reason}"
    assert "\n" not in line and all(w in line for w in words), line
    assert snapshot_counts(db) == before
    return line


def stored(db: Database, catalog: str) -> tuple[str | None, dict[str, str]]:
    """A specimen's locality and extra terms, as stored."""
    with db.read_session() as session:
        query = select(Specimen).where(Specimen.catalog_number == catalog)
        specimen = session.scalars(query.options(undefer(Specimen.extra))).one()
        return specimen.locality, dict(specimen.extra)


def test_dates_of_reduced_precision_intervals_and_offsets_are_kept_as_typed(
    db: Database,
) -> None:
    loan = factories.loan(db)
    typed = ["1937-01", "1941", "1990-01/1990-03", "1990-01-05/12", "1963-03-08T14:07-0600"]
    rows = [f"FM D-{n},{value}" for n, value in enumerate(typed)]
    text = "\n".join(["catalogNumber,eventDate", *rows]) + "\n"
    outcome = manifests.import_manifest(db, "boss", request(loan, text))
    assert len(outcome.created) == len(typed)
    for n, value in enumerate(typed):
        assert stored(db, f"FM D-{n}")[1]["eventDate"] == value


def test_an_event_date_with_trailing_text_is_refused_naming_heading_row_and_value(
    db: Database,
) -> None:
    loan = factories.loan(db)
    text = "catalogNumber,eventDate\nFM E-1,1930-04-01\nFM E-2,1930-04-01xyz\n"
    refused(db, loan, text, "list.csv, row 3", "eventDate", "1930-04-01xyz", "ISO 8601")


def test_a_reversed_interval_is_refused(db: Database) -> None:
    loan = factories.loan(db)
    text = "catalogNumber,georeferencedDate\nFM R-1,1990-03/1990-01\n"
    refused(db, loan, text, "row 2", "georeferencedDate", "1990-03/1990-01", "ends before")


def test_a_date_after_today_is_refused_and_today_is_said(db: Database, clock: TickingClock) -> None:
    loan = factories.loan(db)
    today = clock.now.date()  # the clock ticks by seconds: still this day when the file is read
    tomorrow = today + timedelta(days=1)
    text = f"catalogNumber,eventDate\nFM F-1,{today.isoformat()}\nFM F-2,{tomorrow.isoformat()}\n"
    refused(db, loan, text, "row 3", "eventDate", tomorrow.isoformat(), today.isoformat())
    interval = f"catalogNumber,eventDate\nFM F-3,{tomorrow.isoformat()}/{tomorrow.year + 1}\n"
    refused(db, loan, interval, "row 2", "after today")


def test_a_legacy_date_in_a_term_never_computed_with_is_kept_with_a_warning(
    db: Database,
) -> None:
    loan = factories.loan(db)
    text = "catalogNumber,dateIdentified\nFM L-1,12/03/1987\nFM L-2,1987-03\n"
    preview = manifests.preview_manifest(db, request(loan, text))
    assert preview.problems == 0 and [r.action for r in preview.rows] == ["create", "create"]
    (warning,) = preview.rows[0].warnings
    assert "dateIdentified" in warning and "12/03/1987" in warning and "kept" in warning
    assert preview.rows[1].warnings == []
    outcome = manifests.import_manifest(db, "boss", request(loan, text))
    assert stored(db, "FM L-1")[1]["dateIdentified"] == "12/03/1987"  # as typed
    with db.read_session() as session:
        event = session.scalars(select(CustodyEvent).where(CustodyEvent.seq == outcome.event_seq))
        payload = json.loads(event.one().payload)
    assert payload["kept_with_warnings"] == ["FM L-1"]  # the row named in the ledger


def test_chart_names_unknown_are_warned_of_and_reversed_ranges_refused(db: Database) -> None:
    loan = factories.loan(db)
    head = "catalogNumber,earliestEpochOrLowestSeries,latestEpochOrHighestSeries"
    text = f"{head}\nFM C-1,Early Miocene,Middle Miocene\nFM C-2,Mioscene,Miocene\n"
    preview = manifests.preview_manifest(db, request(loan, text))
    assert preview.problems == 0 and preview.rows[0].warnings == []
    (warning,) = preview.rows[1].warnings
    assert "earliestEpochOrLowestSeries" in warning and "Mioscene" in warning
    assert "v2023/09" in warning
    reversed_ = f"{head}\nFM C-3,Pliocene,Miocene\n"
    refused(db, loan, reversed_, "row 2", "Pliocene", "Miocene", "younger")
    era = "catalogNumber,earliestEraOrLowestErathem,latestEraOrHighestErathem\n"
    refused(db, loan, era + "FM C-4,cenozoic,MESOZOIC\n", "row 2", "Cenozoic", "Mesozoic")


@pytest.mark.parametrize("column", ["decimalLatitude", "ageMinMa"])
def test_a_decimal_comma_is_not_a_number(db: Database, column: str) -> None:
    loan = factories.loan(db)
    text = f'catalogNumber,{column}\nFM N-1,"12,5"\n'
    refused(db, loan, text, "row 2", column, "12,5", "not a number")


def test_text_that_starts_like_a_formula_is_kept_as_typed(db: Database) -> None:
    loan = factories.loan(db)
    typed = ["- 5 km N of the ford (invented)", "@team", "=sum", "+44 0000 000000"]
    rows = [f"FM T-{n},{value},{value}" for n, value in enumerate(typed)]
    text = "\n".join(["catalogNumber,locality,recordedBy", *rows]) + "\n"
    manifests.import_manifest(db, "boss", request(loan, text))
    for n, value in enumerate(typed):
        locality, extra = stored(db, f"FM T-{n}")
        assert (locality, extra["recordedBy"]) == (value, value)
