"""Instrument sessions: saved column-mapping profiles, and importing an export through one.

Every row of the export becomes a measurement: a bracketing standard, a reference
material, a sample (matched to its column cut by the ID on the vial's label), a
procedural blank, or — when nothing matches — an *unmatched* row that is kept and
listed, never dropped. The import is one transaction: a bad ratio, a duplicate run
number or a sample without a standard on both sides refuses the whole file.
"""

from __future__ import annotations

import hashlib
import math
from itertools import chain
from typing import Annotated, Any, Literal, NamedTuple

from pydantic import Field
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError, NotFound, RuleViolation, in_file
from tracker.domain.isotopes import parse_ratio
from tracker.domain.models import (
    BatchPosition,
    ColumnBatch,
    Cut,
    InstrumentSession,
    MappingProfile,
    Measurement,
    MeasurementRole,
)
from tracker.domain.spreadsheets import Row, TableError, read_table
from tracker.domain.timing import Since, not_before
from tracker.services.core.common import action_time, finish
from tracker.services.core.inputs import (
    AwareDatetime,
    Element,
    Name,
    Raw,
    Request,
    imported_text,
    parse,
)
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.instrument.matching import Matcher, require_brackets

Header = Annotated[str, Field(min_length=1, max_length=120)]


class ColumnMap(Request):
    """Which column of the export holds what (names exactly as in its header row)."""

    run_order: Header
    sample_name: Header
    ratios: Annotated[dict[str, Header], Field(min_length=1)]  # "44/40" -> "44Ca/40Ca"
    errors: dict[str, Header] = Field(default_factory=dict)  # ratio -> internal 2SE column
    sample_id: Header | None = None  # a column with the scanned vial ID, if the lab adds one


class ProfileDefinition(Request):
    """A saved way of reading one instrument's export files."""

    format: Literal["csv", "tsv", "xlsx"]
    columns: ColumnMap
    sheet: str | None = None
    header_row: Annotated[int, Field(ge=1, le=100)] = 1
    comment_prefix: str | None = "#"


class NewProfile(Request):
    name: Name
    definition: ProfileDefinition


class ProfileView(View):
    name: str
    definition: dict[str, Any]


def save_profile(db: Database, actor: str | None, data: NewProfile | Raw) -> Done[ProfileView]:
    """Save (or replace, by name) a column mapping profile for an instrument's exports."""
    request = parse(NewProfile, data)
    columns = request.definition.columns
    for ratio in columns.ratios:
        try:
            parse_ratio(ratio)
        except ValueError as exc:
            raise InputError("definition.columns.ratios", ratio, str(exc)) from None
    for ratio in columns.errors:
        if ratio not in columns.ratios:
            raise InputError(
                "definition.columns.errors",
                ratio,
                f"is not one of the profile's ratios ({', '.join(columns.ratios)})",
            )
    with unit_of_work(db, actor) as uow:
        row = uow.session.scalars(
            select(MappingProfile).where(MappingProfile.name == request.name)
        ).one_or_none()
        definition = request.definition.model_dump(mode="json")
        if row is None:
            row = MappingProfile(name=request.name, definition=definition, created_at=uow.now)
            uow.session.add(row)
        else:
            row.definition = definition
        return finish(
            uow,
            "profile.saved",
            "",
            {"name": request.name, "definition": definition},
            lambda: ProfileView(name=row.name, definition=row.definition),
        )


def list_profiles(db: Database) -> list[ProfileView]:
    with db.read_session() as session:
        rows = session.scalars(select(MappingProfile).order_by(MappingProfile.name))
        return [ProfileView(name=r.name, definition=r.definition) for r in rows]


def _profile(session: Session, name: str) -> ProfileDefinition:
    row = session.scalars(
        select(MappingProfile).where(func.lower(MappingProfile.name) == name.lower())
    ).one_or_none()
    if row is None:
        raise NotFound("profile", name, "no saved profile has this name")
    return ProfileDefinition.model_validate(row.definition)


class ImportSession(Request):
    profile: Name
    filename: Annotated[str, Field(min_length=1, max_length=255)]
    content: Annotated[bytes, Field(min_length=1)]
    name: Name
    instrument: Name
    element: Element
    bracketing_standard: Name
    mode: Literal["delta", "ratio"] = "delta"
    standard_values: dict[str, float] = Field(default_factory=dict)  # ratio mode only
    started_at: AwareDatetime | None = None


class UnmatchedRow(View):
    row: int
    run_order: int
    sample_name: str
    reason: str


class SessionView(View):
    id: str
    name: str
    measurements: int
    standards: int
    samples: int
    references: int
    blanks: int
    unmatched: list[UnmatchedRow]


def import_session(db: Database, actor: str | None, data: ImportSession | Raw) -> Done[SessionView]:
    """Read an instrument export through a saved profile into a new session.

    The export is read and every row checked through the profile before the writer
    lock is taken; inside it, rows are matched to what the database holds and written.
    """
    request = parse(ImportSession, data)
    with db.read_session() as session:
        profile = _profile(session, request.profile)
    rows = _checked_rows(request, profile)
    with unit_of_work(db, actor, "import instrument session") as uow:
        current = _profile(uow.session, request.profile)
        if current != profile:  # saved anew meanwhile: read the export as it says now
            profile, rows = current, _checked_rows(request, current)
        with in_file(request.filename), uow.session.no_autoflush:
            return _import(uow, request, profile, rows)


def _checked_rows(request: ImportSession, profile: ProfileDefinition) -> list[_Run]:
    """The export read through the profile, every row checked: no database needed."""
    with in_file(request.filename):
        _require_standard_values(request, profile)
        return _read(request, profile)


def _import(
    uow: UnitOfWork, request: ImportSession, profile: ProfileDefinition, rows: list[_Run]
) -> Done[SessionView]:
    """The import proper, inside the caller's unit of work; the rows are checked already."""
    _refuse_repeat(uow, request)
    session = InstrumentSession(
        name=request.name,
        instrument=request.instrument,
        element=request.element,
        started_at=action_time(uow, request.started_at, "started-at"),
        operator=uow.operator.code,
        bracketing_standard=request.bracketing_standard,
        mode=request.mode,
        ratio_names=list(profile.columns.ratios),
        standard_values=request.standard_values,
        source_filename=request.filename,
        source_sha256=hashlib.sha256(request.content).hexdigest(),
        profile_name=request.profile,
        flags=[],
        created_at=uow.now,
    )
    uow.session.add(session)
    matcher = Matcher(uow.session, request.bracketing_standard, request.element)
    matcher.look_up([run.label or run.name for run in rows])
    measurements: list[Measurement] = []
    unmatched: list[UnmatchedRow] = []
    for run in rows:
        measurement = Measurement(
            session=session,
            run_order=run.run,
            sample_name=run.name,
            created_at=uow.now,
            ratios=run.ratios,
            errors=run.errors,
        )
        uow.session.add(measurement)
        measurements.append(measurement)
        reason = matcher.assign(measurement, run.label or run.name)
        if reason:
            unmatched.append(
                UnmatchedRow(row=run.row, run_order=run.run, sample_name=run.name, reason=reason)
            )
    require_brackets(measurements, {r.run: r.row for r in rows}, profile.columns.sample_name)
    not_before("started-at", session.started_at, _columns_measured(uow, measurements))
    view = lambda: _view(session, measurements, unmatched)  # noqa: E731
    payload = {
        "file": request.filename,
        "sha256": session.source_sha256,
        "profile": request.profile,
        "rows": len(rows),
        "unmatched": [u.model_dump() for u in unmatched],
    }
    return finish(uow, "session.imported", session, payload, view)


def _columns_measured(uow: UnitOfWork, measurements: list[Measurement]) -> list[Since]:
    """The column batches the session's samples and blanks came from: it starts after them."""
    cuts = {m.cut_id for m in measurements if m.cut_id is not None}
    positions = {m.position_id for m in measurements if m.position_id is not None}
    if not cuts and not positions:
        return []
    via_cuts = select(Cut.position_id).where(Cut.id.in_(cuts))
    used = select(BatchPosition.batch_id).where(
        BatchPosition.id.in_(positions) | BatchPosition.id.in_(via_cuts)
    )
    batches = uow.session.scalars(select(ColumnBatch).where(ColumnBatch.id.in_(used)))
    return [Since(f"batch {b.public_id} was performed", b.performed_on) for b in batches]


def _refuse_repeat(uow: UnitOfWork, request: ImportSession) -> None:
    """The same export imported twice would count every run twice: refuse it, by content."""
    digest = hashlib.sha256(request.content).hexdigest()
    earlier = uow.session.scalars(
        select(InstrumentSession).where(InstrumentSession.source_sha256 == digest).limit(1)
    ).first()
    if earlier is not None:
        raise RuleViolation(
            "FILE",
            request.filename,
            f"was imported already as {earlier.public_id} ({earlier.name!r}); nothing to do",
        )


def _require_standard_values(request: ImportSession, profile: ProfileDefinition) -> None:
    """Ratio mode scales every ratio to the standard's accepted value: all must be given."""
    if request.mode != "ratio":
        return
    missing = [r for r in profile.columns.ratios if r not in request.standard_values]
    if missing:
        raise InputError(
            "standard-values",
            ", ".join(missing),
            "ratio mode needs the bracketing standard's accepted value for each "
            "ratio, e.g. 87/86=0.710248",
        )


class _Run(NamedTuple):
    """One row of the export as the import keeps it: its place, run, names and numbers.

    The row's cells are let go once these are read, so a session's rows cost their
    values, not a dictionary of every cell of a wide export.
    """

    row: int
    run: int
    name: str
    label: str | None
    ratios: dict[str, float]
    errors: dict[str, float]


def _read(request: ImportSession, profile: ProfileDefinition) -> list[_Run]:
    """The rows by run order, their values read; every problem names row and column."""
    try:
        header, rows = read_table(
            request.content,
            profile.format,
            header_row=profile.header_row,
            sheet=profile.sheet,
            comment_prefix=profile.comment_prefix,
        )
        # what is wrong with the file itself before its first row (a broken sheet, rows past
        # a cap) is said first; then the profile is held against the header
        first = next(rows, None)
        _require_columns(header, profile.columns)
        seen: dict[int, int] = {}
        runs: list[_Run] = []
        for row in chain([first] if first else [], rows):
            if len(runs) == MAX_SESSION_ROWS:
                raise InputError(
                    "file",
                    request.filename,
                    f"has more than {MAX_SESSION_ROWS:,} rows of runs by row {row.number:,}; "
                    f"sessions are capped at {MAX_SESSION_ROWS:,} runs: split the export",
                )
            runs.append(_run(row, profile.columns, seen))
    except TableError as exc:
        if exc.column in ("file", "sheet"):  # the whole file, not one of its cells
            value = request.filename if exc.column == "file" else profile.sheet
            raise InputError(exc.column, value, exc.reason) from None
        raise InputError(f"row {exc.row}, column {exc.column}", None, exc.reason) from None
    return sorted(runs, key=lambda run: run.run)


def _require_columns(header: list[str], columns: ColumnMap) -> None:
    wanted = [
        columns.run_order,
        columns.sample_name,
        *columns.ratios.values(),
        *columns.errors.values(),
        *([columns.sample_id] if columns.sample_id else []),
    ]
    for name in wanted:
        if name not in header:
            raise InputError(
                "profile",
                name,
                f"names a column the file lacks; the file has: {', '.join(header)}",
            )


def _run(row: Row, columns: ColumnMap, seen: dict[int, int]) -> _Run:
    """One row read: its run number (not seen before), its names and its positive values."""
    run = _run_order(row, columns.run_order)
    if run in seen:
        raise InputError(
            f"row {row.number}, column {columns.run_order}",
            run,
            f"run number repeats row {seen[run]}",
        )
    seen[run] = row.number
    name = _text(row, columns.sample_name)  # kept with the measurement, matched or not
    label = _text(row, columns.sample_id) if columns.sample_id else None
    ratios = {ratio: _positive(row, column) for ratio, column in columns.ratios.items()}
    errors = {
        ratio: _positive(row, column, allow_zero=True) for ratio, column in columns.errors.items()
    }
    return _Run(row.number, run, name, label or None, ratios, errors)


def _text(row: Row, column: str) -> str:
    """A cell kept as text: refused, naming row and column, if it holds a hidden character."""
    return imported_text(f"row {row.number}, column {column}", row.cells.get(column, ""))


MAX_RUN = 999_999_999  # far beyond any session; keeps run numbers inside a 64-bit column
# Runs in one session. A day on a multi-collector ICP-MS is a few hundred runs, an
# autosampler's weekend a few thousand (common practice); every run becomes a measurement
# row held in the import's one transaction (a few kilobytes each), so the cap bounds it.
MAX_SESSION_ROWS = 20_000


def _run_order(row: Row, column: str) -> int:
    text = row.cells[column]
    try:
        value = float(text)
    except ValueError:
        raise InputError(
            f"row {row.number}, column {column}", text, "is not a run number"
        ) from None
    if not value.is_integer():
        raise InputError(f"row {row.number}, column {column}", text, "is not a whole number")
    if value < 0:
        raise InputError(f"row {row.number}, column {column}", text, "is below zero")
    if value > MAX_RUN:
        raise InputError(f"row {row.number}, column {column}", text, f"is beyond {MAX_RUN:,} runs")
    return int(value)


def _positive(row: Row, column: str, *, allow_zero: bool = False) -> float:
    text = row.cells.get(column, "")
    where = f"row {row.number}, column {column}"
    try:
        value = float(text)
    except ValueError:
        raise InputError(where, text, "is not a number" if text else "is empty") from None
    if not math.isfinite(value) or value < 0 or (value == 0 and not allow_zero):
        raise InputError(where, text, "a ratio must be a positive finite number")
    return value


def _view(
    session: InstrumentSession, measurements: list[Measurement], unmatched: list[UnmatchedRow]
) -> SessionView:
    roles = [m.role for m in measurements]
    return SessionView(
        id=session.public_id,
        name=session.name,
        measurements=len(roles),
        standards=roles.count(MeasurementRole.STANDARD),
        samples=roles.count(MeasurementRole.SAMPLE),
        references=roles.count(MeasurementRole.REFERENCE),
        blanks=roles.count(MeasurementRole.BLANK),
        unmatched=unmatched,
    )


class DriftSeries(View):
    """The bracketing standard over a session: run numbers and each ratio's values."""

    session: str
    name: str
    standard: str
    runs: list[int]
    ratios: dict[str, list[float]]


def standard_drift(db: Database, session_ref: str) -> DriftSeries:
    with db.read_session() as session:
        from tracker.services.core.lookup import get_by_id

        row = get_by_id(session, InstrumentSession, "session", session_ref)
        standards = [
            m
            for m in row.measurements
            if m.role is MeasurementRole.STANDARD and m.excluded_reason is None
        ]
        return DriftSeries(
            session=row.public_id,
            name=row.name,
            standard=row.bracketing_standard,
            runs=[m.run_order for m in standards],
            ratios={r: [float(m.ratios[r]) for m in standards] for r in row.ratio_names},
        )
