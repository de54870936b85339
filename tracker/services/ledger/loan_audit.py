"""The books of one loan against the ledger: what a return report or an export vouches for.

A report of one loan must not replay a decade of the whole lab each time. Every event
names (as its object, its parent or a mention) each item whose rows it wrote —
``UnitOfWork.record`` mentions them all (``Written.names``) — so the events that wrote the
loan's rows are found through the ledger's indexes: the loan, its specimens, powders,
solutions, aliquots, the columns that hold them and their cuts, its shipments (the
*roots*), and its lender and documents (*keys*). Only those events are replayed, only the
rows in scope kept (``domain.replay.Scope``), and only the loan's stored rows compared.

A row an event made for the loan that the stored rows no longer hold (a deleted
specimen) widens the scope, and the events are read again until nothing new turns up, so
rows deleted together with their children are still missed. The chain's hashes and
signatures are verified from this computer's last checkpoint of the ledger
(:mod:`~tracker.services.ledger.checkpoints`), or in full where there is none; what the
scoped audit does not check is the rest of the lab (`tracker ledger audit` does).
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterator
from functools import lru_cache
from typing import Any

from sqlalchemy import ColumnElement, Connection, Select, or_, select

from tracker.db import stream
from tracker.db.database import Database
from tracker.domain.base import Base
from tracker.domain.facts import ITEM_COLUMNS, described_tables, layout
from tracker.domain.ids import BadId, Kind, PublicId, format_id, looks_like_id, parse_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    CustodyEvent,
    Cut,
    EventRef,
    Loan,
    LoanDocument,
    Powder,
    Shipment,
    Solution,
    Specimen,
)
from tracker.domain.replay import Books, Discrepancy, Scope
from tracker.services.core.lookup import get_loan
from tracker.services.ledger.audit import AuditReport, Progress, audit, stored
from tracker.services.ledger.chain import stamp_column
from tracker.services.ledger.checkpoints import keep, kept_for, verify_since_checkpoint

# Items a loan's rows name that are in its report without being part of its tree.
KEYS = (Kind.LENDER, Kind.DOCUMENT)
MAX_PASSES = 10  # each pass adds a generation of deleted rows; a loan's tree is a few deep


def audit_loan(db: Database, loan: str) -> AuditReport:
    """The loan's rows against the ledger (see the module); the whole chain's hashes too."""
    with db.read_session() as session:
        row = get_loan(session, "loan", loan)
        number, reference = row.id, row.reference
    verified = verify_since_checkpoint(db)
    chain, scope_name = verified.chain, f"loan {reference}"
    rested = verified.checkpoint
    checkpoint = None if rested is None else (rested.seq, rested.verified_at)
    if not chain.ok:  # facts the chain no longer proves are not held against anything
        return AuditReport(chain, [], Books().coverage, 0, scope_name, checkpoint, verified.note)
    with stream.snapshot(db.engine) as connection:
        books, rows, found = _audited(connection, _scope(connection, {number}))
    return AuditReport(chain, found, books.coverage, rows, scope_name, checkpoint, verified.note)


def audit_changes(db: Database, progress: Progress | None = None) -> AuditReport:
    """Every loan's books as far as they changed since this computer's last whole-lab audit.

    A whole-lab audit that found the books agreeing with the ledger marks its head on this
    computer's checkpoint (:mod:`~tracker.services.ledger.checkpoints`). Then only the
    loans that events after it name — through any item of their trees, their shipments,
    documents or lender — are audited again, each as a report of it would be, and the mark
    moves on when they agree. Without a mark (or with a checkpoint the ledger no longer
    matches) the whole lab is audited. What this cannot see is a loan's row changed after
    the mark without any event naming the loan since; ``ledger audit`` of the whole lab
    does, and it is what sets the mark.
    """
    kept = kept_for(db)
    if kept is None or kept.audited_seq is None or kept.audited_at is None:
        return audit(db, progress)
    verified = verify_since_checkpoint(db)
    if verified.note is not None:  # the checkpoint is not this ledger's any more
        return audit(db, progress)
    rested = verified.checkpoint
    checkpoint = None if rested is None else (rested.seq, rested.verified_at)
    audited_to = (kept.audited_seq, kept.audited_at)
    scope_name = f"the loans changed since event #{kept.audited_seq:,}"
    if not verified.chain.ok:
        return AuditReport(
            verified.chain, [], Books().coverage, 0, scope_name, checkpoint, audited_to=audited_to
        )
    with stream.snapshot(db.engine) as connection:
        loans = _loans_named(connection, _names_since(connection, kept.audited_seq))
        books, rows, found = _audited(connection, _scope(connection, loans))
    report = AuditReport(
        verified.chain, found, books.coverage, rows, scope_name, checkpoint, audited_to=audited_to
    )
    if not found:
        keep(db, verified.chain, db.clock(), audit="now")
    return report


def _audited(connection: Connection, scope: Scope) -> tuple[Books, int, list[Discrepancy]]:
    """The scope's events replayed and its stored rows compared: the books, how many rows
    were compared, and every discrepancy."""
    for _ in range(MAX_PASSES):
        known = set(scope.roots)
        books = _replay(connection, scope)  # rows made for the loan widen the scope
        if scope.roots <= known:
            break
    rows, found = 0, list[Discrepancy]()
    for name in described_tables():
        mine = list(_stored_in_scope(connection, name, scope))
        rows += len(mine)
        found.extend(books.compare(name, mine))
    return books, rows, found


def _names_since(connection: Connection, seq: int) -> set[str]:
    """Every item an event after ``seq`` names: its object, its parent, its mentions."""
    names: set[str] = set()
    events = select(CustodyEvent.object_ref, CustodyEvent.parent_ref).where(CustodyEvent.seq > seq)
    for object_ref, parent_ref in connection.execute(events):
        names.update((object_ref, parent_ref))
    mentions = select(EventRef.ref).where(EventRef.seq > seq)
    names.update(ref for (ref,) in connection.execute(mentions))
    return {name for name in names if name and looks_like_id(name)}


def _loans_named(connection: Connection, names: set[str]) -> set[int]:
    """The loans whose books hold any of ``names``: up each item's chain to its loan."""
    loans: set[int] = set()
    for kind, numbers in _by_kind(names).items():
        for start in range(0, len(numbers), CHUNK):
            statement = _to_loan(kind, numbers[start : start + CHUNK])
            if statement is None:
                break
            loans.update(loan for (loan,) in connection.execute(statement))
    return loans


def _replay(connection: Connection, scope: Scope) -> Books:
    books = Books(scope)
    for seq, at, operator, action, object_ref, parent_ref, payload in _events(connection, scope):
        books.apply(seq, at, operator, action, object_ref, parent_ref, payload)
    return books


# seq, at, operator, action, object, parent, payload
Event = tuple[int, str, str, str, str, str, str]


def _events(connection: Connection, scope: Scope) -> Iterator[Event]:
    """The events naming any item in scope (object, parent or mention), in ledger order."""
    names = sorted(scope.names())
    mentioned = select(EventRef.seq).where(EventRef.ref.in_(names))
    statement = (
        select(
            CustodyEvent.seq,
            stamp_column(connection.dialect.name),
            CustodyEvent.operator,
            CustodyEvent.action,
            CustodyEvent.object_ref,
            CustodyEvent.parent_ref,
            CustodyEvent.payload,
        )
        .where(
            or_(
                CustodyEvent.object_ref.in_(names),
                CustodyEvent.parent_ref.in_(names),
                CustodyEvent.seq.in_(mentioned),
            )
        )
        .order_by(CustodyEvent.seq)
    )
    for batch in stream.batches(connection, statement, "tracker_audit_loan_events"):
        yield from batch


def _scope(connection: Connection, loan_ids: set[int]) -> Scope:
    """The loans' trees as stored (every row that refers, level by level, to a loan), and
    the lender and documents their rows name."""
    roots = {format_id(Kind.LOAN, loan_id) for loan_id in loan_ids}
    tables = [name for name in described_tables() if layout(name).kind is not None]
    for _ in range(2):  # parents come first in table order; a second pass catches the rest
        for name in tables:
            rules = layout(name)
            table = Base.metadata.tables[name]
            wanted = _referring(name, roots)
            if wanted is None:
                continue
            for (number,) in connection.execute(select(table.c.id).where(wanted)):
                roots.add(format_id(rules.kind, number))  # type: ignore[arg-type]
    keys: set[str] = set()
    scope = Scope(roots, keys)
    for name in described_tables():
        rules = layout(name)
        named = [c for c in rules.columns if c.refers in KEYS]
        if not named:
            continue
        for _, facts in _stored_in_scope(connection, name, scope):
            keys.update(str(facts[c.name]) for c in named if facts.get(c.name))
    return scope


def _by_kind(names: set[str]) -> dict[Kind, list[int]]:
    numbers: dict[Kind, list[int]] = defaultdict(list)
    for name in names:
        found = _parsed(name)
        if found is not None:
            numbers[found.kind].append(found.number)
    return {kind: sorted(found) for kind, found in numbers.items()}


@lru_cache(maxsize=1 << 16)
def _parsed(name: str) -> PublicId | None:
    """``name`` read as an ID, or None when it names none (a check character that fails).

    The audit sorts the same names by kind once per table and pass (some ninety times for a
    loan's scope); reading each name once keeps that from costing more than the audit itself.
    """
    try:
        return parse_id(name)
    except BadId:
        return None


CHUNK = 500  # IDs per IN (...) list: well inside every backend's limit on parameters


def _to_loan(kind: Kind, numbers: list[int]) -> Select[Any] | None:
    """The loans of the items of ``kind`` numbered ``numbers``, or None for a kind no loan's
    books hold. Built when asked for (no statement is built at import)."""
    direct = {
        Kind.LOAN: (Loan.id, Loan.id),
        Kind.LENDER: (Loan.id, Loan.lender_id),
        Kind.SHIPMENT: (Shipment.loan_id, Shipment.id),
        Kind.DOCUMENT: (LoanDocument.loan_id, LoanDocument.document_id),
    }
    if kind in direct:
        loan, key = direct[kind]
        return select(loan).where(key.in_(numbers))
    # a specimen's tree, level by level: each level reaches its loan through those above it
    tree = [
        (Kind.SPECIMEN, None, Specimen.id),
        (Kind.POWDER, (Powder, Powder.specimen_id == Specimen.id), Powder.id),
        (Kind.SOLUTION, (Solution, Solution.powder_id == Powder.id), Solution.id),
        (Kind.ALIQUOT, (Aliquot, Aliquot.solution_id == Solution.id), Aliquot.id),
        (Kind.POSITION, (BatchPosition, BatchPosition.aliquot_id == Aliquot.id), BatchPosition.id),
        (Kind.CUT, (Cut, Cut.position_id == BatchPosition.id), Cut.id),
    ]
    query = select(Specimen.loan_id)
    for level, join, key in tree:
        if join is not None:
            query = query.join(*join)
        if level is kind:
            return query.where(key.in_(numbers))
    return None


def _referring(name: str, roots: set[str]) -> ColumnElement[bool] | None:
    """Rows of ``name`` that refer to a root (by a reference or an item column)."""
    rules = layout(name)
    table = Base.metadata.tables[name]
    numbers = _by_kind(roots)
    wanted: list[ColumnElement[bool]] = []
    for column in rules.columns:
        if column.refers is not None and numbers.get(column.refers):
            wanted.append(table.c[column.name].in_(numbers[column.refers]))
        elif column.name in ITEM_COLUMNS:
            wanted.append(table.c[column.name].in_(sorted(roots)))
    return or_(*wanted) if wanted else None


def _stored_in_scope(
    connection: Connection, name: str, scope: Scope
) -> Iterator[tuple[str, dict[str, Any]]]:
    """The stored rows of ``name`` in scope: the roots and keys themselves, and every row
    that refers to a root — the same rule the replay keeps rows by (``Scope.admits``)."""
    rules = layout(name)
    table = Base.metadata.tables[name]
    wanted: list[ColumnElement[bool]] = []
    if rules.kind is not None:
        mine = _by_kind(scope.names()).get(rules.kind)
        if mine:
            wanted.append(table.c.id.in_(mine))
    referring = _referring(name, scope.roots)
    if referring is not None:
        wanted.append(referring)
    if not wanted:
        return
    for key, facts in stored(connection, name, select(table).where(or_(*wanted))):
        if scope.admits(rules, key, facts):
            yield key, facts
