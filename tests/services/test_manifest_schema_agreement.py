"""The import's checks and `schemas/manifest-row.schema.json` come from one definition
(`manifest_terms`): for any row within what a JSON Schema can say, both give the same
verdict. jsonschema (a general-purpose validator from PyPI) judges the schema's side.

What a schema cannot say is left out of the rows generated here, and checked by the import
alone: a day the calendar lacks (1930-04-31), a date after today, a youngest age older than
the oldest, a repeated catalogue number, a reversed chronostratigraphic range.
"""

from __future__ import annotations

import json
from datetime import date
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from jsonschema import Draft202012Validator

from tracker.domain.spreadsheets import Row
from tracker.services.loans.manifest_rows import check_file, header_problems

SCHEMA = json.loads(
    (Path(__file__).resolve().parents[2] / "schemas" / "manifest-row.schema.json").read_text()
)
TODAY = date(2026, 12, 5)
WORD = st.text(alphabet="abcdefghijklmnopqrstuvwxyz0123456789", min_size=1, max_size=8)


def text_of(limit: int) -> st.SearchStrategy[str]:
    """Texts around ``limit`` characters, words joined by single spaces (cells are stripped)."""
    return st.lists(WORD, min_size=1, max_size=limit // 4 + 3).map(" ".join)


NUMBER = st.one_of(
    st.floats(-400, 400, allow_nan=False).map(lambda x: f"{x:.4f}"),
    st.sampled_from(["12,5", "north", "1e3", "-0", "90", "-90", "180", "-180.0001"]),
)
# dates both sides can judge: good ones in the past, and forms that are wrong on their face
EVENT_DATE = st.sampled_from(
    [
        "1937",
        "1937-01",
        "1937-01-05",
        "1990-01/1990-03",
        "1963-03-08T14:07-0600",
        "1930-13-01",
        "1930-00-10",
        "1930-04-32",
        "19300401",
        "1930/04/01",
        "April 1930",
        "193",
    ]
)
COLUMNS: dict[str, st.SearchStrategy[str]] = {
    "institutionCode": text_of(40),
    "collectionCode": text_of(40),
    "scientificName": text_of(200),
    "preparations": text_of(120),
    "locality": text_of(300),
    "formation": text_of(120),
    "decimalLatitude": NUMBER,
    "decimalLongitude": NUMBER,
    "ageMaxMa": NUMBER,
    "eventDate": EVENT_DATE,
    "dateIdentified": st.sampled_from(["1987-03-12", "12/03/1987", "1987"]),
    "remarksOfTheLender": text_of(200),  # any other heading: kept with the specimen
}


def as_json(cells: dict[str, str]) -> dict[str, Any]:
    """The row as the schema takes it: a number column's number, when the cell is one."""
    row: dict[str, Any] = {}
    for term, value in cells.items():
        if term in ("decimalLatitude", "decimalLongitude", "ageMaxMa"):
            try:
                row[term] = float(value)
                continue
            except ValueError:
                pass
        row[term] = value
    return row


@settings(max_examples=400, deadline=None)
@given(
    st.text(alphabet="ABC 0123456789", min_size=1, max_size=90).map(str.strip),
    st.dictionaries(st.sampled_from(sorted(COLUMNS)), st.just("")).flatmap(
        lambda chosen: st.fixed_dictionaries({term: COLUMNS[term] for term in chosen})
    ),
)
def test_the_checks_and_the_schema_give_one_verdict(catalog: str, cells: dict[str, str]) -> None:
    row = {"catalogNumber": catalog, **cells}
    header = list(row)
    (checked,) = check_file(header, [Row(2, row)], header_problems(header), TODAY, workbook=False)
    schema_errors = [e.message for e in Draft202012Validator(SCHEMA).iter_errors(as_json(row))]
    assert (not checked.problems) == (not schema_errors), (row, checked.problems, schema_errors)


BAD_ROWS = [
    ({"institutionCode": "x" * 41}, "institutionCode", "is longer than 40 characters"),
    ({"catalogNumber": "A" * 81}, "catalogNumber", "is longer than 80 characters"),
    ({"ageMaxMa": "5000"}, "ageMaxMa", "5000 is above 4600"),
    ({"ageMaxMa": "-1.5"}, "ageMaxMa", "-1.5 is below 0"),
    ({"ageMinMa": "5", "ageMaxMa": "3"}, "ageMinMa", "is older than the oldest age"),
    ({"decimalLatitude": "91"}, "decimalLatitude", "is outside -90 to 90"),
    ({"decimalLongitude": "12,5"}, "decimalLongitude", "is not a number"),
]


@pytest.mark.parametrize(("cells", "heading", "reason"), BAD_ROWS)
def test_a_refusal_names_the_file_s_heading_in_plain_words(
    cells: dict[str, str], heading: str, reason: str
) -> None:
    row = {"catalogNumber": "KFM P 1", **cells}
    (checked,) = check_file(list(row), [Row(2, row)], [], TODAY, workbook=False)
    (problem,) = checked.problems
    assert problem.startswith(f"column {heading}: ") and reason in problem, problem
    # never a field's internal name, nor the validation library's own wording
    assert "_" not in problem.split(":")[0] and "should" not in problem
