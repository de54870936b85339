"""What a row of a lender's list may hold, term by term: one definition that the import's
checks (`manifest_rows`) read and that `schemas/manifest-row.schema.json` is written from
(:func:`record_model`), so the two cannot disagree.

* The Darwin Core terms that become specimen columns, and tracker's own numeric ages, take
  the limits of the model `specimen add` validates (`NewSpecimen`): lengths, age bounds.
* The coordinates are numbers within the ranges their Darwin Core definitions give
  (decimal degrees: latitude −90 to 90, longitude −180 to 180; TDWG term list).
* Date terms are ISO 8601 as Darwin Core takes them, read whole by `domain.dwc_dates`; the
  schema can say only the form (a year, a month 01–12, a day 01–31, then a time or an
  interval's end), the import also refuses a day the calendar lacks and a date after today.
* Any other heading is text kept with the specimen (all of a row's, together, within the
  caps of `domain.darwincore`).
"""

from __future__ import annotations

from typing import Annotated, Any

from pydantic import BaseModel, ConfigDict, Field, create_model

from tracker.services.loans.specimens import NewSpecimen

# Darwin Core terms (TDWG standard) that become specimen columns; the rest go to `extra`.
TERM_FIELDS = {
    "catalogNumber": "catalog_number",
    "institutionCode": "institution_code",
    "collectionCode": "collection_code",
    "scientificName": "scientific_name",
    "preparations": "skeletal_element",
    "locality": "locality",
    "formation": "formation",
    "earliestEpochOrLowestSeries": "earliest_epoch",
    "latestEpochOrHighestSeries": "latest_epoch",
}
# tracker's own headings for what Darwin Core does not define (numeric ages in Ma)
OWN_FIELDS = {"ageMinMa": "age_min_ma", "ageMaxMa": "age_max_ma"}
REQUIRED = "catalogNumber"

# Darwin Core date terms, read whole as ISO 8601 (`tracker.domain.dwc_dates`) and kept as typed.
# eventDate must read: it is the date Darwin Core readers sort and filter specimens by. tracker
# computes with none of the others; a legacy text in one of them that is no ISO 8601 date
# (12/03/1987) is kept as typed, with a warning on its row. Any date that reads but cannot be
# right (an interval ending before it starts, a date after today) is refused in every date term.
DATE_TERMS = ("eventDate", "dateIdentified", "georeferencedDate")
STRICT_DATE_TERMS = frozenset({"eventDate"})
# The form of an ISO 8601 date as Darwin Core takes it: 1937, 1937-01 or 1937-01-05, maybe
# with a time (T14:07, seconds, a zone Z or ±hh[:mm]), maybe an interval whose end is a
# date or its shortened tail (1990-01-05/12, 1990-01/03).
_MONTH, _DAY = r"(0[1-9]|1[0-2])", r"(0[1-9]|[12]\d|3[01])"
_DATE = rf"\d{{4}}(-{_MONTH}(-{_DAY})?)?"
_TIME = r"(T\d{2}(:\d{2}(:\d{2}(\.\d+)?)?)?(Z|[+-]\d{2}(:?\d{2})?)?)?"
_END = rf"({_DATE}|{_MONTH}-{_DAY}|{_MONTH}|{_DAY})"
ISO_DATE_FORM = rf"^{_DATE}{_TIME}(/{_END}{_TIME})?$"

# Number terms that are no specimen column, with the range their definition gives.
COORDINATES: dict[str, tuple[float, float]] = {
    "decimalLatitude": (-90.0, 90.0),
    "decimalLongitude": (-180.0, 180.0),
}
NUMBER_TERMS = (*COORDINATES, *OWN_FIELDS)


def outside(term: str, value: float) -> str | None:
    """Why a number read from ``term``'s column is out of its range, or None."""
    low, high = COORDINATES.get(term, (None, None))
    if low is None or high is None or low <= value <= high:
        return None
    return f"is outside {low:g} to {high:g}"


def record_model() -> type[BaseModel]:
    """The row as the schema describes it, built from the definitions above."""
    specimen = NewSpecimen.model_fields  # each with its limits and its default (or none)
    fields: dict[str, Any] = {
        term: (specimen[field].annotation, specimen[field])
        for term, field in {**TERM_FIELDS, **OWN_FIELDS}.items()
    }
    for term, (low, high) in COORDINATES.items():
        fields[term] = (Annotated[float, Field(ge=low, le=high)] | None, None)
    for term in DATE_TERMS:  # a legacy text in the others is kept, with a warning
        form = Field(pattern=ISO_DATE_FORM) if term in STRICT_DATE_TERMS else Field()
        fields[term] = (Annotated[str, form] | None, None)
    model: type[BaseModel] = create_model(
        "ManifestRecord",
        __config__=ConfigDict(extra="allow"),
        __doc__=(
            "One row of a lender's list, as Darwin Core terms (TDWG) plus tracker's numeric "
            "ages. Any other term may appear too: it is kept with the specimen."
        ),
        **fields,
    )
    return model
