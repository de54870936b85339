"""What each row of an instrument export measured, and whether its standards bracket it.

A row is a bracketing standard or a reference material when its name says so, a
sample or a procedural blank when the ID on the vial's label names a column cut or
position; anything else is *unmatched*, kept and listed with the reason.
"""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

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

_CHUNK = 500  # IDs per IN (...) list: well inside every backend's limit on parameters


class Matcher:
    """Decides what each row measured, from its label ID or its name."""

    def __init__(self, session: Session, standard: str, element: str) -> None:
        self.session, self.standard, self.element = session, standard.lower(), element
        self.materials = {m.name.lower(): m for m in session.scalars(select(ReferenceMaterial))}

    def look_up(self, labels: list[str]) -> None:
        """Load the cuts and columns these labels name in a few statements, not one per row.

        ``assign`` then finds them in the session; an ID that names nothing is still
        looked for on its own (and reported unmatched).
        """
        wanted: dict[Kind, set[int]] = {Kind.CUT: set(), Kind.POSITION: set()}
        for label in labels:
            if label.strip().lower() in self.materials or not looks_like_id(label):
                continue
            try:
                public = parse_id(label)
            except BadId:
                continue
            if public.kind in wanted:
                wanted[public.kind].add(public.number)
        cuts = sorted(wanted[Kind.CUT])
        for start in range(0, len(cuts), _CHUNK):
            self.session.scalars(
                select(Cut)
                .where(Cut.id.in_(cuts[start : start + _CHUNK]))
                .options(selectinload(Cut.position).selectinload(BatchPosition.batch))
            ).all()
        positions = sorted(wanted[Kind.POSITION])
        for start in range(0, len(positions), _CHUNK):
            self.session.scalars(
                select(BatchPosition)
                .where(BatchPosition.id.in_(positions[start : start + _CHUNK]))
                .options(selectinload(BatchPosition.batch), selectinload(BatchPosition.cuts))
            ).all()

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
        return self.place(measurement, position, cut, label)

    def place(
        self, measurement: Measurement, position: BatchPosition, cut: Cut | None, label: str
    ) -> str:
        """Make the run a blank, reference or sample of this column (``cut`` if one is named,
        else the column's cut of the session's element); return why not, or ''."""
        if not position.in_batch:
            return f"{label} was removed from its batch ({position.removal_reason})"
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
    """Every sample, reference and blank needs a standard measured before AND after it.

    That is: a standard runs before it (the first standard is earlier) and one after it
    (the last standard is later) — two comparisons per row, whatever the file's length.
    """
    ordered = sorted(measurements, key=lambda m: m.run_order)
    standards = [m.run_order for m in ordered if m.role is MeasurementRole.STANDARD]
    first, last = (standards[0], standards[-1]) if standards else (None, None)
    for m in ordered:
        if m.role in (MeasurementRole.STANDARD, MeasurementRole.UNMATCHED):
            continue
        before = first is not None and first < m.run_order
        after = last is not None and last > m.run_order
        if not (before and after):
            side = "before" if not before else "after"
            raise InputError(
                f"row {rows[m.run_order]}, column {sample_column}",
                m.sample_name,
                f"has no bracketing standard measured {side} it",
            )
