"""What events recorded before the facts say of the rows they made, as far as they say it.

An event recorded before events stated their rows' facts (``domain.facts``; an upgraded
database) carries only its action's own payload. Many of those payloads name the values
of the row the action made — a drill's weighings, a specimen's catalogue number — and
those the audit can still hold the stored row to. This module reads them, and only them:

- :data:`MADE`: for each action that makes its object's row, the columns its payload states
  (and the columns that hold the event's own time and operator). Only columns no later
  action changes are read — except through a correction, whose event names the row and
  states the values in force (:data:`CORRECTED`); every other column stays unknown.
- Nothing else in an old event is read: rows it made without naming them, and columns it
  changed, are left to the audit's statement of what it could not check.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date, datetime
from typing import Any

from tracker.domain.facts import Column, layout
from tracker.domain.ledger import ledger_stamp
from tracker.domain.timeutil import iso_utc


@dataclass(frozen=True)
class Made:
    """An action that makes its object's row, and what its payload says of it."""

    table: str
    stated: Mapping[str, str]  # column -> the payload's key for it
    by: tuple[str, ...] = ()  # columns holding the event's operator
    at: tuple[str, ...] = ("created_at",)  # columns holding the event's (recording) time
    fixed: Mapping[str, Any] = field(default_factory=dict)  # columns every such row starts with


_OPERATOR = {"code": "code", "name": "name"}
_LENDER = {
    name: name for name in ("name", "institution_code", "contact_name", "contact_email", "address")
}
_MATERIAL = {name: name for name in ("name", "element", "matrix", "notes")}
_BATCH = {
    name: name
    for name in (
        "name",
        "performed_on",
        "element",
        "resin",
        "elution_scheme",
        "cut_names",
        "yield_threshold",
        "blank_limit",
    )
}
_WEIGHING = ("tare_mg", "gross_mg", "readability_mg", "mass_mg", "mass_u_mg")

MADE: dict[str, Made] = {
    "ledger.opened": Made("operator", {"code": "operator", "name": "name"}),
    "operator.added": Made("operator", _OPERATOR),
    "location.added": Made("location", {"kind": "kind", "name": "name", "parent_id": "parent"}),
    "reference_material.added": Made("reference_material", _MATERIAL),
    "lender.added": Made("lender", _LENDER),
    "loan.added": Made(
        "loan",
        {"lender_id": "lender", "reference": "reference", "title": "title", "borrower": "borrower"},
    ),
    "specimen.added": Made("specimen", {"loan_id": "loan", "catalog_number": "catalog_number"}),
    "powder.drilled": Made(
        "powder",
        {
            "specimen_id": "specimen",
            "tissue": "tissue",
            "site": "site",
            "drilled_at": "drilled_at",
            **{name: name for name in _WEIGHING},
        },
        by=("drilled_by",),
    ),
    "solution.dissolved": Made(
        "solution",
        {
            "powder_id": "powder",
            "acid": "acid",
            **{name: name for name in ("powder_mass_mg", "powder_mass_u_mg")},
            **{name: name for name in ("solution_mass_g", "solution_mass_u_g")},
        },
        by=("dissolved_by",),
    ),
    "aliquot.taken": Made(
        "aliquot",
        {"solution_id": "solution", "purpose": "purpose", **{n: n for n in ("mass_g", "mass_u_g")}},
        by=("taken_by",),
    ),
    "batch.created": Made("column_batch", _BATCH, by=("operator",)),
    "batch.position_added": Made(
        "batch_position", {"batch_id": "batch", "slot": "slot", "kind": "kind"}
    ),
    "cut.recorded": Made("cut", {"position_id": "position", "name": "cut"}),
}

# A correction's payload: what was corrected ("quantity") and the values now in force
# ("value"), under its own names -> the object row's columns.
CORRECTED: dict[str, dict[str, str]] = {
    "powder mass": {name: name for name in _WEIGHING},
    "solution mass": {"mass_g": "solution_mass_g", "mass_u_g": "solution_mass_u_g"},
    "aliquot mass": {"mass_g": "mass_g", "mass_u_g": "mass_u_g"},
    "powder taken": {name: name for name in ("powder_mass_mg", "powder_mass_u_mg")},
}


def made(
    action: str, at: datetime | str, operator: str, payload: Mapping[str, Any]
) -> tuple[str, dict[str, Any]] | None:
    """The table and the facts an old event states of the row it made (None: it made none
    this module can read)."""
    rule = MADE.get(action)
    if rule is None:
        return None
    columns = {column.name: column for column in layout(rule.table).columns}
    facts: dict[str, Any] = {}
    for name, key in rule.stated.items():
        if key in payload:
            facts[name] = _as_fact(columns[name], payload[key])
    stamp = ledger_stamp(at)
    facts.update(dict.fromkeys(rule.at, stamp))
    facts.update(dict.fromkeys(rule.by, operator))
    facts.update(rule.fixed)
    return rule.table, facts


def corrected(action: str, payload: Mapping[str, Any]) -> dict[str, Any] | None:
    """The columns an old correction event states of its object row (None: not one)."""
    if not action.endswith(".corrected"):
        return None
    names = CORRECTED.get(str(payload.get("quantity")))
    value = payload.get("value")
    if names is None or not isinstance(value, Mapping):
        return None
    return {column: value[key] for key, column in names.items() if key in value}


def _as_fact(column: Column, value: Any) -> Any:
    """A payload's value in the facts' form (its times were written in ISO 8601 with an
    offset; its references as public IDs already)."""
    if value is None or column.shape in ("public", "json"):
        return value
    if column.shape == "time":
        return iso_utc(datetime.fromisoformat(value))
    if column.shape == "day":
        return date.fromisoformat(value).isoformat()
    return column.convert(value)
