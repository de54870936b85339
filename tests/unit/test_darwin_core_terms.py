"""The Darwin Core term list is the TDWG's, and headings are spelt as its terms.

Source of the copy in tests/data/tdwg_dwc_all_dwc_vertical.csv: the TDWG repository
tdwg/dwc, file dist/all_dwc_vertical.csv at commit 867006d3 (the recommended terms as of
2023-06-28, per docs/terms/index.md of the same commit), one term name a line.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tracker.domain.darwincore import TERMS, dynamic_properties, term_headings, term_name

TDWG_LIST = Path(__file__).resolve().parents[1] / "data" / "tdwg_dwc_all_dwc_vertical.csv"


def tdwg_terms() -> set[str]:
    return {line.strip() for line in TDWG_LIST.read_text(encoding="utf-8").splitlines() if line}


def test_the_term_list_is_the_tdwg_list() -> None:
    assert set(TERMS) == tdwg_terms()


@pytest.mark.parametrize(
    "term",
    # well known to every collection (TDWG Quick Reference Guide)
    [
        "catalogNumber",
        "institutionCode",
        "scientificName",
        "eventDate",
        "decimalLatitude",
        "dynamicProperties",
        "earliestEpochOrLowestSeries",
        "modified",
        "license",
        "rightsHolder",
        "references",
        "type",
        "language",
        "bibliographicCitation",
        "accessRights",
    ],
)
def test_well_known_terms_are_present(term: str) -> None:
    assert term in TERMS


@pytest.mark.parametrize(
    "name",
    # deprecated in Darwin Core (the List of Terms marks them so; from memory) or made up
    ["individualID", "occurrenceDetails", "catalogueNumber", "ageMinMa", "drawerNote"],
)
def test_deprecated_or_made_up_names_are_not_terms(name: str) -> None:
    assert name not in TERMS


@pytest.mark.parametrize(
    ("heading", "term"),
    [
        ("catalogNumber", "catalogNumber"),
        ("CATALOGNUMBER", "catalogNumber"),
        ("dwc:catalogNumber", "catalogNumber"),
        ("DwC:CatalogNumber", "catalogNumber"),
        ("http://rs.tdwg.org/dwc/terms/catalogNumber", "catalogNumber"),
        ("dcterms:modified", "modified"),
        ("http://purl.org/dc/terms/bibliographicCitation", "bibliographicCitation"),
        ("http://purl.org/dc/elements/1.1/type", "type"),
        ("agemaxma", "ageMaxMa"),  # tracker's own heading, in any case
        ("drawer note", "drawer note"),  # not a term: kept as written
        ("http://example.org/terms/drawer", "http://example.org/terms/drawer"),
    ],
)
def test_headings_are_spelt_as_the_term(heading: str, term: str) -> None:
    assert term_name(heading) == term


def test_two_headings_of_one_term_are_refused_naming_both() -> None:
    with pytest.raises(ValueError, match="'locality' and 'dwc:Locality'"):
        term_headings(["catalogNumber", "locality", "dwc:Locality"])


def test_the_lenders_dynamic_properties_are_never_overwritten() -> None:
    merged = json.loads(
        dynamic_properties(
            '{"a": 1, "trackerId": "theirs"}', {"a": "2", "b": "3"}, {"trackerId": "S1"}
        )
    )
    assert merged == {
        "a": 1,
        "a (column)": "2",
        "b": "3",
        "trackerId": "theirs",
        "trackerId (tracker)": "S1",
    }
    kept = json.loads(dynamic_properties("weight=12g; length=3cm", {}, {"trackerId": "S1"}))
    assert kept == {"lenderText": "weight=12g; length=3cm", "trackerId": "S1"}
