"""Lender manifests: the list of specimens a loan brings, read from CSV, TSV or XLSX.

A Darwin Core Archive (a ZIP with meta.xml, TDWG Darwin Core Text Guide) is read as it
describes itself (:mod:`tracker.domain.dwca`); its extensions are named in the preview as
not imported. Columns named with Darwin Core terms (TDWG) are understood as they are,
in any case, with a ``dwc:``/``dcterms:`` prefix or as the term's IRI
(:func:`~tracker.domain.darwincore.term_name`); any other headings are read through a
saved mapping. Every row is checked and the whole file is
previewed row by row — what would be created, updated or left unchanged, and every
problem with its row number — before anything is written. A clean import is one
transaction and one ledger event; importing the same file again changes nothing.
"""

from __future__ import annotations

import hashlib
from collections import Counter
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Annotated, Any, Literal

from pydantic import Field
from sqlalchemy import select
from sqlalchemy.orm import Session, undefer

from tracker.db.database import Database
from tracker.db.rows import insert_rows
from tracker.domain.darwincore import term_headings
from tracker.domain.dwca import is_archive, read_archive
from tracker.domain.errors import InputError, NotFound, RuleViolation, at_cell
from tracker.domain.facts import Stated, rows_facts
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import Loan, LoanStatus, MappingProfile, Specimen, SpecimenStatus
from tracker.domain.spreadsheets import Row, Table, TableError, read_table
from tracker.domain.timeutil import as_utc
from tracker.services.core.common import finish
from tracker.services.core.inputs import Name, Raw, Request, parse
from tracker.services.core.lookup import get_loan
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.loans.manifest_rows import (
    CheckedRow,
    Fields,
    check_file,
    compare,
    header_problems,
    rows_per_slice,
    unpacked,
)
from tracker.services.loans.manifest_rows import RowResult as RowResult
from tracker.services.loans.manifest_terms import OWN_FIELDS, TERM_FIELDS

MAX_ROWS = 100_000
# New specimens are inserted by the driver's executemany (no ORM object per row).
_SPECIMEN = Specimen.metadata.tables[Specimen.__tablename__]
PACKED = frozenset({"extra"})  # a checked row's columns held as JSON text (``unpacked``)


class ManifestMapping(Request):
    """How to read a lender's list whose headings are not Darwin Core terms."""

    format: Literal["csv", "tsv", "xlsx"] = "csv"
    sheet: str | None = None
    header_row: Annotated[int, Field(ge=1, le=100)] = 1
    columns: dict[str, str] = Field(default_factory=dict)  # term -> heading in the file


class ManifestPreview(View):
    loan: str
    file: str
    sha256: str
    rows: list[RowResult]
    create: int
    update: int
    unchanged: int
    problems: int
    kept_as_extra: list[str]  # headings that are not specimen columns: stored, never dropped
    # a Darwin Core Archive's extensions (file and row type): named, never imported
    not_imported: list[str] = Field(default_factory=list)

    @property
    def clean(self) -> bool:
        return self.problems == 0


class ManifestRequest(Request):
    loan: str
    filename: Annotated[str, Field(min_length=1, max_length=255)]
    content: Annotated[bytes, Field(min_length=1)]
    mapping: Name | None = None


class ManifestOutcome(View):
    preview: ManifestPreview
    created: list[str]
    updated: list[str]
    event_seq: int | None  # None when the file changed nothing


class MappingView(View):
    name: str
    definition: dict[str, Any]


class NewMapping(Request):
    name: Name
    definition: ManifestMapping


def save_mapping(db: Database, actor: str | None, data: NewMapping | Raw) -> Done[MappingView]:
    """Save (or replace) a manifest column mapping by name."""
    request = parse(NewMapping, data)
    with unit_of_work(db, actor) as uow:
        row = uow.session.scalars(
            select(MappingProfile).where(MappingProfile.name == request.name)
        ).one_or_none()
        definition = request.definition.model_dump(mode="json")
        if row is not None and row.kind != "manifest":
            raise RuleViolation("name", request.name, "is already an instrument profile's name")
        if row is None:
            uow.session.add(
                MappingProfile(
                    name=request.name, kind="manifest", definition=definition, created_at=uow.now
                )
            )
        else:
            row.definition = definition
        view = MappingView(name=request.name, definition=definition)
        return finish(
            uow,
            "manifest_mapping.saved",
            "",
            {"name": request.name, "definition": definition},
            lambda: view,
        )


def preview_manifest(db: Database, data: ManifestRequest | Raw) -> ManifestPreview:
    """Everything the import would do, and every problem, row by row. Writes nothing."""
    request = parse(ManifestRequest, data)
    reading = _read_file(db, request, _saved_mapping(db, request))
    with db.read_session() as session:
        return _examine(session, request, reading).preview


def import_manifest(
    db: Database, actor: str | None, data: ManifestRequest | Raw
) -> ManifestOutcome:
    """Create and update the loan's specimens from a clean manifest, in one transaction.

    The file is read and checked once, before the writer lock is taken: the preview it
    answers with is the pass whose validated rows are written.
    """
    request = parse(ManifestRequest, data)
    return _import(db, actor, request)


def _import(db: Database, actor: str | None, request: ManifestRequest) -> ManifestOutcome:
    mapping = _saved_mapping(db, request)
    reading = _read_file(db, request, mapping)  # the whole file, before the lock
    with unit_of_work(db, actor, "import lender manifest") as uow:
        current = _mapping(uow.session, request.mapping)
        if current != mapping:  # saved anew meanwhile: read the file as it says now
            reading = _read_file(db, request, current)
        examined = _examine(uow.session, request, reading)
        preview = examined.preview
        if not preview.clean:
            raise _first_problem(request.filename, preview, reading.header_problems)
        loan = examined.loan
        if loan.status is not LoanStatus.OPEN:
            raise RuleViolation("loan", loan.reference, f"is {loan.status.value}")
        created, updated = _write(uow, loan.id, examined)
        if not created and not updated:
            return ManifestOutcome(preview=preview, created=[], updated=[], event_seq=None)
        uow.mention(*created, *updated)
        payload = {
            "file": request.filename,
            "sha256": preview.sha256,
            "created": created,
            "updated": {r.catalog_number: r.changes for r in preview.rows if r.action == "update"},
            "unchanged": preview.unchanged,
        }
        warned = [r.catalog_number for r in preview.rows if r.warnings]
        if warned:  # rows that keep a value as typed though it does not read (a legacy date):
            payload["kept_with_warnings"] = warned  # each warning is said again from its value
        done = finish(uow, "manifest.imported", loan, payload, lambda: preview)
    return ManifestOutcome(
        preview=preview, created=created, updated=updated, event_seq=done.event_seq
    )


def _saved_mapping(db: Database, request: ManifestRequest) -> ManifestMapping:
    """The mapping the file is read through; the loan is looked up too, to refuse a typo early."""
    with db.read_session() as session:
        get_loan(session, "loan", request.loan)
        return _mapping(session, request.mapping)


def _first_problem(filename: str, preview: ManifestPreview, of_headings: list[str]) -> InputError:
    """The refusal of a file with problems: where the first is, what it is, how many in all.

    A problem of the headings is said at the header; a row's at that row.
    """
    first = next((r for r in preview.rows if r.problems), None)
    if of_headings or first is None:
        where, said = f"{filename}, header", of_headings[:1]
    else:
        where, said = f"{filename}, row {first.row}", first.problems[:1]
    return InputError(
        where,
        None,
        "; ".join(
            [
                *said,
                f"the file has {preview.problems} problem(s); see the preview, "
                "fix the file and import again (nothing was written)",
            ]
        ),
    )


def _mapping(session: Session, name: str | None) -> ManifestMapping:
    if name is None:
        return ManifestMapping()
    row = session.scalars(
        select(MappingProfile).where(MappingProfile.name == name, MappingProfile.kind == "manifest")
    ).one_or_none()
    if row is None:
        raise NotFound("mapping", name, "no saved manifest mapping has this name")
    mapping: ManifestMapping = ManifestMapping.model_validate(row.definition)
    return mapping


def _table(request: ManifestRequest, mapping: ManifestMapping) -> tuple[Table, list[str]]:
    """The file's headings (as terms, through the mapping) and its rows, read as they are used;
    and what the file holds that is not imported (a Darwin Core Archive's extensions).

    Every reader's headings go through one spelling of the terms (``term_headings``).
    """
    fmt = _table_format(request, mapping)
    mapped = {heading: term for term, heading in mapping.columns.items()}
    not_imported: list[str] = []
    with _as_input(request.filename):
        if is_archive(request.content):  # an archive describes itself, whatever the profile
            archive = read_archive(request.content, keep_formulas=True)
            (header, rows), not_imported = archive.table, archive.not_imported
        else:
            header, rows = read_table(
                request.content,
                fmt,
                header_row=mapping.header_row,
                sheet=mapping.sheet,
                comment_prefix=None,
                keep_formulas=True,  # flagged row by row in the preview instead
            )
        try:
            terms = term_headings([mapped.get(h, h) for h in header])
        except ValueError as exc:
            raise TableError(mapping.header_row, "header", str(exc)) from None
    rename = {h: t for h, t in zip(header, terms, strict=True) if h != t}
    return Table(terms, _renamed(request.filename, rows, rename)), not_imported


def _renamed(filename: str, rows: Iterator[Row], rename: dict[str, str]) -> Iterator[Row]:
    """The rows under their terms, at most MAX_ROWS of them; a reading problem named in the file."""
    with _as_input(filename):
        for count, row in enumerate(rows, start=1):
            if count > MAX_ROWS:
                raise InputError(
                    "file",
                    filename,
                    f"has more than {MAX_ROWS:,} rows; split it into files of at most {MAX_ROWS:,}",
                )
            if rename:
                row = Row(row.number, {rename.get(k, k): v for k, v in row.cells.items()})
            yield row


@contextmanager
def _as_input(filename: str) -> Iterator[None]:
    """A problem reading the table, said as a refusal of the file (or of its row and column)."""
    try:
        yield
    except TableError as exc:
        if exc.column == "file":
            raise InputError("file", filename, exc.reason) from None
        where = at_cell(filename, exc.row, exc.column)
        raise InputError(where, None, exc.reason) from None


def _table_format(request: ManifestRequest, mapping: ManifestMapping) -> str:
    """csv, tsv or xlsx: as a saved mapping says, else as the file's name ends."""
    return mapping.format if request.mapping else _format_of(request.filename)


def _format_of(filename: str) -> str:
    lower = filename.lower()
    return (
        "xlsx"
        if lower.endswith(".xlsx")
        else "tsv"
        if lower.endswith((".tsv", ".tab", ".txt"))  # .txt: tab-separated, as archives write it
        else "csv"
    )


@dataclass(frozen=True)
class _Reading:
    """A manifest read and every row checked, without the database (before the lock)."""

    header: list[str]
    header_problems: list[str]
    rows: list[CheckedRow]
    sha256: str
    not_imported: list[str]

    @property
    def slice_rows(self) -> int:
        """Rows held against the loan together, and written together."""
        return rows_per_slice(len(self.header))


def _read_file(db: Database, request: ManifestRequest, mapping: ManifestMapping) -> _Reading:
    """The file read and checked; a date may start no later than today (UTC) by the db's clock."""
    (header, rows), not_imported = _table(request, mapping)
    problems = header_problems(header)
    digest = hashlib.sha256(request.content).hexdigest()
    today = as_utc(db.clock()).date()
    workbook = _table_format(request, mapping) == "xlsx" and not is_archive(request.content)
    checked = check_file(header, rows, problems, today, workbook=workbook)
    return _Reading(header, problems, checked, digest, not_imported)


@dataclass(frozen=True)
class _Examined:
    """One reading of a manifest: the preview, and what an import of it would write."""

    loan: Loan
    preview: ManifestPreview
    updates: dict[str, Specimen]  # the loan's specimens the file changes, by catalogue number
    fields: dict[int, Fields]  # row number -> validated columns, for rows that write
    slice_rows: int  # rows written together


def _examine(session: Session, request: ManifestRequest, reading: _Reading) -> _Examined:
    """The checked rows against the loan's specimens as they stand: the preview."""
    loan = get_loan(session, "loan", request.loan)

    def find(catalogs: list[str]) -> dict[str, Specimen]:
        """The loan's specimens among these, with their extra terms (a row may change them)."""
        query = (
            select(Specimen)
            .where(Specimen.loan_id == loan.id, Specimen.catalog_number.in_(catalogs))
            .options(undefer(Specimen.extra))
        )
        return {s.catalog_number: s for s in session.scalars(query)} if catalogs else {}

    compared = compare(reading.rows, find, reading.slice_rows)
    results = compared.results
    header = reading.header
    extra = sorted(h for h in header if h not in TERM_FIELDS and h not in OWN_FIELDS)
    problems = sum(len(r.problems) for r in results)
    problems += len(reading.header_problems) if not reading.rows else 0
    tally = Counter(r.action for r in results)
    preview = ManifestPreview(
        loan=loan.reference,
        file=request.filename,
        sha256=reading.sha256,
        rows=results,
        create=tally["create"],
        update=tally["update"],
        unchanged=tally["unchanged"],
        problems=problems,
        kept_as_extra=extra,
        not_imported=reading.not_imported,
    )
    return _Examined(loan, preview, compared.updates, compared.fields, reading.slice_rows)


def _write(uow: UnitOfWork, loan_id: int, examined: _Examined) -> tuple[list[str], list[str]]:
    """New specimens in one set-based insert; changed ones through their ORM rows."""
    new: list[Fields] = []
    updated: list[str] = []
    for result in examined.preview.rows:
        if result.action == "create":
            new.append(examined.fields[result.row])
        elif result.action == "update":
            specimen = examined.updates[result.catalog_number or ""]
            extra = dict(specimen.extra)
            for name, (_, value) in result.changes.items():
                if name.startswith("extra."):
                    extra[name.removeprefix("extra.")] = value
                else:
                    setattr(specimen, name, value)
            specimen.extra = extra
            updated.append(specimen.public_id)
    return _insert(uow, loan_id, new, examined.slice_rows), updated


def _insert(uow: UnitOfWork, loan_id: int, new: list[Fields], size: int) -> list[str]:
    """Insert the new specimens and return their IDs, in file order.

    The rows go a slice at a time (as many as were checked together), each slice one
    driver executemany with its rows' extra terms unpacked only for it; what every new
    row shares (loan, status, creation time) is written into the statement once. The IDs
    are then read back by catalogue number, which is unique within a loan, and the rows
    told to the unit of work's facts with them.
    """
    if not new:
        return []
    session = uow.session
    shared = {"loan_id": loan_id, "status": SpecimenStatus.EXPECTED, "created_at": uow.now}
    stated: list[tuple[str, Stated]] = []  # each row's catalogue number and facts
    for start in range(0, len(new), size):
        checked = new[start : start + size]
        insert_rows(session.connection(), _SPECIMEN, [unpacked(f) for f in checked], shared)
        catalog = (fields["catalog_number"] for fields in checked)
        facts = rows_facts(_SPECIMEN.name, checked, shared, texts=PACKED)  # extra as checked
        stated.extend(zip(catalog, facts, strict=True))
    ids = dict(
        session.execute(
            select(Specimen.catalog_number, Specimen.id).where(Specimen.loan_id == loan_id)
        ).all()
    )
    made = [(format_id(Kind.SPECIMEN, ids[catalog]), facts) for catalog, facts in stated]
    uow.written.created_facts(_SPECIMEN.name, made)
    return [key for key, _ in made]
