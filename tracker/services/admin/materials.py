"""Materials: the built-in presets plus the ones a lab defines (formula or measured range)."""

from __future__ import annotations

from typing import Annotated

from pydantic import Field, field_validator, model_validator
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import NotFound, RuleViolation
from tracker.domain.formula import FormulaError, parse_formula
from tracker.domain.materials import PRESETS, Material
from tracker.domain.models import UserMaterial
from tracker.services.core.common import finish
from tracker.services.core.inputs import Element, FieldProblem, Name, Raw, Request, Text, parse
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View


class MaterialView(View):
    name: str
    formula: str | None
    element: str | None
    fraction_low: float | None
    fraction_high: float | None
    preset: bool
    note: str

    @classmethod
    def of(cls, material: Material, *, preset: bool, element: str = "Ca") -> MaterialView:
        span = material.fraction_range(element)
        low, high = span if span else (None, None)
        return cls(
            name=material.name,
            formula=material.formula,
            element=element if span else material.element,
            fraction_low=low,
            fraction_high=high,
            preset=preset,
            note=material.note,
        )


def _material(row: UserMaterial) -> Material:
    return Material(
        row.name, row.formula, row.element, row.fraction_low, row.fraction_high, row.notes or ""
    )


def find_material(session: Session, field: str, name: str) -> Material:
    """A preset or user material by name, case-insensitive."""
    for preset in PRESETS.values():
        if preset.name.lower() == name.lower():
            return preset
    row = session.scalars(
        select(UserMaterial).where(func.lower(UserMaterial.name) == name.lower())
    ).one_or_none()
    if row is None:
        known = ", ".join(PRESETS)
        raise NotFound(field, name, f"no such material (presets: {known}; or add one)")
    return _material(row)


def list_materials(db: Database, element: str = "Ca") -> list[MaterialView]:
    with db.read_session() as session:
        users = session.scalars(select(UserMaterial).order_by(UserMaterial.name)).all()
        return [MaterialView.of(m, preset=True, element=element) for m in PRESETS.values()] + [
            MaterialView.of(_material(r), preset=False, element=element) for r in users
        ]


class NewMaterial(Request):
    name: Name
    formula: Annotated[str, Field(max_length=200)] | None = None
    element: Element | None = None
    fraction_low: Annotated[float, Field(gt=0, le=1)] | None = None
    fraction_high: Annotated[float, Field(gt=0, le=1)] | None = None
    notes: Text | None = None

    @field_validator("formula")
    @classmethod
    def _readable(cls, formula: str | None) -> str | None:
        if formula is not None:
            try:
                parse_formula(formula)
            except FormulaError as exc:
                raise ValueError(str(exc)) from None
        return formula

    @model_validator(mode="after")
    def _formula_or_range(self) -> NewMaterial:
        ranged = (self.element, self.fraction_low, self.fraction_high)
        if self.formula is not None:
            if any(v is not None for v in ranged):
                raise FieldProblem("formula", self.formula, "give a formula or a range, not both")
            return self
        if any(v is None for v in ranged):
            raise FieldProblem(
                "formula", None, "give a formula, or an element with its low and high mass fraction"
            )
        assert self.fraction_low is not None and self.fraction_high is not None
        if self.fraction_low > self.fraction_high:
            raise FieldProblem(
                "fraction-low", self.fraction_low, f"is above the high end {self.fraction_high}"
            )
        return self


def add_material(db: Database, actor: str | None, data: NewMaterial | Raw) -> Done[MaterialView]:
    """Define a material by its formula or by a measured range of one element's mass fraction."""
    request = parse(NewMaterial, data)
    with unit_of_work(db, actor) as uow:
        try:
            find_material(uow.session, "name", request.name)
        except NotFound:
            pass
        else:
            raise RuleViolation("name", request.name, "a material with this name already exists")
        row = UserMaterial(**request.model_dump(), created_at=uow.now)
        uow.session.add(row)
        element = request.element or "Ca"
        return finish(
            uow,
            "material.added",
            row,
            request.model_dump(),
            lambda: MaterialView.of(_material(row), preset=False, element=element),
        )
