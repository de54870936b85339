"""Darwin Core term names (TDWG standard): which headings are terms, and how they are spelt.

The list is the TDWG's own, not one from memory: every currently recommended term of the
Darwin Core Quick Reference Guide, as the TDWG publishes the names in the file
``dist/all_dwc_vertical.csv`` of the repository ``tdwg/dwc`` (commit 867006d3, the list
"as of 2023-06-28" in that commit's ``docs/terms/index.md``). A copy of that file is kept
in ``tests/data`` and the tests compare this list with it.

Collections write a term's name several ways: ``catalogNumber``, ``CatalogNumber``,
``dwc:catalogNumber`` or the term's IRI ``http://rs.tdwg.org/dwc/terms/catalogNumber`` (the
Dublin Core terms Darwin Core uses under ``dcterms:``/``http://purl.org/dc/terms/``).
:func:`term_name` turns each into the one spelling; every reader of a lender's list uses it.
A heading that is not a term never becomes an export column; its value travels inside
`dynamicProperties` instead.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

# What one specimen keeps of a lender's other terms (headings that are no specimen column).
# The Darwin Core list holds about two hundred terms (206 in the list below),
# so a row filling more than that is not a lender's record of one specimen; and the
# filled terms of one specimen, names and values together, stay within 64 Ki characters
# (a few pages of remarks). Every specimen loaded later carries them.
MAX_EXTRA_TERMS = 200
MAX_EXTRA_CHARS = 64 * 1024

# TDWG, tdwg/dwc dist/all_dwc_vertical.csv at commit 867006d3 (recommended terms as of
# 2023-06-28), in the file's order. type and language are Dublin Core (dc: in that list).
TERMS: frozenset[str] = frozenset(
    """
    type modified language license rightsHolder accessRights bibliographicCitation
    references institutionID collectionID datasetID institutionCode collectionCode
    datasetName ownerInstitutionCode basisOfRecord informationWithheld dataGeneralizations
    dynamicProperties occurrenceID catalogNumber recordNumber recordedBy recordedByID
    individualCount organismQuantity organismQuantityType sex lifeStage
    reproductiveCondition caste behavior vitality establishmentMeans degreeOfEstablishment
    pathway georeferenceVerificationStatus occurrenceStatus associatedMedia
    associatedOccurrences associatedReferences associatedTaxa otherCatalogNumbers
    occurrenceRemarks organismID organismName organismScope associatedOrganisms
    previousIdentifications organismRemarks materialEntityID preparations disposition
    verbatimLabel associatedSequences materialEntityRemarks materialSampleID eventID
    parentEventID eventType fieldNumber eventDate eventTime startDayOfYear endDayOfYear year
    month day verbatimEventDate habitat samplingProtocol sampleSizeValue sampleSizeUnit
    samplingEffort fieldNotes eventRemarks locationID higherGeographyID higherGeography
    continent waterBody islandGroup island country countryCode stateProvince county
    municipality locality verbatimLocality minimumElevationInMeters maximumElevationInMeters
    verbatimElevation verticalDatum minimumDepthInMeters maximumDepthInMeters verbatimDepth
    minimumDistanceAboveSurfaceInMeters maximumDistanceAboveSurfaceInMeters
    locationAccordingTo locationRemarks decimalLatitude decimalLongitude geodeticDatum
    coordinateUncertaintyInMeters coordinatePrecision pointRadiusSpatialFit
    verbatimCoordinates verbatimLatitude verbatimLongitude verbatimCoordinateSystem
    verbatimSRS footprintWKT footprintSRS footprintSpatialFit georeferencedBy
    georeferencedDate georeferenceProtocol georeferenceSources georeferenceRemarks
    geologicalContextID earliestEonOrLowestEonothem latestEonOrHighestEonothem
    earliestEraOrLowestErathem latestEraOrHighestErathem earliestPeriodOrLowestSystem
    latestPeriodOrHighestSystem earliestEpochOrLowestSeries latestEpochOrHighestSeries
    earliestAgeOrLowestStage latestAgeOrHighestStage lowestBiostratigraphicZone
    highestBiostratigraphicZone lithostratigraphicTerms group formation member bed
    identificationID verbatimIdentification identificationQualifier typeStatus identifiedBy
    identifiedByID dateIdentified identificationReferences identificationVerificationStatus
    identificationRemarks taxonID scientificNameID acceptedNameUsageID parentNameUsageID
    originalNameUsageID nameAccordingToID namePublishedInID taxonConceptID scientificName
    acceptedNameUsage parentNameUsage originalNameUsage nameAccordingTo namePublishedIn
    namePublishedInYear higherClassification kingdom phylum class order superfamily family
    subfamily tribe subtribe genus genericName subgenus infragenericEpithet specificEpithet
    infraspecificEpithet cultivarEpithet taxonRank verbatimTaxonRank
    scientificNameAuthorship vernacularName nomenclaturalCode taxonomicStatus
    nomenclaturalStatus taxonRemarks measurementID parentMeasurementID measurementType
    measurementValue measurementAccuracy measurementUnit measurementDeterminedBy
    measurementDeterminedDate measurementMethod measurementRemarks resourceRelationshipID
    resourceID relationshipOfResourceID relatedResourceID relationshipOfResource
    relationshipAccordingTo relationshipEstablishedDate relationshipRemarks
    """.split()  # noqa: SIM905 - the TDWG file's names, in its order
)
# tracker's own headings for what Darwin Core does not define (numeric ages in Ma).
OWN_HEADINGS = ("ageMinMa", "ageMaxMa")
# Namespaces whose terms a heading may name by IRI or prefix (TDWG Darwin Core Text Guide,
# and the namespace table of the Darwin Core List of Terms).
_NAMESPACES = (
    "http://rs.tdwg.org/dwc/terms/",
    "https://rs.tdwg.org/dwc/terms/",
    "http://purl.org/dc/terms/",
    "https://purl.org/dc/terms/",
    "http://purl.org/dc/elements/1.1/",
    "https://purl.org/dc/elements/1.1/",
    "dwc:",
    "dcterms:",
    "dc:",
)
_SPELLING = {name.lower(): name for name in (*TERMS, *OWN_HEADINGS)}


def term_name(heading: str) -> str:
    """The heading as tracker spells it: a term's own name, whatever the case or prefix.

    ``dwc:CatalogNumber`` and ``http://rs.tdwg.org/dwc/terms/catalogNumber`` both read as
    ``catalogNumber``. A heading that names no term is kept as it is written (an IRI of
    another vocabulary stays a whole IRI, so two vocabularies' names never merge).
    """
    text = heading.strip()
    lowered = text.lower()
    for namespace in _NAMESPACES:
        if lowered.startswith(namespace):
            local = text[len(namespace) :]
            return _SPELLING.get(local.lower(), text if "/" in namespace else local)
    return _SPELLING.get(lowered, text)


def term_headings(header: list[str]) -> list[str]:
    """Every heading through :func:`term_name`; two headings that name one term are refused.

    Raises ValueError naming both headings as written.
    """
    named = [term_name(h) for h in header]
    first: dict[str, str] = {}
    for written, name in zip(header, named, strict=True):
        if name in first:
            raise ValueError(
                f"headings {first[name]!r} and {written!r} both name the term {name!r}; "
                "keep one of the two columns"
            )
        first[name] = written
    return named


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


def dynamic_properties(
    lender: str | None, others: Mapping[str, str], added: Mapping[str, Any]
) -> str:
    """One `dynamicProperties` JSON object: the lender's own, their other headings, ours.

    The lender's `dynamicProperties` is the base and is never overwritten: a JSON object
    keeps every key and value; any other text is kept whole under ``lenderText``. Their
    headings that are no Darwin Core term (``others``) and what tracker adds (``added``)
    fill the keys the object does not have yet; a key already taken by a different value
    is written beside it as ``"<key> (column)"`` or ``"<key> (tracker)"``, so nothing that
    came in is lost on the way out.
    """
    merged: dict[str, Any] = {}
    if lender:
        try:
            parsed = json.loads(lender)
        except ValueError:
            parsed = None
        merged = dict(parsed) if isinstance(parsed, dict) else {"lenderText": lender}
    for source, mark in ((others, "column"), (added, "tracker")):
        for key, value in source.items():
            if key not in merged:
                merged[key] = value
            elif merged[key] != value:
                merged[f"{key} ({mark})"] = value
    return json.dumps(merged, sort_keys=True, ensure_ascii=False)
