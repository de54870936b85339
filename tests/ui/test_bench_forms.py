"""The bench forms a technician uses most — dissolve, record a concentration, take an
aliquot, return a specimen — each opened through its palette action, typed into as a
person types, and judged by what the database holds afterwards."""

from __future__ import annotations

from decimal import Decimal

from sqlalchemy import select

from tests.ui.conftest import Lab, events_after, head, query
from tests.ui.test_more_forms import fill_and_save
from tracker.domain.models import (
    Aliquot,
    Concentration,
    ContainerStatus,
    Powder,
    Solution,
    Specimen,
    SpecimenStatus,
)


async def test_a_powder_dissolved_whole(lab: Lab) -> None:
    powder = query(
        lab,
        select(Powder).where(Powder.status == ContainerStatus.AVAILABLE).order_by(Powder.id),
    )[0]
    before = {s.id for s in query(lab, select(Solution))}
    start = head(lab)
    said = await fill_and_save(
        lab,
        "priya",
        "dissolve",
        {
            "powder": powder.public_id,
            "acid": "2 M HNO3",
            "vial-tare": "5.1234 g",
            "vial-gross": "6.1234 g",
        },
    )
    assert "refused" not in said, said
    (solution,) = [s for s in query(lab, select(Solution)) if s.id not in before]
    assert solution.powder_id == powder.id
    assert solution.acid == "2 M HNO3"
    assert solution.solution_mass_g == Decimal("1.0000")  # the readings' difference, exactly
    assert solution.powder_mass_mg > 0  # empty "powder taken": all that was left of it
    assert [e.operator for e in events_after(lab, start)] == ["priya"]


async def test_a_concentration_recorded_for_a_solution(lab: Lab) -> None:
    solution = query(lab, select(Solution).order_by(Solution.id.desc()).limit(1))[0]
    before = {c.id for c in query(lab, select(Concentration))}
    start = head(lab)
    said = await fill_and_save(
        lab,
        "priya",
        "concentration",
        {
            "solution": solution.public_id,
            "element": "Sr",
            "value": "950 ug/g",
            "relative-uncertainty-percent": "3",
            "method": "ICP-MS",
        },
    )
    assert "refused" not in said, said
    (row,) = [c for c in query(lab, select(Concentration)) if c.id not in before]
    assert (row.solution_id, row.element) == (solution.id, "Sr")
    assert row.value_ug_per_g == Decimal("950")
    assert row.u_ug_per_g == Decimal("950") * Decimal("0.03")
    assert row.method == "ICP-MS" and row.recorded_by == "priya"
    assert len(events_after(lab, start)) == 1


async def test_an_aliquot_weighed_out_of_a_solution(lab: Lab) -> None:
    solution = query(lab, select(Solution).order_by(Solution.id.desc()).limit(1))[0]
    before = {a.id for a in query(lab, select(Aliquot))}
    said = await fill_and_save(
        lab,
        "tomas",
        "aliquot",
        {"solution": solution.public_id, "tare": "2.00000 g", "gross": "2.02500 g"},
    )
    assert "refused" not in said, said
    (new,) = [a for a in query(lab, select(Aliquot)) if a.id not in before]
    assert new.solution_id == solution.id and new.mass_g == Decimal("0.02500")
    assert new.purpose.value == "isotopes" and new.taken_by == "tomas"


async def test_a_specimen_returned_to_its_lender(lab: Lab) -> None:
    specimen = query(
        lab,
        select(Specimen)
        .where(Specimen.status == SpecimenStatus.ON_HAND)
        .order_by(Specimen.id.desc())
        .limit(1),
    )[0]
    start = head(lab)
    said = await fill_and_save(
        lab,
        "tomas",
        "return",
        {"specimen": specimen.public_id, "condition": "as received", "note": "parcel 1 of 1"},
    )
    assert "refused" not in said, said
    (after,) = query(lab, select(Specimen).where(Specimen.id == specimen.id))
    assert after.status is SpecimenStatus.RETURNED
    assert [e.operator for e in events_after(lab, start)] == ["tomas"]
