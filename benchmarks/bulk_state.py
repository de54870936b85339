"""What the bulk executor knows of the lab: transient ORM objects by ID, and the ledger head.

Objects made by bulk handlers are registered here; what the real services make (people,
places, loans) is mirrored from the request the service was given, so later bulk steps can
check rules and compute payloads without reading the database. A returned loan's whole
tree is dropped from memory: the plan never touches it again.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime
from typing import Any, TypeVar

from sqlalchemy import func, select

from tracker.db.database import Database
from tracker.domain.base import Base
from tracker.domain.errors import InputError, NotFound, RuleViolation
from tracker.domain.ids import Kind
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    Concentration,
    CustodyEvent,
    Cut,
    Label,
    Loan,
    LoanStatus,
    Location,
    Operator,
    Powder,
    ReferenceMaterial,
    Role,
    Solution,
    Specimen,
    TermsKind,
)
from tracker.services.admin.setup import NewLocation, NewOperator
from tracker.services.bench.chemistry import NewReferenceMaterial
from tracker.services.core.inputs import parse
from tracker.services.core.lookup import read_id
from tracker.services.loans.lending import NewLoan, terms_row

T = TypeVar("T", bound=Base)
ID_KIND: dict[type[Base], Kind] = {
    Specimen: Kind.SPECIMEN,
    Powder: Kind.POWDER,
    Solution: Kind.SOLUTION,
    Aliquot: Kind.ALIQUOT,
    ColumnBatch: Kind.COLUMN_BATCH,
    BatchPosition: Kind.POSITION,
    Cut: Kind.CUT,
    Location: Kind.LOCATION,
    Loan: Kind.LOAN,
}
_COUNTED = (
    Specimen,
    Powder,
    Solution,
    Aliquot,
    ColumnBatch,
    BatchPosition,
    Cut,
    Concentration,
    Label,
)


@dataclass
class State:
    """Registries of live objects, next primary keys and the ledger head."""

    objects: dict[type[Base], dict[int, Any]] = field(default_factory=dict)
    next_id: dict[type[Base], int] = field(default_factory=dict)
    operators: dict[str, Operator] = field(default_factory=dict)
    references: dict[str, ReferenceMaterial] = field(default_factory=dict)  # by lower-case name
    head_seq: int = 0
    head_hash: str = ""

    def take_id(self, model: type[Base]) -> int:
        number = self.next_id.get(model, 1)
        self.next_id[model] = number + 1
        return number

    def keep(self, obj: T) -> T:
        self.objects.setdefault(type(obj), {})[obj.id] = obj  # type: ignore[attr-defined]
        return obj

    def get(self, model: type[T], field_name: str, text: str) -> T:
        """Like ``lookup.get_by_id``: the kind must match and the row must exist."""
        public = read_id(field_name, text)
        expected = ID_KIND[model]
        if public.kind is not expected:
            raise InputError(field_name, text, f"expected a {expected.name.lower()} ID")
        row = self.objects.get(model, {}).get(public.number)
        if row is None:
            raise NotFound(field_name, text, f"no {expected.name.lower()} has this ID")
        return row  # type: ignore[no-any-return]

    def get_any(self, field_name: str, text: str, models: tuple[type[Base], ...]) -> Any:
        public = read_id(field_name, text)
        for model in models:
            if ID_KIND[model] is public.kind:
                return self.get(model, field_name, text)
        raise InputError(field_name, text, "is not an item this action takes")

    def operator(self, code: str | None) -> Operator:
        """Like ``uow.find_operator``."""
        found = self.operators.get(code or "")
        if found is None:
            raise InputError("--as", code, "no such operator; see `tracker operator list`")
        if not found.active:
            raise RuleViolation("--as", code, "this operator has been deactivated")
        return found

    def sync(self, db: Database) -> None:
        """Read the ledger head and the next keys from the database (after real services)."""
        with db.read_session() as session:
            head = session.execute(
                select(CustodyEvent.seq, CustodyEvent.hash).order_by(CustodyEvent.seq.desc())
            ).first()
            self.head_seq, self.head_hash = (head[0], head[1]) if head else (0, "")
            for model in _COUNTED:
                top = session.scalar(select(func.max(model.id)))
                self.next_id[model] = max(self.next_id.get(model, 1), (top or 0) + 1)
            if not self.operators:
                for row in session.scalars(select(Operator)):
                    self.operators[row.code] = Operator(
                        code=row.code, name=row.name, role=row.role, active=row.active
                    )

    # ------------------------------------------------------------------ mirrors of services
    def mirror(self, do: str, args: dict[str, Any], made: Any, now: datetime, by: str) -> None:
        """Remember what a real service just made (from its request and answer)."""
        if do == "operator":
            request = parse(NewOperator, args)
            self.operators[request.code] = Operator(
                code=request.code, name=request.name, role=request.role, active=True
            )
        elif do == "location":
            place = parse(NewLocation, args)
            parent = self.get(Location, "parent", place.parent) if place.parent else None
            number = read_id("location", made).number
            self.keep(Location(id=number, kind=place.kind, name=place.name, parent=parent))
        elif do == "reference":
            found = parse(NewReferenceMaterial, args)
            number = read_id("reference", made).number
            material = ReferenceMaterial(id=number, name=found.name, element=found.element)
            self.references[material.name.lower()] = material
        elif do == "loan":
            self._mirror_loan(parse(NewLoan, args), read_id("loan", made).number, now, by)
        elif do == "loan_returned":
            self._forget(self.get(Loan, "loan", args["loan"]))

    def _mirror_loan(self, request: NewLoan, number: int, now: datetime, by: str) -> None:
        loan = Loan(id=number, reference=request.reference, status=LoanStatus.OPEN)
        start = request.received_on or now.date()
        terms = terms_row(
            request.terms, version=1, kind=TermsKind.ORIGINAL, effective_from=start, recorded_by=by
        )
        loan.terms.append(terms)
        self.keep(loan)

    def _forget(self, loan: Loan) -> None:
        """Drop a returned loan's tree: nothing in the plan touches it again."""
        loan.status = LoanStatus.RETURNED
        drop = {model: self.objects.setdefault(model, {}) for model in ID_KIND}
        for specimen in loan.specimens:
            for powder in specimen.powders:
                for solution in powder.solutions:
                    for aliquot in solution.aliquots:
                        for position in aliquot.positions:
                            batch = drop[ColumnBatch].pop(position.batch_id, None)
                            for other in batch.positions if batch is not None else []:
                                drop[BatchPosition].pop(other.id, None)
                                for cut in other.cuts:
                                    drop[Cut].pop(cut.id, None)
                        drop[Aliquot].pop(aliquot.id, None)
                    drop[Solution].pop(solution.id, None)
                drop[Powder].pop(powder.id, None)
            drop[Specimen].pop(specimen.id, None)
        drop[Loan].pop(loan.id, None)


def is_manager(operator: Operator) -> bool:
    return operator.role is Role.MANAGER
