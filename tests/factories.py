"""Small builders for test scenarios; every one goes through the real services."""

from __future__ import annotations

import itertools
from typing import Any

from tracker.db.database import Database
from tracker.services.admin import setup
from tracker.services.bench import chemistry, drilling, solutions
from tracker.services.loans import lending, specimens

_n = itertools.count(1)


def location(db: Database) -> str:
    building = setup.add_location(db, "boss", {"kind": "building", "name": f"Hall {next(_n)}"})
    room = setup.add_location(
        db, "boss", {"kind": "room", "name": "1.01", "parent": building.item.id}
    )
    return setup.add_location(
        db, "boss", {"kind": "box", "name": "Box 1", "parent": room.item.id}
    ).item.id


def loan(db: Database, received_on: str = "2026-01-02", **terms: Any) -> str:
    """A lender and a loan; ``terms`` override the defaults. Returns the loan reference."""
    n = next(_n)
    lender = lending.add_lender(
        db, "boss", {"name": f"Fictional Museum {n}", "institution_code": f"FM{n}"}
    )
    defaults: dict[str, Any] = {
        "permitted_tissues": ["enamel", "enameloid"],
        "max_mass_per_specimen": "5 mg",
        "max_total_mass": "40 mg",
        "max_specimens_sampled": 10,
        "due_on": "2027-12-31",
    }
    request = {
        "lender": lender.item.id,
        "reference": f"FM-{n}",
        "title": "Test loan",
        "borrower": "Dr. Imaginary",
        "received_on": received_on,
        "terms": defaults | terms,
    }
    return lending.add_loan(db, "boss", request).item.reference


def specimen(
    db: Database, loan_ref: str, *, checked_in: bool = True, received_at: str | None = None
) -> str:
    answer = specimens.add_specimen(
        db,
        "boss",
        {
            "loan": loan_ref,
            "catalog_number": f"CAT {next(_n)}",
            "scientific_name": "Lamniformes indet.",
            "skeletal_element": "tooth",
        },
    )
    if checked_in:
        request = {"specimen": answer.item.id, "condition": "complete"}
        if received_at is not None:
            request["received_at"] = received_at
        specimens.check_in(db, "tech", request)
    return answer.item.id


def powder(db: Database, specimen_id: str, mg: str = "2.000") -> str:
    tare = 1000.000
    gross = tare + float(mg)
    return drilling.drill(
        db,
        "tech",
        {
            "specimen": specimen_id,
            "tissue": "enamel",
            "tare": f"{tare:.3f} mg",
            "gross": f"{gross:.3f} mg",
        },
    ).item.id


def solution(db: Database, powder_id: str, grams: str = "1.0000", taken: str | None = None) -> str:
    request: dict[str, Any] = {
        "powder": powder_id,
        "acid": "2 M HNO3",
        "vial_tare": "5.0000 g",
        "vial_gross": f"{5 + float(grams):.4f} g",
    }
    if taken is not None:
        request["powder_taken"] = taken
    return solutions.dissolve(db, "tech", request).item.id


def concentration(db: Database, solution_id: str, value: str = "800 ug/g") -> None:
    solutions.record_concentration(
        db,
        "tech",
        {
            "solution": solution_id,
            "element": "Ca",
            "value": value,
            "relative_uncertainty_percent": 2,
        },
    )


def aliquot(db: Database, solution_id: str, grams: str = "0.1000") -> str:
    return solutions.take_aliquot(
        db,
        "tech",
        {"solution": solution_id, "tare": "2.0000 g", "gross": f"{2 + float(grams):.4f} g"},
    ).item.id


def batch(db: Database) -> str:
    return chemistry.create_batch(
        db,
        "tech",
        {
            "name": f"Batch {next(_n)}",
            "performed_on": "2026-01-05",
            "element": "Ca",
            "resin": "DGA",
            "elution_scheme": "load, rinse, elute",
            "cut_names": "matrix,Ca",
        },
    ).item.id
