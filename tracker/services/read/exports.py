"""What goes back into the lender's database: specimens and measurements as Darwin Core rows.

Column names are Darwin Core terms (TDWG): the specimen rows carry the occurrence terms
the lender sent plus `disposition`; every drilled mass and every isotope result becomes a
MeasurementOrFact-style row keyed by the lender's catalogue number, so it can be
attached to their record without knowing anything about tracker.
"""

from __future__ import annotations

from decimal import Decimal
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import selectinload, undefer

from tracker.db.database import Database
from tracker.domain.darwincore import dynamic_properties, is_term
from tracker.domain.models import Loan, Powder, Specimen, SpecimenStatus
from tracker.services.core.lookup import get_loan
from tracker.services.instrument.results import SpecimenResult, results
from tracker.services.ledger.loan_audit import audit_loan

SPECIMEN_TERMS = [
    "institutionCode",
    "collectionCode",
    "catalogNumber",
    "scientificName",
    "preparations",
    "locality",
    "formation",
    "earliestEpochOrLowestSeries",
    "latestEpochOrHighestSeries",
    "disposition",
    "dynamicProperties",
]
MEASUREMENT_TERMS = [
    "institutionCode",
    "catalogNumber",
    "measurementID",
    "measurementType",
    "measurementValue",
    "measurementAccuracy",
    "measurementUnit",
    "measurementDeterminedDate",
    "measurementDeterminedBy",
    "measurementMethod",
    "measurementRemarks",
]
_DISPOSITION = {
    SpecimenStatus.EXPECTED: "on loan, not yet received",
    SpecimenStatus.ON_HAND: "on loan",
    SpecimenStatus.RETURNED: "returned to lender",
}


def _specimens(db: Database, loan: str) -> list[Specimen]:
    with db.read_session() as session:
        row = get_loan(session, "loan", loan)
        query = (
            select(Specimen)
            .where(Specimen.loan_id == row.id)
            .order_by(Specimen.id)
            .options(
                undefer(Specimen.extra),  # the lender's other terms travel in the export
                selectinload(Specimen.powders).selectinload(Powder.solutions),
            )
        )
        found = list(session.scalars(query))
        session.expunge_all()
        return found


# An export written despite the loan's books differing from the ledger: this column comes
# first, and its first rows say every discrepancy (``audit_loan``), before any data row.
DISCREPANCY = "booksDifferFromLedger"


def _vouched(
    db: Database, loan: str, despite: bool, table: tuple[list[str], list[dict[str, Any]]]
) -> tuple[list[str], list[dict[str, Any]]]:
    """The table, refused when the loan's books differ from the ledger, unless ``despite``
    them: then with every discrepancy first."""
    columns, rows = table
    found = audit_loan(db, loan).vouch("loan", loan, despite=despite)
    if not found:
        return columns, rows
    return [DISCREPANCY, *columns], [{DISCREPANCY: d.said} for d in found] + rows


def specimen_rows(
    db: Database, loan: str, despite_discrepancies: bool = False
) -> tuple[list[str], list[dict[str, Any]]]:
    """(columns, rows): the lender's terms for each specimen, plus what tracker adds."""
    return _vouched(db, loan, despite_discrepancies, _specimen_rows(db, loan))


def _specimen_rows(db: Database, loan: str) -> tuple[list[str], list[dict[str, Any]]]:
    specimens = _specimens(db, loan)
    extra_terms = sorted(
        {k for s in specimens for k in s.extra if is_term(k)} - set(SPECIMEN_TERMS)
    )
    rows = []
    for s in specimens:
        row: dict[str, Any] = {
            "institutionCode": s.institution_code,
            "collectionCode": s.collection_code,
            "catalogNumber": s.catalog_number,
            "scientificName": s.scientific_name,
            "preparations": s.skeletal_element,
            "locality": s.locality,
            "formation": s.formation,
            "earliestEpochOrLowestSeries": s.earliest_epoch,
            "latestEpochOrHighestSeries": s.latest_epoch,
            "disposition": _DISPOSITION[s.status],
            "dynamicProperties": dynamic_properties(
                s.extra.get("dynamicProperties"),
                {k: v for k, v in s.extra.items() if not is_term(k)},
                {
                    "trackerId": s.public_id,
                    "sampled": bool(s.powders),
                    "drilledMg": float(sum((p.mass_mg for p in s.powders), Decimal(0))),
                    "ageMinMa": s.age_min_ma,
                    "ageMaxMa": s.age_max_ma,
                },
            ),
        }
        row.update({term: s.extra.get(term) for term in extra_terms})
        rows.append(row)
    return SPECIMEN_TERMS + extra_terms, rows


def measurement_rows(
    db: Database, loan: str, despite_discrepancies: bool = False
) -> tuple[list[str], list[dict[str, Any]]]:
    """Drilled masses and isotope results, one Darwin Core measurement row each."""
    return _vouched(db, loan, despite_discrepancies, _measurement_rows(db, loan))


def _measurement_rows(db: Database, loan: str) -> tuple[list[str], list[dict[str, Any]]]:
    specimens = _specimens(db, loan)
    codes = {s.public_id: (s.institution_code, s.catalog_number) for s in specimens}
    rows: list[dict[str, Any]] = []
    for s in specimens:
        for p in s.powders:
            rows.append(
                {
                    "institutionCode": s.institution_code,
                    "catalogNumber": s.catalog_number,
                    "measurementID": p.public_id,
                    "measurementType": f"mass of {p.tissue} removed by drilling",
                    "measurementValue": p.mass_mg,  # as weighed: exact
                    "measurementAccuracy": f"{p.mass_u_mg:.2g} (standard uncertainty)",
                    "measurementUnit": "mg",
                    "measurementDeterminedDate": p.drilled_at.date().isoformat(),
                    "measurementDeterminedBy": p.drilled_by,
                    "measurementMethod": "mass by difference of two weighings",
                    "measurementRemarks": f"site: {p.site}" if p.site else None,
                }
            )
    for r in results(db, loan):
        institution, catalog = codes[r.specimen]
        delta = r.kind == "delta"
        rows.append(
            {
                "institutionCode": institution,
                "catalogNumber": catalog,
                "measurementID": f"{r.cut}/{r.session}/{r.ratio}",
                "measurementType": (
                    f"delta {r.ratio} ({r.scale} scale)"
                    if delta
                    else f"isotope ratio {r.ratio} (normalised to {r.scale})"
                ),
                "measurementValue": round(r.value, 6 if delta else 8),
                "measurementAccuracy": None if r.two_sd is None else _accuracy(r),
                "measurementUnit": "permil" if delta else "ratio",
                "measurementDeterminedDate": r.determined_on.isoformat(),
                "measurementDeterminedBy": r.determined_by,
                "measurementMethod": f"MC-ICP-MS session {r.session}, standard-sample bracketing",
                "measurementRemarks": "; ".join(r.flags) or None,
            }
        )
    return MEASUREMENT_TERMS, rows


def loan_document(db: Database, loan: str, despite_discrepancies: bool = False) -> dict[str, Any]:
    """The whole loan as one JSON document: the return report's content plus every lineage
    (refused like the report when the books differ from the ledger; written despite them,
    the report's ``discrepancies`` list every one)."""
    from tracker.services.read.lineage import show_item
    from tracker.services.read.reports import build_return_report

    report = build_return_report(db, loan, despite_discrepancies=despite_discrepancies)
    with db.read_session() as session:
        ids = [
            s.public_id
            for s in session.scalars(
                select(Specimen).join(Loan).where(Loan.id == get_loan(session, "loan", loan).id)
            )
        ]
    lineage = [show_item(db, i).item.model_dump(mode="json") for i in ids]
    return {"report": report.model_dump(mode="json"), "lineage": lineage}


def _accuracy(result: SpecimenResult) -> str:
    """The 2SD as a lender's record states it: the result's own (with its n), or the lab's
    long-term one where that is larger and so was reported."""
    if result.uncertainty == "long-term":
        return f"{result.two_sd:.3g} (2SD, lab's long-term reproducibility)"
    return f"{result.two_sd:.3g} (2SD, n={result.n})"
