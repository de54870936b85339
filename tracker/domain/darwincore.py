"""Darwin Core term names (TDWG standard), used to decide what may head an export column.

The list holds the terms tracker reads or writes plus common occurrence, location,
geological-context, taxon and measurement terms (the check-values list, extended from
memory of the TDWG quick reference). A heading that is not here never becomes an export
column; its value travels inside `dynamicProperties` instead.
"""

from __future__ import annotations

from collections.abc import Mapping

# What one specimen keeps of a lender's other terms (headings that are no specimen column).
# The Darwin Core list holds about two hundred terms (TDWG quick reference, from memory),
# so a row filling more than that is not a lender's record of one specimen; and the
# filled terms of one specimen, names and values together, stay within 64 Ki characters
# (a few pages of remarks). Every specimen loaded later carries them.
MAX_EXTRA_TERMS = 200
MAX_EXTRA_CHARS = 64 * 1024

TERMS: frozenset[str] = frozenset(
    (
        "institutionCode",
        "collectionCode",
        "catalogNumber",
        "otherCatalogNumbers",
        "occurrenceID",
        "basisOfRecord",
        "preparations",
        "disposition",
        "materialSampleID",
        "recordedBy",
        "recordNumber",
        "individualCount",
        "sex",
        "lifeStage",
        "occurrenceRemarks",
        "dynamicProperties",
        "scientificName",
        "identifiedBy",
        "dateIdentified",
        "typeStatus",
        "kingdom",
        "phylum",
        "class",
        "order",
        "family",
        "genus",
        "specificEpithet",
        "taxonRank",
        "vernacularName",
        "eventDate",
        "year",
        "month",
        "day",
        "country",
        "countryCode",
        "stateProvince",
        "county",
        "municipality",
        "locality",
        "verbatimLocality",
        "decimalLatitude",
        "decimalLongitude",
        "georeferencedDate",
        "minimumElevationInMeters",
        "maximumElevationInMeters",
        "geologicalContextID",
        "earliestEonOrLowestEonothem",
        "latestEonOrHighestEonothem",
        "earliestEraOrLowestErathem",
        "latestEraOrHighestErathem",
        "earliestPeriodOrLowestSystem",
        "latestPeriodOrHighestSystem",
        "earliestEpochOrLowestSeries",
        "latestEpochOrHighestSeries",
        "earliestAgeOrLowestStage",
        "latestAgeOrHighestStage",
        "lowestBiostratigraphicZone",
        "highestBiostratigraphicZone",
        "lithostratigraphicTerms",
        "group",
        "formation",
        "member",
        "bed",
        "measurementID",
        "measurementType",
        "measurementValue",
        "measurementAccuracy",
        "measurementUnit",
        "measurementMethod",
        "measurementDeterminedBy",
        "measurementDeterminedDate",
        "measurementRemarks",
        "resourceRelationshipID",
        "relatedResourceID",
        "relationshipOfResource",
    )
)


def is_term(name: str) -> bool:
    return name in TERMS


def extra_terms_problem(extra: Mapping[str, str]) -> str | None:
    """Why a specimen cannot keep these extra terms (a cap, with the row's own figure), or None."""
    if len(extra) > MAX_EXTRA_TERMS:
        return (
            f"{len(extra):,} filled in this row; rows are capped at {MAX_EXTRA_TERMS:,} extra "
            "terms (headings that are not specimen columns): map or leave out columns"
        )
    size = sum(len(term) + len(value) for term, value in extra.items())
    if size > MAX_EXTRA_CHARS:
        return (
            f"{size:,} characters in this row; rows are capped at {MAX_EXTRA_CHARS:,} "
            "characters of extra terms (names and values): shorten or leave out columns"
        )
    return None
