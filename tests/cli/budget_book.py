"""Shared helpers for the budget CLI tests: the demo scenario's books kept by hand."""

from __future__ import annotations

import json
import re
import tomllib
from dataclasses import dataclass, field
from datetime import UTC, date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

from jsonschema import Draft202012Validator
from typer.testing import Result

from tests.cli.conftest import invoke, ok_json

ROOT = Path(__file__).resolve().parents[2]
SCENARIO = ROOT / "demo_db" / "scenario.toml"
SCHEMAS = ROOT / "schemas"
KF, MDGC, NMFI = "KF-2026-014", "MDGC/LN/0457", "NMFI-25-033"
TOLERANCE = Decimal("1e-9")  # mg
REASON = "repeat drill agreed by the lender in writing (invented letter, test only)"


# ---------------------------------------------------------------- helpers


def today() -> date:
    return datetime.now(UTC).date()  # tracker's clock is UTC


def mg(text: str) -> Decimal:
    number, unit = text.split()
    assert unit == "mg", text
    return Decimal(number)


def close(actual: float, expected: Decimal) -> bool:
    return abs(Decimal(repr(actual)) - expected) <= TOLERANCE


def refused(result: Result, exit_code: int, field_name: str | None) -> str:
    """Exit code and exactly one "error: <field>: <value>: <reason>" line; return it."""
    assert result.exit_code == exit_code, (result.exit_code, result.stdout, result.stderr)
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert re.fullmatch(r"error: [^:]+: [^:]+: .+", lines[0]), lines[0]
    if field_name is not None:
        assert lines[0].startswith(f"error: {field_name}: "), lines[0]
    return lines[0]


def validate(document: Any, schema_name: str) -> None:
    schema = json.loads((SCHEMAS / schema_name).read_text(encoding="utf-8"))
    validator = Draft202012Validator(schema, format_checker=Draft202012Validator.FORMAT_CHECKER)
    validator.validate(document)


def reconcile(db: Path, loan: str) -> dict[str, Any]:
    lines = ok_json(invoke("reconcile", "--loan", loan, db=db, as_json=True))
    assert [line["reference"] for line in lines] == [loan]
    return dict(lines[0])


def specimen_line(loan_line: dict[str, Any], catalog: str) -> dict[str, Any]:
    (line,) = [s for s in loan_line["specimen_lines"] if s["catalog_number"] == catalog]
    return dict(line)


def specimen_id(db: Path, loan: str, catalog: str) -> str:
    rows = ok_json(invoke("specimen", "list", "--loan", loan, db=db, as_json=True))
    (row,) = [r for r in rows if r["catalog_number"] == catalog]
    return str(row["id"])


def open_powder(db: Path, specimen: str) -> str:
    """The specimen's one powder vial still in the lab."""
    tree = ok_json(invoke("show", specimen, db=db, as_json=True))["item"]
    (found,) = [
        c["id"] for c in tree["children"] if c["kind"] == "powder" and c["status"] == "available"
    ]
    return str(found)


# ---------------------------------------------------------------- the scenario, by hand


@dataclass
class PowderBook:
    specimen: str  # alias
    drilled: Decimal
    dissolved: Decimal = Decimal(0)
    residual: Decimal | None = None
    disposed: bool = False
    override: bool = False


@dataclass
class LoanBook:
    """What the scenario says one loan should show today."""

    catalog: dict[str, str]  # specimen alias -> catalogue number
    terms: dict[str, Any]
    version: int
    powders: list[PowderBook] = field(default_factory=list)

    def of(self, alias: str) -> list[PowderBook]:
        return [p for p in self.powders if p.specimen == alias]

    @staticmethod
    def drilled(powders: list[PowderBook]) -> Decimal:
        return sum((p.drilled for p in powders), Decimal(0))

    @staticmethod
    def dissolved(powders: list[PowderBook]) -> Decimal:
        return sum((p.dissolved for p in powders), Decimal(0))

    @staticmethod
    def on_hand(powders: list[PowderBook]) -> Decimal:
        return sum((p.drilled - p.dissolved for p in powders if not p.disposed), Decimal(0))


def _at(step: dict[str, Any]) -> datetime:
    return datetime.fromisoformat(step["at"])


def book(reference: str) -> LoanBook:
    """Replay the scenario TOML by hand (Decimal mg) for one loan, with the terms in force today."""
    with SCENARIO.open("rb") as handle:
        steps = sorted(tomllib.load(handle)["steps"], key=_at)  # stable, like the builder
    (loan_step,) = [s for s in steps if s["do"] == "loan" and s["args"]["reference"] == reference]
    loan = "@" + loan_step["as"]
    original = loan_step["args"]["terms"]
    keys = (
        "permitted_tissues",
        "max_mass_per_specimen",
        "max_total_mass",
        "max_specimens_sampled",
        "due_on",
    )
    terms = {key: term(key, original[key]) for key in keys}
    catalog = {
        s["as"]: s["args"]["catalog_number"]
        for s in steps
        if s["do"] == "specimen" and s["args"]["loan"] == loan
    }
    result = LoanBook(catalog, terms, 1)
    powders: dict[str, PowderBook] = {}
    for step in steps:
        args = step["args"]
        if step["do"] == "drill" and args["specimen"][1:] in catalog:
            powder = PowderBook(args["specimen"][1:], mg(args["gross"]) - mg(args["tare"]))
            powder.override = "override_reason" in args
            powders[step["as"]] = powder
            result.powders.append(powder)
        elif step["do"] == "dissolve" and args["powder"][1:] in powders:
            powder = powders[args["powder"][1:]]
            whole = powder.drilled - powder.dissolved  # no powder_taken: all that remains
            powder.dissolved += mg(args["powder_taken"]) if "powder_taken" in args else whole
        elif step["do"] == "dispose" and args["item"][1:] in powders:
            powder = powders[args["item"][1:]]
            powder.disposed = True
            if "residual_tare" in args:
                powder.residual = mg(args["residual_gross"]) - mg(args["residual_tare"])
        elif step["do"] == "amend" and args["loan"] == loan and in_force(args):
            result.version += 1
            terms.update({key: term(key, args[key]) for key in terms if key in args})
    return result


def in_force(amendment: dict[str, Any]) -> bool:
    return date.fromisoformat(amendment["effective_from"]) <= today()


def term(key: str, value: Any) -> Any:
    return mg(value) if key in ("max_mass_per_specimen", "max_total_mass") else value
