"""Entering a column batch from a sheet: every position and cut in one transaction.

The sheet (CSV, TSV or XLSX) has one row per column of the batch: ``slot``, ``kind``
(sample, blank or reference), ``item`` (the aliquot's ID, or the reference material's
name), ``loaded`` (element loaded, for reference materials, with unit) and, for each
cut of the batch, a column named like the cut holding what it recovered (with unit)
and optionally ``<cut> u``, its standard uncertainty (with unit).

Entering is all or nothing, and repeatable: rows already entered exactly as on the
sheet are passed over, so entering the same sheet again after an interruption (or a
crash) completes it, and entering it once more changes nothing and says so. A row
that disagrees with what is entered is refused: fix that with a correction.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterator
from contextlib import contextmanager, suppress
from dataclasses import dataclass
from pathlib import PurePath
from typing import Annotated, Any

from pydantic import Field
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation, TrackerError, at_cell
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    Cut,
    PositionKind,
    Solution,
)
from tracker.domain.spreadsheets import Row, TableError, read_table
from tracker.domain.units import UnitError, mass_to_mg
from tracker.services.bench.chemistry import AddPosition, Holding, holding, place
from tracker.services.bench.columns import RecordCut, collect, held_by
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_by_id, prefix_for, read_id
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import Done, View

FORMATS = {".csv": "csv", ".tsv": "tsv", ".txt": "tsv", ".xlsx": "xlsx"}
FIXED = ("slot", "kind", "item", "loaded")
MAX_SLOT = 10_000  # columns in one batch: far beyond any rack of columns
# Where a refusal from the position and cut rules points on the sheet.
_COLUMN_OF = {"aliquot": "item", "reference-material": "item", "loaded-ug": "loaded"}
_CHUNK = 500  # IDs per IN (...) list: well inside every backend's limit on parameters


class EnterSheet(Request):
    batch: str
    filename: Annotated[str, Field(min_length=1, max_length=255)]
    content: Annotated[bytes, Field(min_length=1)]


class SheetView(View):
    batch: str
    rows: int
    positions_added: list[str]
    cuts_added: list[str]
    already_entered: int


def enter_sheet(db: Database, actor: str | None, data: EnterSheet | Raw) -> Done[SheetView]:
    """Add every column and cut a batch sheet lists that is not entered yet.

    The whole sheet is read and every cell checked before the writer lock is taken;
    inside it only what depends on the batch as it stands is checked and written.
    """
    request = parse(EnterSheet, data)
    return _enter(db, actor, request)


def _enter(db: Database, actor: str | None, request: EnterSheet) -> Done[SheetView]:
    header, rows = _read(request)
    batch_id, cuts = _cut_names(db, request.batch)
    lines = _Reading(request.filename, batch_id, cuts).lines(header, rows)
    with unit_of_work(db, actor, "enter batch sheet") as uow:
        batch = get_by_id(uow.session, ColumnBatch, "batch", request.batch)
        sheet = _Sheet(uow, batch, request.filename)
        with uow.session.no_autoflush:  # one flush at the end, not one per lookup
            sheet.look_up(lines)
            for line in lines:
                sheet.enter(line)
        if not sheet.new_items:
            raise RuleViolation(
                "FILE", request.filename, f"every row is already entered in {batch.public_id}"
            )
        uow.session.flush()  # the new positions and cuts get their IDs before the event
        payload = {
            "file": request.filename,
            "sha256": hashlib.sha256(request.content).hexdigest(),
            "rows": len(rows),
            "added": sheet.added_with_ids(),
            "already_entered": sheet.skipped,
        }
        uow.mention(*(item.public_id for item in sheet.new_items))  # their histories show it
        view = SheetView(
            batch=batch.public_id,
            rows=len(rows),
            already_entered=sheet.skipped,
            positions_added=sheet.ids(BatchPosition),
            cuts_added=sheet.ids(Cut),
        )
        return finish(uow, "batch.sheet_entered", batch, payload, lambda: view)


def _read(request: EnterSheet) -> tuple[list[str], list[Row]]:
    fmt = FORMATS.get(PurePath(request.filename).suffix.lower())
    if fmt is None:
        raise InputError("FILE", request.filename, "name the sheet .csv, .tsv or .xlsx")
    try:
        header, rows = read_table(request.content, fmt)
        # each row keeps only its filled cells (a blank reads as "" all the same), by the
        # lower-case heading: a wide sheet's empty columns cost nothing once read
        kept: list[Row] = []
        for row in rows:
            if len(kept) == MAX_SLOT:  # every row names its own column: the rest cannot fit
                raise InputError(
                    "FILE",
                    request.filename,
                    f"lists more than {MAX_SLOT:,} rows by row {row.number:,}; a batch holds "
                    f"at most {MAX_SLOT:,} columns",
                )
            kept.append(Row(row.number, {k.lower(): v for k, v in row.cells.items() if v}))
    except TableError as exc:
        if exc.column == "file":  # the whole file, not one of its cells
            raise InputError("FILE", request.filename, exc.reason) from None
        raise InputError(at_cell(request.filename, exc.row, exc.column), None, exc.reason) from None
    if not kept:
        raise InputError("FILE", request.filename, "lists no columns below its header")
    return [h.lower() for h in header], kept


def _cut_names(db: Database, batch: str) -> tuple[str, list[str]]:
    """The batch's ID and cuts, which say what the sheet's columns are (fixed at its making)."""
    with db.read_session() as session:
        row = get_by_id(session, ColumnBatch, "batch", batch)
        return row.public_id, list(row.cut_names)


@contextmanager
def _cell(filename: str, row: int, column: str) -> Iterator[None]:
    """Refusals from the shared rules name this file, row and column instead."""
    try:
        yield
    except TrackerError as error:
        where = _COLUMN_OF.get(error.field, column)
        error.field = at_cell(filename, row, where)
        raise


@dataclass(frozen=True)
class _Line:
    """One row of the sheet, every cell read and checked: what it would enter."""

    row: int
    slot: int
    slot_text: str
    item: str
    position: AddPosition
    cuts: list[RecordCut]  # named as the batch names them; the column is found inside


class _Reading:
    """The sheet's rows checked on their own, before any lock: the file's part of the rules."""

    def __init__(self, filename: str, batch: str, cut_names: list[str]) -> None:
        self.filename, self.batch = filename, batch
        self.cuts = {name.lower(): name for name in cut_names}
        self.rows_of: dict[int, int] = {}  # slot -> the row of this sheet that lists it

    def lines(self, header: list[str], rows: list[Row]) -> list[_Line]:
        self._check_columns(header)
        return [self._line(row) for row in rows]

    def _check_columns(self, header: list[str]) -> None:
        known = {*FIXED, *self.cuts, *(f"{c} u" for c in self.cuts)}
        for required in ("slot", "kind"):
            if required not in header:
                raise InputError(at_cell(self.filename, 1, required), None, "the sheet lacks it")
        for name in header:
            if name not in known:
                raise InputError(
                    at_cell(self.filename, 1, name),
                    None,
                    f"is not a batch sheet column (slot, kind, item, loaded, and the cuts of "
                    f"{self.batch}: {', '.join(self.cuts.values())})",
                )

    def _line(self, row: Row) -> _Line:
        slot_text, kind_text = row.cells.get("slot", ""), row.cells.get("kind", "").lower()
        with _cell(self.filename, row.number, "slot"):
            slot = _slot(slot_text)
            if slot in self.rows_of:
                raise InputError(
                    "slot", slot_text, f"column {slot} is listed on row {self.rows_of[slot]} too"
                )
        self.rows_of[slot] = row.number
        with _cell(self.filename, row.number, "kind"):
            if kind_text not in {k.value for k in PositionKind}:
                raise InputError("kind", kind_text, "is not sample, blank or reference")
        kind = PositionKind(kind_text)
        item, loaded = row.cells.get("item", ""), row.cells.get("loaded", "")
        with _cell(self.filename, row.number, "item"):
            position = parse(
                AddPosition,
                {
                    "batch": "",  # the batch is the sheet's; it is looked up once, inside
                    "kind": kind,
                    "aliquot": item or None if kind is PositionKind.SAMPLE else None,
                    "reference_material": item or None if kind is PositionKind.REFERENCE else None,
                    "loaded_ug": _micrograms(loaded) if loaded else None,
                },
            )
        cuts = [
            self._cut(row, key, name) for key, name in self.cuts.items() if row.cells.get(key, "")
        ]
        return _Line(row.number, slot, slot_text, item, position, cuts)

    def _cut(self, row: Row, key: str, name: str) -> RecordCut:
        text, u_text = row.cells[key], row.cells.get(f"{key} u", "") or None
        with _cell(self.filename, row.number, name):
            return parse(
                RecordCut,
                {
                    "position": "",  # the row's column: made or found inside the unit of work
                    "cut": name,
                    "recovered": text,
                    "uncertainty": u_text,
                },
            )


class _Sheet:
    """One checked sheet being entered into one batch, inside one unit of work."""

    def __init__(self, uow: UnitOfWork, batch: ColumnBatch, filename: str) -> None:
        self.uow, self.batch, self.filename = uow, batch, filename
        entered = _positions(uow.session, batch)
        self.positions = {p.slot: p for p in entered if p.in_batch}
        self.following = 1 + max(self.positions, default=0)
        # slots freed by columns removed as scanned by mistake: a sheet may fill them again
        self.freed = {p.slot for p in entered if not p.in_batch} - set(self.positions)
        self.holdings: dict[tuple[str, str], Holding] = {}
        self.new_items: list[BatchPosition | Cut] = []
        self.added: list[dict[str, Any]] = []
        self.skipped = 0

    def look_up(self, lines: list[_Line]) -> None:
        """Load every aliquot the new rows name in a few statements, with what the rules read.

        ``place`` then finds each in the session (no statement per row); a name or ID that
        is not there is looked up on its own, and refused by the shared lookup.
        """
        wanted: set[int] = set()
        for line in lines:
            text = line.position.aliquot
            if text and line.slot not in self.positions:
                with suppress(TrackerError):  # refused, with its row, when it is entered
                    wanted.add(read_id("aliquot", text, prefix_for(self.uow.session, text)).number)
        ordered = sorted(wanted)
        for start in range(0, len(ordered), _CHUNK):
            self.uow.session.scalars(
                select(Aliquot)
                .where(Aliquot.id.in_(ordered[start : start + _CHUNK]))
                .options(
                    selectinload(Aliquot.positions),
                    selectinload(Aliquot.solution).selectinload(Solution.concentrations),
                )
            ).all()

    def enter(self, line: _Line) -> None:
        position = self._position(line)
        for cut in line.cuts:
            self._cut(line, position, cut)

    def _position(self, line: _Line) -> BatchPosition:
        existing = self.positions.get(line.slot)
        if existing is not None:
            with _cell(self.filename, line.row, "item"):
                _same_position(existing, line.position.kind, line.item)
            self.skipped += 1
            return existing
        if line.slot != self.following and line.slot not in self.freed:
            raise InputError(
                at_cell(self.filename, line.row, "slot"),
                line.slot_text,
                f"column {self.following} is the next one to enter; list columns in order",
            )
        with _cell(self.filename, line.row, "item"):
            position, holds = place(
                self.uow, self.batch, line.slot, line.position, self._holding(line.position)
            )
        self.positions[line.slot] = position
        if line.slot == self.following:
            self.following += 1
        self.freed.discard(line.slot)
        self.new_items.append(position)
        self.added.append(
            {
                "slot": line.slot,
                "kind": line.position.kind.value,
                "holds": holds,
                "loaded_ug": position.loaded_ug,
                "label": queue_label(self.uow, position),
            }
        )
        return position

    def _holding(self, request: AddPosition) -> Holding:
        """The shared lookup, once per distinct item (a sheet names one material many times)."""
        key = (request.aliquot or "", request.reference_material or "")
        if key not in self.holdings:
            self.holdings[key] = holding(self.uow.session, request)
        return self.holdings[key]

    def _cut(self, line: _Line, position: BatchPosition, request: RecordCut) -> None:
        with _cell(self.filename, line.row, request.cut):
            existing = next((c for c in position.cuts if c.name == request.cut), None)
            if existing is not None:
                _same_cut(existing, request)
                self.skipped += 1
                return
            cut = collect(self.uow, position, request)
        self.new_items.append(cut)
        self.added.append(
            {
                "slot": position.slot,
                "cut": request.cut,
                "recovered_ug": cut.recovered_ug,
                "recovered_u_ug": cut.recovered_u_ug,
                "label": queue_label(self.uow, cut),
            }
        )

    def ids(self, kind: type[BatchPosition] | type[Cut]) -> list[str]:
        return [item.public_id for item in self.new_items if isinstance(item, kind)]

    def added_with_ids(self) -> list[dict[str, Any]]:
        return [
            {"id": item.public_id, **entry}
            for entry, item in zip(self.added, self.new_items, strict=True)
        ]


def _positions(session: Session, batch: ColumnBatch) -> list[BatchPosition]:
    """The batch's columns as entered, with what a repeated sheet compares them with."""
    return list(
        session.scalars(
            select(BatchPosition)
            .where(BatchPosition.batch_id == batch.id)
            .options(
                selectinload(BatchPosition.cuts),
                selectinload(BatchPosition.aliquot),
                selectinload(BatchPosition.reference_material),
            )
        )
    )


def _slot(text: str) -> int:
    if not text.isdigit() or not 1 <= int(text) <= MAX_SLOT:
        raise InputError("slot", text, "is not a column number (1, 2, 3 ...)")
    return int(text)


def _micrograms(text: str) -> float:
    try:
        return float(mass_to_mg(text)) * 1000
    except UnitError as exc:
        raise InputError("loaded-ug", text, str(exc)) from None


def _same_position(position: BatchPosition, kind: PositionKind, item: str) -> None:
    holds = held_by(position) or ""
    same_item = item.replace("-", "").upper() == holds.replace("-", "").upper()
    if position.kind is not kind or not same_item:
        raise RuleViolation(
            "item",
            item or kind.value,
            f"column {position.slot} already holds {position.kind.value} {holds}".rstrip()
            + "; a sheet cannot change it",
        )


def _same_cut(cut: Cut, request: RecordCut) -> None:
    amount = request.recovered_ug()
    wanted = None if amount is None else amount[0]
    same = wanted == cut.recovered_ug  # exact values: the same typed amount, or none
    if not same:
        raise RuleViolation(
            "cut",
            request.cut,
            f"of column {cut.position.slot} is recorded as {cut.recovered_ug} µg; "
            f"a correction of {cut.public_id}'s recovery changes it",
        )
