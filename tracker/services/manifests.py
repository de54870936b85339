"""Lender manifests: the list of specimens a loan brings, read from CSV, TSV or XLSX.

Columns named with Darwin Core terms (TDWG) are understood as they are; any other
headings are read through a saved mapping. Every row is checked and the whole file is
previewed row by row — what would be created, updated or left unchanged, and every
problem with its row number — before anything is written. A clean import is one
transaction and one ledger event; importing the same file again changes nothing.
"""

from __future__ import annotations

import hashlib
from collections import Counter
from datetime import date
from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError
from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError, NotFound, RuleViolation, at_cell
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import LoanStatus, MappingProfile, Specimen, SpecimenStatus
from tracker.domain.spreadsheet import looks_like_formula
from tracker.domain.tables import Row, TableError, read_table
from tracker.services.common import finish
from tracker.services.inputs import Name, Raw, Request, parse
from tracker.services.lookup import get_loan
from tracker.services.specimens import NewSpecimen
from tracker.services.uow import unit_of_work
from tracker.services.views import Done, View

MAX_ROWS = 100_000
# Darwin Core terms (TDWG standard) that become specimen columns; the rest go to `extra`.
TERM_FIELDS = {
    "catalogNumber": "catalog_number",
    "institutionCode": "institution_code",
    "collectionCode": "collection_code",
    "scientificName": "scientific_name",
    "preparations": "skeletal_element",
    "locality": "locality",
    "formation": "formation",
    "earliestEpochOrLowestSeries": "earliest_epoch",
    "latestEpochOrHighestSeries": "latest_epoch",
}
# tracker's own headings for what Darwin Core does not define (numeric ages in Ma)
OWN_FIELDS = {"ageMinMa": "age_min_ma", "ageMaxMa": "age_max_ma"}
DATE_TERMS = ("eventDate", "dateIdentified", "georeferencedDate")
NUMBER_TERMS = ("decimalLatitude", "decimalLongitude", "ageMinMa", "ageMaxMa")
REQUIRED = "catalogNumber"


class ManifestMapping(Request):
    """How to read a lender's list whose headings are not Darwin Core terms."""

    format: Literal["csv", "tsv", "xlsx"] = "csv"
    sheet: str | None = None
    header_row: Annotated[int, Field(ge=1, le=100)] = 1
    columns: dict[str, str] = Field(default_factory=dict)  # term -> heading in the file


Term = Annotated[str, Field(max_length=4000)]


class ManifestRecord(BaseModel):
    """One row of a lender's list, as Darwin Core terms (TDWG) plus tracker's numeric ages.

    Any other Darwin Core term may appear too; it is kept with the specimen. This model
    documents the row for the schema in schemas/; rows are checked by `_check`.
    """

    model_config = ConfigDict(extra="allow")

    catalogNumber: Annotated[str, Field(min_length=1, max_length=80)]  # noqa: N815
    institutionCode: Term | None = None  # noqa: N815
    collectionCode: Term | None = None  # noqa: N815
    scientificName: Term | None = None  # noqa: N815
    preparations: Term | None = None
    locality: Term | None = None
    formation: Term | None = None
    earliestEpochOrLowestSeries: Term | None = None  # noqa: N815
    latestEpochOrHighestSeries: Term | None = None  # noqa: N815
    eventDate: Annotated[str, Field(pattern=r"^\d{4}-\d{2}-\d{2}")] | None = None  # noqa: N815
    decimalLatitude: Annotated[float, Field(ge=-90, le=90)] | None = None  # noqa: N815
    decimalLongitude: Annotated[float, Field(ge=-180, le=180)] | None = None  # noqa: N815
    ageMinMa: Annotated[float, Field(ge=0, le=4600)] | None = None  # noqa: N815
    ageMaxMa: Annotated[float, Field(ge=0, le=4600)] | None = None  # noqa: N815


class RowResult(View):
    row: int
    catalog_number: str | None
    action: Literal["create", "update", "unchanged", "error"]
    problems: list[str]
    changes: dict[str, list[Any]] = Field(default_factory=dict)


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
    with db.read_session() as session:
        return _preview(session, request)


def import_manifest(
    db: Database, actor: str | None, data: ManifestRequest | Raw
) -> ManifestOutcome:
    """Create and update the loan's specimens from a clean manifest, in one transaction."""
    request = parse(ManifestRequest, data)
    with unit_of_work(db, actor) as uow:
        preview = _preview(uow.session, request)
        if not preview.clean:
            header = _rows(uow.session, request)[0]
            raise _first_problem(request.filename, preview, _header_problems(header))
        loan = get_loan(uow.session, "loan", request.loan)
        if loan.status is not LoanStatus.OPEN:
            raise RuleViolation("loan", loan.reference, f"is {loan.status.value}")
        rows = _rows(uow.session, request)[1]
        created, updated = _write(uow.session, loan.id, rows, preview, uow.now)
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
        done = finish(uow, "manifest.imported", loan, payload, lambda: preview)
    return ManifestOutcome(
        preview=preview, created=created, updated=updated, event_seq=done.event_seq
    )


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
        where, None,
        "; ".join([*said, f"the file has {preview.problems} problem(s); see the preview, "
                   "fix the file and import again (nothing was written)"]),
    )  # fmt: skip


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


def _rows(session: Session, request: ManifestRequest) -> tuple[list[str], list[Row]]:
    mapping = _mapping(session, request.mapping)
    fmt = mapping.format if request.mapping else _format_of(request.filename)
    try:
        header, rows = read_table(
            request.content,
            fmt,
            header_row=mapping.header_row,
            sheet=mapping.sheet,
            comment_prefix=None,
            keep_formulas=True,  # flagged row by row in the preview instead
        )
    except TableError as exc:
        if exc.column == "file":
            raise InputError("file", request.filename, exc.reason) from None
        where = at_cell(request.filename, exc.row, exc.column)
        raise InputError(where, None, exc.reason) from None
    if len(rows) > MAX_ROWS:
        raise InputError(
            "file",
            request.filename,
            f"has {len(rows)} rows; split it into files of at most {MAX_ROWS}",
        )
    rename = {heading: term for term, heading in mapping.columns.items()}
    header = [rename.get(h, h) for h in header]
    rows = [Row(r.number, {rename.get(k, k): v for k, v in r.cells.items()}) for r in rows]
    return header, rows


def _format_of(filename: str) -> str:
    lower = filename.lower()
    return (
        "xlsx" if lower.endswith(".xlsx") else "tsv" if lower.endswith((".tsv", ".tab")) else "csv"
    )


def _preview(session: Session, request: ManifestRequest) -> ManifestPreview:
    loan = get_loan(session, "loan", request.loan)
    header, rows = _rows(session, request)
    existing = {
        s.catalog_number: s
        for s in session.scalars(select(Specimen).where(Specimen.loan_id == loan.id))
    }
    file_problem = _header_problems(header)
    seen: dict[str, int] = {}
    results = [_check(row, seen, existing, file_problem) for row in rows]
    extra = sorted(h for h in header if h not in TERM_FIELDS and h not in OWN_FIELDS)
    problems = sum(len(r.problems) for r in results) + (len(file_problem) if not rows else 0)
    tally = Counter(r.action for r in results)
    return ManifestPreview(
        loan=loan.reference, file=request.filename,
        sha256=hashlib.sha256(request.content).hexdigest(), rows=results,
        create=tally["create"], update=tally["update"], unchanged=tally["unchanged"],
        problems=problems, kept_as_extra=extra,
    )  # fmt: skip


def _header_problems(header: list[str]) -> list[str]:
    """Problems with the file as a whole, repeated on every row so no row looks clean."""
    found = [
        f"heading {h[:30]!r} looks like a spreadsheet formula"
        for h in header
        if looks_like_formula(h)
    ]
    if REQUIRED not in header:
        found.append(f"no {REQUIRED} column (Darwin Core term); headings are: {', '.join(header)}")
    return found


def _check(
    row: Row, seen: dict[str, int], existing: dict[str, Specimen], file_problem: list[str]
) -> RowResult:
    problems = list(file_problem)
    catalog = row.cells.get(REQUIRED, "").strip()
    for term, value in row.cells.items():
        problems += _cell_problems(term, value)
    if REQUIRED in row.cells and not catalog:
        problems.append(f"{REQUIRED} is empty")
    elif catalog and catalog in seen:
        problems.append(f"{REQUIRED} {catalog!r} repeats row {seen[catalog]}")
    elif catalog:
        seen[catalog] = row.number
    fields: dict[str, Any] = {}
    if not problems:
        fields, more = _fields(row)
        problems += more
    if problems:
        return RowResult(
            row=row.number, catalog_number=catalog or None, action="error", problems=problems
        )
    current = existing.get(catalog)
    if current is None:
        return RowResult(row=row.number, catalog_number=catalog, action="create", problems=[])
    changes = _changes(current, fields)
    action = "update" if changes else "unchanged"
    return RowResult(
        row=row.number, catalog_number=catalog, action=action, problems=[], changes=changes
    )


def _changes(current: Specimen, fields: dict[str, Any]) -> dict[str, list[Any]]:
    """Only what the file says differently: columns it lacks leave the specimen alone."""
    changes = {
        k: [getattr(current, k), v]
        for k, v in fields.items()
        if k != "extra" and getattr(current, k) != v
    }
    for term, value in fields.get("extra", {}).items():
        if current.extra.get(term) != value:
            changes[f"extra.{term}"] = [current.extra.get(term), value]
    return changes


def _cell_problems(term: str, value: str) -> list[str]:
    where = f"column {term}"
    if looks_like_formula(value):
        return [f"{where}: {value[:30]!r} looks like a spreadsheet formula"]
    if term in DATE_TERMS and value.strip():
        try:
            date.fromisoformat(value.strip()[:10])
        except ValueError:
            return [f"{where}: {value!r} is not an ISO 8601 date (YYYY-MM-DD)"]
    if term in NUMBER_TERMS and value.strip():
        try:
            float(value)
        except ValueError:
            return [f"{where}: {value!r} is not a number"]
    return []


def _fields(row: Row) -> tuple[dict[str, Any], list[str]]:
    """The specimen columns this row's file has, validated like `specimen add`.

    Columns the file does not have are left out (an update never blanks them); other
    headings become extra terms, kept with the specimen.
    """
    present: dict[str, Any] = {"extra": {}}
    for term, value in row.cells.items():
        value = value.strip()
        if term in TERM_FIELDS:
            present[TERM_FIELDS[term]] = value or None
        elif term in OWN_FIELDS:
            present[OWN_FIELDS[term]] = float(value) if value else None
        elif value:
            present["extra"][term] = value
    try:
        specimen = NewSpecimen.model_validate({"loan": "-", **present})
    except ValidationError as exc:
        first = exc.errors(include_url=False)[0]
        blamed = first.get("ctx", {}).get("error")
        reason = getattr(blamed, "reason", None) or first["msg"]
        where = getattr(blamed, "field", None) or ".".join(str(p) for p in first["loc"])
        return {}, [f"{where}: {reason}"]
    checked = specimen.model_dump(exclude={"loan"})
    return {key: checked[key] for key in present}, []


def _write(
    session: Session, loan_id: int, rows: list[Row], preview: ManifestPreview, now: Any
) -> tuple[list[str], list[str]]:
    actions = {r.row: r for r in preview.rows}
    new: list[dict[str, Any]] = []
    updated: list[str] = []
    existing = {
        s.catalog_number: s
        for s in session.scalars(select(Specimen).where(Specimen.loan_id == loan_id))
    }
    for row in rows:
        result = actions[row.number]
        if result.action == "create":
            fields = _fields(row)[0]
            new.append(
                fields | {"loan_id": loan_id, "status": SpecimenStatus.EXPECTED, "created_at": now}
            )
        elif result.action == "update":
            specimen = existing[result.catalog_number or ""]
            extra = dict(specimen.extra)
            for name, (_, value) in result.changes.items():
                if name.startswith("extra."):
                    extra[name.removeprefix("extra.")] = value
                else:
                    setattr(specimen, name, value)
            specimen.extra = extra
            updated.append(specimen.public_id)
    if not new:
        return [], updated
    statement = insert(Specimen).returning(Specimen.id, sort_by_parameter_order=True)
    ids = session.scalars(statement, new).all()
    return [format_id(Kind.SPECIMEN, i) for i in ids], updated
