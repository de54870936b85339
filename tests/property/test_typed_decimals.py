"""A mass typed with up to the balance's digits keeps exactly those digits on every way out.

Hypothesis types tare and gross readings with as many decimals as the balance reads
(a microbalance: 0.001 mg) and drills them; the event's facts, `show --json` and the
measurement export (CSV) must hold each typed value, or the readings' difference worked by
hand with Decimal, as exactly that text: never a binary artefact (6.0200000000000005) and
never a digit lost (6.020 stays 6.020).
"""

from __future__ import annotations

import csv
import io
import json
from decimal import Decimal

from hypothesis import given
from hypothesis import strategies as st
from sqlalchemy import select

from tests import factories as make
from tests.property.test_allowance_invariants import SETTINGS, fresh_database
from tracker.domain.facts import FACTS
from tracker.domain.models import CustodyEvent
from tracker.output.tabular import csv_bytes
from tracker.services.bench import drilling
from tracker.services.read import exports, lineage

# Readings of a vial on a microbalance (mg), written with exactly three decimals (its
# readability), trailing zeros included: what a person types from the display.
readings = st.decimals(Decimal("100.000"), Decimal("1500.000"), places=3)
masses = st.decimals(Decimal("0.001"), Decimal("4.999"), places=3)


@SETTINGS
@given(tare=readings, mass=masses)
def test_typed_digits_survive_every_output(tare: Decimal, mass: Decimal) -> None:
    gross = tare + mass  # by hand: both have three decimals, so the sum has three too
    typed = {"tare_mg": f"{tare:.3f}", "gross_mg": f"{gross:.3f}", "mass_mg": f"{mass:.3f}"}
    with fresh_database() as db:
        loan = make.loan(db)
        specimen = make.specimen(db, loan)
        powder = drilling.drill(
            db,
            "tech",
            {
                "specimen": specimen,
                "tissue": "enamel",
                "tare": f"{typed['tare_mg']} mg",
                "gross": f"{typed['gross_mg']} mg",
                "readability": "0.001 mg",
            },
        ).item.id
        with db.read_session() as session:
            payload = session.scalars(
                select(CustodyEvent.payload).where(CustodyEvent.action == "powder.drilled")
            ).one()
        stated = json.loads(payload)[FACTS]["created"]["powder"][powder]
        for column, text in typed.items():
            assert stated[column] == text  # the ledger's facts
        shown = lineage.show_item(db, powder).model_dump(mode="json")
        assert shown["item"]["facts"]["mass_mg"] == typed["mass_mg"]  # show --json
        columns, rows = exports.measurement_rows(db, loan)
        table = list(csv.DictReader(io.StringIO(csv_bytes(columns, rows).decode("utf-8-sig"))))
        (row,) = [r for r in table if r["measurementID"] == powder]
        assert row["measurementValue"] == typed["mass_mg"]  # the export's CSV
