"""Read side: an item, the tree of what came from it, where it came from, and its history."""

from __future__ import annotations

from collections.abc import Iterable
from contextlib import suppress
from datetime import date
from typing import Any

from pydantic import Field
from sqlalchemy import or_, select
from sqlalchemy.orm import Load, Session, selectinload

from tracker.db.database import Database
from tracker.domain.base import HasPublicId
from tracker.domain.ids import BadId, PublicId, parse_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    CustodyEvent,
    Cut,
    EventRef,
    Lender,
    Loan,
    LoanDocument,
    Powder,
    Solution,
    Specimen,
)
from tracker.services.core.lookup import find_item, rows_named
from tracker.services.core.views import DocumentView, EventView, TermsView, View
from tracker.services.ledger.chain import listed
from tracker.services.read.item_facts import ItemFacts, facts_of


class Node(View):
    """One item in a lineage tree; ``facts`` are its masses and amounts, typed by its kind
    (``item_facts``; none for a kind whose label says all there is)."""

    id: str
    kind: str
    label: str
    name: str = ""  # the short name people know it by (``name_of``)
    status: str | None = None
    facts: ItemFacts | None = None
    children: list[Node] = Field(default_factory=list)


class OverrideView(View):
    """A drill a manager let past the loan's limits, with the reason they gave."""

    powder: str
    catalog_number: str
    mass_mg: float
    drilled_on: date
    by: str
    reason: str


class ItemDetail(View):
    item: Node
    ancestors: list[Node]
    location: str | None
    history: list[EventView]
    terms: list[TermsView] = Field(default_factory=list)  # loans: every version, oldest first
    documents: list[DocumentView] = Field(default_factory=list)  # loans: kept by SHA-256
    overrides: list[OverrideView] = Field(default_factory=list)  # loans: drills past a limit


def show_item(db: Database, ref: str) -> ItemDetail:
    """Everything about one ID: its lineage below, its ancestors above, its custody history."""
    with db.read_session() as session:
        row = load_tree(session, find_item(session, "item", ref))
        location = getattr(row, "location", None)
        loan_rows = row if isinstance(row, Loan) else None
        return ItemDetail(
            terms=[TermsView.of(t) for t in loan_rows.terms] if loan_rows else [],
            documents=_documents(session, loan_rows.id) if loan_rows else [],
            overrides=_overrides(session, loan_rows.id) if loan_rows else [],
            item=node_of(row),
            ancestors=[node_of(a, with_children=False) for a in ancestors_of(row)],
            location=location.path if location is not None else None,
            history=history_of(session, row.public_id),
        )


def _documents(session: Session, loan_id: int) -> list[DocumentView]:
    links = session.scalars(select(LoanDocument).where(LoanDocument.loan_id == loan_id))
    return [DocumentView.of(link.document, link.role) for link in links]


def _overrides(session: Session, loan_id: int) -> list[OverrideView]:
    query = (
        select(Powder, Specimen.catalog_number)
        .join(Specimen, Powder.specimen_id == Specimen.id)
        .where(Specimen.loan_id == loan_id, Powder.override_reason.is_not(None))
        .order_by(Powder.drilled_at, Powder.id)
    )
    return [
        OverrideView(
            powder=powder.public_id,
            catalog_number=catalog,
            mass_mg=float(powder.mass_mg),
            drilled_on=powder.drilled_at.date(),
            by=powder.drilled_by,
            reason=powder.override_reason or "",
        )
        for powder, catalog in session.execute(query)
    ]


def history_of(session: Session, public_id: str) -> list[EventView]:
    mentioned = select(EventRef.seq).where(EventRef.ref == public_id)
    query = (
        listed(session.get_bind().dialect.name)
        .where(
            or_(
                CustodyEvent.object_ref == public_id,
                CustodyEvent.parent_ref == public_id,
                CustodyEvent.seq.in_(mentioned),
            )
        )
        .order_by(CustodyEvent.seq)
    )
    return [EventView.of(e) for e in session.execute(query)]


def ancestors_of(row: HasPublicId) -> list[HasPublicId]:
    """From the loan down to the item's parent, in that order."""
    chain: list[HasPublicId] = []
    parent = _parent(row)
    while parent is not None:
        chain.append(parent)
        parent = _parent(parent)
    return list(reversed(chain))


def _parent(row: HasPublicId) -> HasPublicId | None:
    match row:
        case Loan():
            return row.lender
        case Specimen():
            return row.loan
        case Powder():
            return row.specimen
        case Solution():
            return row.powder
        case Aliquot():
            return row.solution
        case BatchPosition():
            return row.aliquot if row.aliquot is not None else row.batch
        case Cut():
            return row.position
    return None


def node_of(row: HasPublicId, *, with_children: bool = True) -> Node:
    kind = type(row).__name__.lower()
    status = getattr(row, "status", None)
    children = [node_of(c) for c in _children(row)] if with_children else []
    return Node(
        id=row.public_id,
        kind=kind,
        label=label_of(row),
        name=name_of(row),
        status=status.value if status is not None else None,
        facts=facts_of(row),
        children=children,
    )


def _children(row: HasPublicId) -> list[HasPublicId]:
    match row:
        case Lender():
            return list(row.loans)
        case Loan():
            return list(row.specimens)
        case Specimen():
            return list(row.powders)
        case Powder():
            return list(row.solutions)
        case Solution():
            return list(row.aliquots)
        case Aliquot():
            return list(row.positions)
        case ColumnBatch():
            return list(row.positions)
        case BatchPosition():
            return list(row.cuts)
    return []


def label_of(row: HasPublicId) -> str:
    """The words that name an item in a tree or a scan; unlike its facts, they read none of
    its children (a scan shows labels only, and loads no collections for them)."""
    match row:
        case Lender():
            return row.name
        case Loan():
            return f"{row.reference}: {row.title}"
        case Specimen():
            taxon = row.scientific_name or "unnamed taxon"
            return f"{row.catalog_number} {taxon} ({row.skeletal_element or 'element ?'})"
        case Powder():
            return f"{row.tissue} powder{f' from {row.site}' if row.site else ''}"
        case Solution():
            return f"solution in {row.acid}"
        case Aliquot():
            return f"{row.purpose.value} aliquot"
        case BatchPosition():
            what = row.reference_material.name if row.reference_material else row.kind.value
            return f"column {row.slot} of {row.batch.name}: {what}"
        case Cut():
            return f"{row.name} cut"
    name = getattr(row, "name", None) or getattr(row, "code", None) or row.public_id
    return str(name)


def name_of(row: HasPublicId) -> str:
    """The few words people know an item by, said beside its ID in a chain of origins: a
    lender's code, a loan's reference, a specimen's catalogue number, what a vial holds."""
    match row:
        case Lender():
            return row.institution_code or row.name
        case Loan():
            return row.reference
        case Specimen():
            return row.catalog_number
        case Powder():
            return f"{row.tissue} powder"
        case Solution():
            return "solution"
        case Aliquot():
            return f"{row.purpose.value} aliquot"
        case BatchPosition():
            return f"column {row.slot} of {row.batch.name}"
    return label_of(row)


def names_of(db: Database, refs: Iterable[str]) -> dict[str, str]:
    """The name people know each item by (``name_of``), for lists of IDs such as the
    ledger's: read in a few queries for all of them. A text that is no ID (an event about
    the lab as a whole names none) or names nothing has no entry."""
    publics: dict[str, PublicId] = {}
    for ref in refs:
        with suppress(BadId):
            publics[ref] = parse_id(ref)
    with db.read_session() as session:
        rows = rows_named(session, publics.values(), _named_with)
        return {ref: name_of(rows[p]) for ref, p in publics.items() if p in rows}


def _named_with(model: type[Any]) -> list[Any]:
    """What ``name_of`` reads beyond the row itself."""
    return [selectinload(BatchPosition.batch)] if model is BatchPosition else []


def load_tree(session: Session, row: HasPublicId) -> HasPublicId:
    """The item again, with everything its view shows loaded in a fixed number of queries
    however large its tree: what came from it (one query per level, not per node), the
    chain of its parents up to the lender, and its place."""
    model: Any = type(row)  # a mapped class with an ``id`` column
    query = select(model).where(model.id == row.id)
    options = [*_subtree(Load(model), model), *scan_options(model)]
    if model is Loan:
        options += [selectinload(Loan.terms), Load(Loan).joinedload(Loan.lender)]
    loaded: HasPublicId = session.scalars(query.options(*options)).unique().one()
    return loaded


def _subtree(at: Any, model: type[Any]) -> list[Any]:
    """Loader options below ``at`` (a path to items of ``model``): every child the tree
    shows, and what each child's line reads (a solution's concentrations, a column's batch
    and reference material, a cut's results). A specimen's extra terms stay deferred: the
    tree shows none of them, and a lender's wide list made them most of a loan's bytes."""
    children = {
        Lender: Lender.loans,
        Loan: Loan.specimens,
        Specimen: Specimen.powders,
        Powder: Powder.solutions,
        Solution: Solution.aliquots,
        Aliquot: Aliquot.positions,
        ColumnBatch: ColumnBatch.positions,
        BatchPosition: BatchPosition.cuts,
    }
    options: list[Any] = []
    if model is Solution:
        options.append(at.selectinload(Solution.concentrations))
    if model is BatchPosition:
        options += [
            at.joinedload(BatchPosition.batch),
            at.joinedload(BatchPosition.reference_material),
        ]
    if model is Cut:
        options.append(at.selectinload(Cut.results))
    child = children.get(model)
    if child is not None:
        below = at.selectinload(child)
        options += [below, *_subtree(below, child.property.mapper.class_)]
    return options


# Loading one item with what its lineage line needs, in a few queries rather than one per hop.
#
# A scanned label is answered with the item, its label text, where it is and every ancestor up
# to the lender, each named by its label (no collections: masses and remainders belong to the
# lineage view). Lazily that is a dozen round trips for a cut; with these loader options it is
# one query joining the chain of parents, so a scanner's lookup stays within a few
# milliseconds however large the ledger grows.


def _specimen(at: Any) -> list[Any]:
    """Options below a loader path that points at a specimen: its loan and lender."""
    return [at.joinedload(Specimen.loan).joinedload(Loan.lender)]


def _powder(at: Any) -> list[Any]:
    return _specimen(at.joinedload(Powder.specimen))


def _solution(at: Any) -> list[Any]:
    return _powder(at.joinedload(Solution.powder))


def _aliquot(at: Any) -> list[Any]:
    return _solution(at.joinedload(Aliquot.solution))


def _position(at: Any) -> list[Any]:
    return [
        at.joinedload(BatchPosition.batch),
        at.joinedload(BatchPosition.reference_material),
        *_aliquot(at.joinedload(BatchPosition.aliquot)),
    ]


def _cut(at: Any) -> list[Any]:
    return _position(at.joinedload(Cut.position))


_PARENTS = {
    Specimen: _specimen,
    Powder: _powder,
    Solution: _solution,
    Aliquot: _aliquot,
    BatchPosition: _position,
    Cut: _cut,
}


def scan_options(model: type[Any]) -> list[Any]:
    """Loader options that bring a scanned item of ``model`` with its chain of parents (and
    its place) in the one query that reads it; none for an item without parents to show."""
    parents = _PARENTS.get(model)
    if parents is None:
        return []
    options = parents(Load(model))
    if hasattr(model, "location"):  # a column position has no place of its own
        options.append(Load(model).joinedload(model.location))
    return options
