"""Text from outside through the services, on SQLite and PostgreSQL: the request models
refuse control, bidirectional and invisible characters with one line naming the field (or
the file, row and column) and showing the character, write nothing, and keep text in NFC.

Expectations about characters come from ``unicodedata`` (general categories, UAX #15
normalization), never from tracker's own output.
"""

from __future__ import annotations

import unicodedata
from typing import Any

import pytest

from tests import factories, keys
from tests.conftest import snapshot_counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.services.admin import setup
from tracker.services.bench import custody
from tracker.services.instrument import sessions
from tracker.services.loans import lending, manifests, specimens

# One character of each class the rule refuses, with the Unicode category that says so.
HIDDEN = {
    "C0 control (ESC)": "\x1b",
    "C1 control (CSI)": "\x9b",
    "DEL": "\x7f",
    "bidi override": "\u202e",
    "bidi isolate": "\u2067",
    "zero-width space": "\u200b",
    "zero-width joiner": "\u200d",
    "word joiner": "\u2060",
    "byte order mark inside": "\ufeff",
    "soft hyphen": "\u00ad",
    "line separator": "\u2028",
    "private use": "\ue000",
    "unassigned": "\u0378",
}


def test_the_sample_characters_are_what_their_names_say() -> None:
    categories = {name: unicodedata.category(char) for name, char in HIDDEN.items()}
    assert categories["C0 control (ESC)"] == categories["DEL"] == "Cc"
    assert categories["C1 control (CSI)"] == "Cc"
    assert categories["private use"] == "Co" and categories["unassigned"] == "Cn"
    assert categories["line separator"] == "Zl"
    assert {categories[k] for k in list(HIDDEN)[3:10]} == {"Cf"}


@pytest.mark.parametrize("name", list(HIDDEN))
def test_a_typed_catalogue_number_with_a_hidden_character_is_refused(
    db: Database, name: str
) -> None:
    char = HIDDEN[name]
    loan = factories.loan(db)
    before = snapshot_counts(db)
    with pytest.raises(InputError) as caught:
        specimens.add_specimen(db, "boss", {"loan": loan, "catalog_number": f"FM {char}12"})
    line = caught.value.one_line()
    assert line.startswith("catalog-number: 'FM <U+")
    assert f"U+{ord(char):04X}" in line
    assert "\n" not in line and char not in line
    assert snapshot_counts(db) == before


def test_names_are_one_line_and_notes_keep_their_lines(db: Database) -> None:
    before = snapshot_counts(db)
    for char in ("\n", "\t", "\r"):
        with pytest.raises(InputError) as caught:
            lending.add_lender(db, "boss", {"name": f"Two{char}lines Museum"})
        assert caught.value.field == "name"
    assert snapshot_counts(db) == before
    loan = factories.loan(db)
    specimen = factories.specimen(db, loan)
    box = factories.location(db)
    moved = custody.move(
        db, "tech", {"item": specimen, "to": box, "note": "first\r\nsecond\tthird"}
    )
    assert moved.event_seq > before["ledger_head"]
    with pytest.raises(InputError) as caught:
        custody.move(db, "tech", {"item": specimen, "to": box, "note": "ok\x1b[2J"})
    assert caught.value.field == "note" and "<U+001B>" in str(caught.value.value)


def test_text_inside_a_nested_request_is_named_by_its_path(db: Database) -> None:
    lender = lending.add_lender(db, "boss", {"name": "Fictional Museum"}).item.id
    before = snapshot_counts(db)
    request = {
        "lender": lender,
        "reference": "FM-9",
        "title": "t",
        "borrower": "Dr. Imaginary",
        "received_on": "2026-01-02",
        "terms": {"permitted_tissues": ["enamel\u200b"], "due_on": "2027-12-31"},
    }
    with pytest.raises(InputError) as caught:
        lending.add_loan(db, "boss", request)
    assert caught.value.field == "terms.permitted-tissues"
    assert snapshot_counts(db) == before


def test_the_same_letters_composed_differently_are_one_catalogue_number(db: Database) -> None:
    # UAX #15: "é" as U+00E9 and as "e" + U+0301 are canonically equivalent; NFC composes.
    composed, decomposed = "Muséum 7", "Muse\u0301um 7"
    assert unicodedata.normalize("NFC", decomposed) == composed != decomposed
    loan = factories.loan(db)
    added = specimens.add_specimen(db, "boss", {"loan": loan, "catalog_number": decomposed})
    assert added.item.catalog_number == composed
    before = snapshot_counts(db)
    with pytest.raises(RuleViolation, match="already on this loan"):
        specimens.add_specimen(db, "boss", {"loan": loan, "catalog_number": composed})
    assert snapshot_counts(db) == before


def manifest(db: Database, loan: str, text: str, name: str = "list.csv") -> dict[str, object]:
    return {"loan": loan, "filename": name, "content": text.encode("utf-8")}


def test_a_manifest_cell_with_a_hidden_character_is_refused_at_its_row_and_column(
    db: Database,
) -> None:
    loan = factories.loan(db)
    before = snapshot_counts(db)
    for column, row in (
        ("catalogNumber", "FM 2\u202e1,Pit"),
        ("locality", "FM 2,Pit\x1b]0;title\x07"),
        ("fieldNumber", "FM 2,Pit,F\u200b9"),
    ):
        text = f"catalogNumber,locality,fieldNumber\nFM 1,Pit,F1\n{row}\n"
        preview = manifests.preview_manifest(db, manifest(db, loan, text))
        assert [r.action for r in preview.rows] == ["create", "error"]
        assert preview.rows[1].problems[0].startswith(f"column {column}: ")
        with pytest.raises(InputError) as caught:
            manifests.import_manifest(db, "boss", manifest(db, loan, text))
        assert caught.value.field == "list.csv, row 3"
        assert caught.value.reason.startswith(f"column {column}: ")
        assert "<U+" in caught.value.reason
    assert snapshot_counts(db) == before


def test_a_manifest_heading_with_a_hidden_character_is_a_problem_of_the_file(
    db: Database,
) -> None:
    loan = factories.loan(db)
    before = snapshot_counts(db)
    text = "catalogNumber,local\u200bity\nFM 1,Pit\n"
    with pytest.raises(InputError) as caught:
        manifests.import_manifest(db, "boss", manifest(db, loan, text))
    assert caught.value.field == "list.csv, header"
    assert "<U+200B>" in caught.value.reason
    assert snapshot_counts(db) == before


def test_two_headings_composed_two_ways_are_one_heading_written_twice(db: Database) -> None:
    loan = factories.loan(db)
    before = snapshot_counts(db)
    text = "catalogNumber,café,cafe\u0301\nFM 1,a,b\n"  # UAX #15: the same heading twice
    with pytest.raises(InputError) as caught:
        manifests.import_manifest(db, "boss", manifest(db, loan, text))
    assert caught.value.field == "list.csv, header" and "twice" in caught.value.reason
    assert snapshot_counts(db) == before


def test_a_manifest_reads_composed_and_decomposed_numbers_as_one(db: Database) -> None:
    loan = factories.loan(db)
    first = "catalogNumber,locality\nMuséum 1,Pit\n"
    manifests.import_manifest(db, "boss", manifest(db, loan, first))
    again = "catalogNumber,locality\nMuse\u0301um 1,Pit\n"  # the same number, decomposed
    assert [r.action for r in manifests.preview_manifest(db, manifest(db, loan, again)).rows] == [
        "unchanged"
    ]
    twice = "catalogNumber,locality\nMuséum 2,Pit\nMuse\u0301um 2,Pit\n"
    rows = manifests.preview_manifest(db, manifest(db, loan, twice)).rows
    assert rows[1].action == "error" and "repeats row 2" in rows[1].problems[0]


PROFILE: dict[str, Any] = {
    "format": "csv",
    "columns": {"run_order": "Run", "sample_name": "Name", "ratios": {"44/40": "r4440"}},
}


def test_an_instrument_row_kept_as_text_is_judged_at_its_row_and_column(db: Database) -> None:
    setup.add_operator(db, "boss", keys.person("ana", "Ana Lyst"))
    sessions.save_profile(db, "boss", {"name": "mc", "definition": PROFILE})
    before = snapshot_counts(db)
    export = "Run,Name,r4440\n1,STD-X,2.1\n2,unknown\u202evial,2.2\n3,STD-X,2.1\n"
    request = {
        "profile": "mc",
        "filename": "run.csv",
        "content": export.encode(),
        "name": "s1",
        "instrument": "MC",
        "element": "Ca",
        "bracketing_standard": "STD-X",
    }
    with pytest.raises(InputError) as caught:
        sessions.import_session(db, "ana", request)
    assert caught.value.field == "run.csv, row 3, column Name"
    assert "<U+202E>" in str(caught.value.value)
    assert snapshot_counts(db) == before


def test_a_saved_profile_names_the_key_with_the_hidden_character(db: Database) -> None:
    before = snapshot_counts(db)
    spoiled = {**PROFILE, "columns": {**PROFILE["columns"], "sample_name": "Na\x1bme"}}
    with pytest.raises(InputError) as caught:
        sessions.save_profile(db, "boss", {"name": "mc", "definition": spoiled})
    assert caught.value.field == "definition.columns.sample-name"
    assert snapshot_counts(db) == before
