"""What each row of an instrument export measured, and whether its standards bracket it.

A row is a bracketing standard or a reference material when its name says so, a
sample or a procedural blank when the ID on the vial's label names a column cut or
position; anything else is *unmatched*, kept and listed with the reason.
"""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.domain.errors import InputError
from tracker.domain.ids import BadId, Kind, looks_like_id, parse_id
from tracker.domain.models import (
    BatchPosition,
    Cut,
    Measurement,
    MeasurementRole,
    PositionKind,
    ReferenceMaterial,
)


class Matcher:
    """Decides what each row measured, from its label ID or its name."""

    def __init__(self, session: Session, standard: str, element: str) -> None:
        self.session, self.standard, self.element = session, standard.lower(), element
        self.materials = {m.name.lower(): m for m in session.scalars(select(ReferenceMaterial))}

    def assign(self, measurement: Measurement, label: str) -> str:
        """Set the measurement's role and target; return why it is unmatched, or ''."""
        key = label.strip().lower()
        if key == self.standard:
            measurement.role = MeasurementRole.STANDARD
            return ""
        if key in self.materials:
            measurement.role = MeasurementRole.REFERENCE
            measurement.reference_material_id = self.materials[key].id
            return ""
        measurement.role = MeasurementRole.UNMATCHED
        if not looks_like_id(label):
            return "names no standard, reference material or labelled vial"
        try:
            public = parse_id(label)
        except BadId as exc:
            return f"label {label!r}: {exc}"
        return self._by_id(measurement, public.kind, public.number, label)

    def _by_id(self, measurement: Measurement, kind: Kind, number: int, label: str) -> str:
        if kind is Kind.CUT:
            cut = self.session.get(Cut, number)
            position = cut.position if cut else None
        elif kind is Kind.POSITION:
            position = self.session.get(BatchPosition, number)
            cut = None
        else:
            return f"{label} is not a cut or a column position"
        if position is None:
            return f"{label} names nothing in this database"
        if position.batch.element != self.element:
            return f"{label} is from a {position.batch.element} batch"
        if position.kind is PositionKind.BLANK:
            measurement.role, measurement.position_id = MeasurementRole.BLANK, position.id
            return ""
        if position.kind is PositionKind.REFERENCE:
            measurement.role = MeasurementRole.REFERENCE
            measurement.reference_material_id = position.reference_material_id
            return ""
        chosen = cut or next((c for c in position.cuts if c.name == self.element), None)
        if chosen is None:
            return f"{label}: no {self.element} cut recorded for this column yet"
        measurement.role, measurement.cut_id = MeasurementRole.SAMPLE, chosen.id
        return ""


def require_brackets(
    measurements: list[Measurement], rows: dict[int, int], sample_column: str
) -> None:
    """Every sample, reference and blank needs a standard measured before AND after it."""
    ordered = sorted(measurements, key=lambda m: m.run_order)
    standards = [m.run_order for m in ordered if m.role is MeasurementRole.STANDARD]
    for m in ordered:
        if m.role in (MeasurementRole.STANDARD, MeasurementRole.UNMATCHED):
            continue
        before = any(s < m.run_order for s in standards)
        after = any(s > m.run_order for s in standards)
        if not (before and after):
            side = "before" if not before else "after"
            raise InputError(
                f"row {rows[m.run_order]}, column {sample_column}",
                m.sample_name,
                f"has no bracketing standard measured {side} it",
            )
