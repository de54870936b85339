"""Reconciliation: for every loan and specimen, where every milligram went.

Per powder the books must close: drilled = dissolved + residual (what left the
lab, weighed) — or, while the vial is still open, the remainder is powder to
return. A gap larger than measurement can explain (max of k·u and the balances'
rounding bound, as in :mod:`tracker.domain.budget`) is *unaccounted material*;
a vial that left the lab unweighed is a *missing weighing*. Totals come from
SQL aggregates so the whole lab reconciles in one pass.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from datetime import date
from typing import Any, NamedTuple

from pydantic import TypeAdapter
from sqlalchemy import Select, and_, case, func, select
from sqlalchemy.orm import Session, selectinload

from tracker.db.database import Database
from tracker.domain.base import computed
from tracker.domain.budget import COVERAGE_FACTOR, SQRT6, as_float
from tracker.domain.ids import Kind, format_id
from tracker.domain.loan_flags import (
    BACKDATED,
    Totals,
    urgency,
)
from tracker.domain.models import (
    Aliquot,
    BackdatedEntry,
    ContainerStatus,
    Loan,
    LoanStatus,
    Powder,
    Solution,
    Specimen,
    SpecimenStatus,
)
from tracker.domain.terms import terms_in_force
from tracker.services.core.lookup import get_loan, open_loan_ids
from tracker.services.read.loan_lines import LoanLine, SpecimenLine, loan_line

__all__ = ["LoanLine", "SpecimenLine", "reconcile"]

_OPEN = ContainerStatus.AVAILABLE.value
_CLOSED = [s.value for s in ContainerStatus if s is not ContainerStatus.AVAILABLE]


class _Books(NamedTuple):
    """One specimen's books, as one row of the aggregate reads them.

    A tuple of plain values (the status as its word, the flags as a sorted tuple), so that
    Python's cycle collector stops tracking it: a decade's lab holds 20,000 of these while
    its lines are built, and every full collection would otherwise walk them all.
    """

    id: int
    loan_id: int
    catalog_number: str
    status: str
    powders: int
    drilled: float
    variance: float
    dissolved: float
    on_hand: float
    returned: float
    flags: tuple[str, ...]  # closure and override flags; the loan's limit is judged later


@dataclass(frozen=True)
class _Scope:
    """Which loans' books the aggregate reads: one loan, the open ones, or every loan."""

    loan_id: int | None = None
    open_only: bool = False

    def specimens(self) -> Select[Any] | None:
        """The IDs of the specimens in scope (None: all), to restrict every level by."""
        if self.loan_id is not None:
            return select(Specimen.id).where(Specimen.loan_id == self.loan_id)
        if self.open_only:
            return select(Specimen.id).where(Specimen.loan_id.in_(open_loan_ids()))
        return None

    def powders(self) -> Select[Any] | None:
        mine = self.specimens()
        return None if mine is None else select(Powder.id).where(Powder.specimen_id.in_(mine))


def _totals_of(books: list[_Books]) -> Totals:
    """A loan's totals: its specimens' books summed, so a loan's line always agrees with its
    specimens' lines (every caller, with or without those lines, sums them here)."""
    drilled = variance = dissolved = on_hand = returned = most = 0.0
    holding = sampled = 0
    flags: set[str] = set()
    for b in books:
        drilled += b.drilled
        variance += b.variance
        dissolved += b.dissolved
        on_hand += b.on_hand
        returned += b.returned
        most = max(most, b.drilled)
        holding += b.status == _ON_HAND
        sampled += b.powders > 0
        flags.update(b.flags)
    flags.discard("powder on hand")
    return Totals(
        len(books),
        holding,
        sampled,
        drilled,
        variance,
        dissolved,
        on_hand,
        returned,
        most,
        frozenset(flags),
        any(b.on_hand > 0 for b in books),
    )


def reconcile(
    db: Database, loan: str | None = None, *, specimens: bool = True, open_only: bool = False
) -> list[LoanLine]:
    """One line per loan (most urgent first), each with its specimens unless asked not to.

    Every specimen's books come from one aggregate statement over the powders, solutions
    and aliquots, so reconciling the whole lab is one pass over its tables; a loan's totals
    are its specimens' books summed. With ``open_only``, only open loans: the statement
    then reads only their rows (the overview of a decade-old lab reads a tenth of the
    tables). Without ``specimens`` the lines carry no specimen lines (the overview).
    """
    today = db.clock().date()
    with db.read_session() as session:
        query = select(Loan).options(selectinload(Loan.terms), selectinload(Loan.lender))
        if loan is not None:
            query = query.where(Loan.id == get_loan(session, "loan", loan).id)
        if open_only:
            query = query.where(Loan.status == LoanStatus.OPEN)
        loans = session.scalars(query).all()
        books = _books(
            session, _Scope(loans[0].id if loan is not None and loans else None, open_only)
        )
        lines = [_loan_line(row, today, books.get(row.id, []), specimens) for row in loans]
    return sorted(lines, key=urgency)


def _beyond(square: Any, limit: Any) -> Any:
    """SQL for "square > limit" that ignores float noise (0.002000000000000224 vs 0.002)."""
    return square > limit * (1 + 1e-9) + 1e-18


def _solution_books(scope: _Scope) -> Any:
    """Per powder (in scope): what its solutions took, and how many of them fail to close.

    A solution closes when solution = aliquots + residual (once the vial has left) within
    max(k·u, the balances' rounding bound), compared in squares (SQLite has no sqrt).
    """
    powders = scope.powders()
    aliquots = select(
        Aliquot.solution_id.label("sid"),
        func.sum(computed(Aliquot.mass_g)).label("mass"),
        func.sum(computed(Aliquot.mass_u_g) * computed(Aliquot.mass_u_g)).label("var"),
        func.sum(computed(Aliquot.mass_u_g)).label("u_sum"),
    )
    if powders is not None:
        solutions = select(Solution.id).where(Solution.powder_id.in_(powders))
        aliquots = aliquots.where(Aliquot.solution_id.in_(solutions))
    taken = aliquots.group_by(Aliquot.solution_id).subquery()
    gap = (
        computed(Solution.solution_mass_g)
        - func.coalesce(taken.c.mass, 0.0)
        - func.coalesce(computed(Solution.residual_g), 0.0)
    )
    variance = (
        computed(Solution.solution_mass_u_g) * computed(Solution.solution_mass_u_g)
        + func.coalesce(taken.c.var, 0.0)
        + func.coalesce(computed(Solution.residual_u_g) * computed(Solution.residual_u_g), 0.0)
    )
    bound = SQRT6 * (
        computed(Solution.solution_mass_u_g)
        + func.coalesce(taken.c.u_sum, 0.0)
        + func.coalesce(computed(Solution.residual_u_g), 0.0)
    )
    off = and_(
        Solution.status.in_(_CLOSED),
        _beyond(gap * gap, COVERAGE_FACTOR**2 * variance),
        _beyond(gap * gap, bound * bound),
    )
    books = (
        select(
            Solution.powder_id.label("powder_id"),
            func.sum(computed(Solution.powder_mass_mg)).label("mass"),
            func.sum(
                computed(Solution.powder_mass_u_mg) * computed(Solution.powder_mass_u_mg)
            ).label("var"),
            func.sum(computed(Solution.powder_mass_u_mg)).label("u_sum"),
            func.sum(case((and_(off, Solution.residual_g.is_(None)), 1), else_=0)).label("lost"),
            func.sum(case((and_(off, Solution.residual_g.is_not(None)), 1), else_=0)).label("gap"),
        )
        .outerjoin(taken, taken.c.sid == Solution.id)
        .group_by(Solution.powder_id)
    )
    if powders is not None:
        books = books.where(Solution.powder_id.in_(powders))
    return books.subquery()


def _per_powder(scope: _Scope) -> Select[Any]:
    """One row per powder: drilled, dissolved, residual and the closure test's ingredients.

    Per powder the books must close: drilled = dissolved + residual (what left the lab,
    weighed); a gap beyond max(k·u, the rounding bound) is unaccounted material, a vial
    that left unweighed with such a gap is a missing weighing.
    """
    taken = _solution_books(scope)
    dissolved = func.coalesce(taken.c.mass, 0.0)
    residual = func.coalesce(computed(Powder.residual_mg), 0.0)
    gap = computed(Powder.mass_mg) - dissolved - residual
    variance = (
        computed(Powder.mass_u_mg) * computed(Powder.mass_u_mg)
        + func.coalesce(taken.c.var, 0.0)
        + func.coalesce(computed(Powder.residual_u_mg) * computed(Powder.residual_u_mg), 0.0)
    )
    bound = (
        computed(Powder.readability_mg)
        + SQRT6 * func.coalesce(taken.c.u_sum, 0.0)
        + SQRT6 * func.coalesce(computed(Powder.residual_u_mg), 0.0)
    )
    closed = Powder.status.in_(_CLOSED)
    outside = and_(
        _beyond(gap * gap, COVERAGE_FACTOR**2 * variance), _beyond(gap * gap, bound * bound)
    )
    unweighed = and_(
        Powder.status.in_(["returned", "destroyed", "retained"]),
        Powder.residual_mg.is_(None),
        _beyond(gap * gap, bound * bound),
    )
    rows = select(
        Powder.specimen_id,
        computed(Powder.mass_mg).label("mass_mg"),
        computed(Powder.mass_u_mg).label("mass_u_mg"),
        dissolved.label("dissolved"),
        case((Powder.status == _OPEN, computed(Powder.mass_mg) - dissolved), else_=0.0).label(
            "on_hand"
        ),
        case(
            (
                Powder.status == "returned",
                func.coalesce(computed(Powder.residual_mg), gap + residual),
            ),
            else_=0.0,
        ).label("returned"),
        case((Powder.override_reason.is_not(None), 1), else_=0).label("override"),
        case((and_(closed, outside, ~unweighed), 1), else_=0).label("unaccounted"),
        case((unweighed, 1), else_=0).label("unweighed"),
        func.coalesce(taken.c.lost, 0).label("solution_lost"),
        func.coalesce(taken.c.gap, 0).label("solution_gap"),
    ).outerjoin(taken, taken.c.powder_id == Powder.id)
    mine = scope.specimens()
    return rows if mine is None else rows.where(Powder.specimen_id.in_(mine))


def _books(session: Session, scope: _Scope) -> dict[int, list[_Books]]:
    """Every specimen's books (of the loans in scope), grouped by loan, in specimen order."""
    grouped: dict[int, list[_Books]] = defaultdict(list)
    query = _per_specimen(scope).order_by(Specimen.id)
    for row in session.connection().execute(query).all():  # fetchall: one call, not one per row
        grouped[row[1]].append(_books_of(row))
    return grouped


def _per_specimen(scope: _Scope) -> Select[Any]:
    """One row per specimen (of the loans in scope): its powders' sums and flag counts."""
    per = _per_powder(scope).subquery()
    sums = (
        select(
            per.c.specimen_id,
            func.count().label("powders"),
            func.sum(per.c.mass_mg).label("mass"),
            func.sum(per.c.mass_u_mg * per.c.mass_u_mg).label("var"),
            func.sum(per.c.dissolved).label("dissolved"),
            func.sum(per.c.on_hand).label("on_hand"),
            func.sum(per.c.returned).label("returned"),
            func.sum(per.c.override).label("override"),
            func.sum(per.c.unaccounted).label("unaccounted"),
            func.sum(per.c.unweighed).label("unweighed"),
            func.sum(per.c.solution_lost).label("lost"),
            func.sum(per.c.solution_gap).label("gap"),
        )
        .group_by(per.c.specimen_id)
        .subquery()
    )
    dated = _backdated(scope)
    query = (
        select(
            Specimen.id,
            Specimen.loan_id,
            Specimen.catalog_number,
            Specimen.status,
            *(sums.c[name] for name in _SUM_COLUMNS),
            func.coalesce(dated.c.entries, 0).label("backdated"),
        )
        .outerjoin(sums, sums.c.specimen_id == Specimen.id)
        .outerjoin(dated, dated.c.specimen_id == Specimen.id)
    )
    mine = scope.specimens()
    return query if mine is None else query.where(Specimen.id.in_(mine))


def _backdated(scope: _Scope) -> Any:
    """Per specimen (in scope): how many of its entries a manager dated beyond the window."""
    query = (
        select(BackdatedEntry.specimen_id, func.count().label("entries"))
        .where(BackdatedEntry.specimen_id.is_not(None))
        .group_by(BackdatedEntry.specimen_id)
    )
    mine = scope.specimens()
    return (query if mine is None else query.where(BackdatedEntry.specimen_id.in_(mine))).subquery()


_SUM_COLUMNS = (
    "powders",
    "mass",
    "var",
    "dissolved",
    "on_hand",
    "returned",
    "override",
    "unaccounted",
    "unweighed",
    "lost",
    "gap",
)
_NO_FLAGS: tuple[str, ...] = ()
_BACKDATED = (BACKDATED,)
_ON_HAND = SpecimenStatus.ON_HAND.value


def _books_of(row: Any) -> _Books:
    specimen, loan_id, catalog, status, powders, mass, var, dissolved, on_hand, returned = row[:10]
    override, unaccounted, unweighed, lost, gap, backdated = row[10:]
    if not powders:  # listed, never drilled (perhaps checked in on a backdated day)
        flags = _BACKDATED if backdated else _NO_FLAGS
        return _Books(specimen, loan_id, catalog, status.value, 0, 0.0, 0.0, 0.0, 0.0, 0.0, flags)
    flags = _NO_FLAGS
    if override or unaccounted or unweighed or lost or gap or on_hand > 0 or backdated:
        found = set()
        if backdated:
            found.add(BACKDATED)
        if override:
            found.add("override used")
        if unaccounted or gap:
            found.add("unaccounted material")
        if unweighed or lost:
            found.add("missing weighing")
        if on_hand > 0 and status is not SpecimenStatus.EXPECTED:
            found.add("powder on hand")
        flags = tuple(sorted(found))
    return _Books(
        specimen,
        loan_id,
        catalog,
        status.value,
        powders,
        mass,
        var,
        dissolved,
        on_hand,
        returned,
        flags,
    )


def _loan_line(loan: Loan, today: date, books: list[_Books], with_specimens: bool) -> LoanLine:
    """A loan's line from its specimens' books; with their lines when asked for."""
    terms = terms_in_force(loan.terms, today)
    permitted = as_float(terms.max_mass_per_specimen_mg)
    shown = books if with_specimens else []
    lines = _SPECIMEN_LINES.validate_python(
        [_specimen_line(b, _specimen_flags(b, permitted), permitted) for b in shown]
    )
    return loan_line(loan, terms, today, _totals_of(books), lines)


def _specimen_flags(books: _Books, permitted: float | None) -> tuple[str, ...]:
    if permitted is not None and books.drilled > permitted:
        return tuple(sorted((*books.flags, "over limit")))
    return books.flags


# One validation call per loan: pydantic checks a list of lines in one pass (a decade's lab
# has 20,000 of them; one call each would double reconcile's time).
_SPECIMEN_LINES = TypeAdapter(list[SpecimenLine])


def _specimen_line(
    books: _Books, flags: tuple[str, ...], permitted: float | None
) -> dict[str, Any]:
    return {
        "id": format_id(Kind.SPECIMEN, books.id),
        "catalog_number": books.catalog_number,
        "status": books.status,
        "powders": books.powders,
        "drilled_mg": books.drilled,
        "drilled_u_mg": math.sqrt(books.variance),
        "permitted_mg": permitted,
        "dissolved_mg": books.dissolved,
        "powder_on_hand_mg": books.on_hand,
        "powder_returned_mg": books.returned,
        "flags": flags,
    }
