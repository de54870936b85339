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
import math
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import PurePath
from typing import Annotated, Any

from pydantic import Field

from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation, TrackerError, at_cell
from tracker.domain.models import (
    BatchPosition,
    ColumnBatch,
    Cut,
    PositionKind,
)
from tracker.domain.tables import Row, TableError, read_table
from tracker.domain.units import UnitError, mass_to_mg
from tracker.services.chemistry import AddPosition, place
from tracker.services.columns import RecordCut, collect
from tracker.services.common import finish
from tracker.services.inputs import Raw, Request, parse
from tracker.services.label_queue import queue_label
from tracker.services.lookup import get_by_id
from tracker.services.uow import UnitOfWork, unit_of_work
from tracker.services.views import Done, View

FORMATS = {".csv": "csv", ".tsv": "tsv", ".txt": "tsv", ".xlsx": "xlsx"}
FIXED = ("slot", "kind", "item", "loaded")
MAX_SLOT = 10_000  # columns in one batch: far beyond any rack of columns
# Where a refusal from the position and cut rules points on the sheet.
_COLUMN_OF = {"aliquot": "item", "reference-material": "item", "loaded-ug": "loaded"}


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
    """Add every column and cut a batch sheet lists that is not entered yet."""
    request = parse(EnterSheet, data)
    rows = _read(request)
    with unit_of_work(db, actor) as uow:
        batch = get_by_id(uow.session, ColumnBatch, "batch", request.batch)
        sheet = _Sheet(uow, batch, request.filename)
        sheet.check_columns(rows[0])
        for row in rows[1]:
            sheet.enter(row)
        if not sheet.new_items:
            raise RuleViolation(
                "FILE", request.filename, f"every row is already entered in {batch.public_id}"
            )
        uow.session.flush()  # the new positions and cuts get their IDs before the event
        payload = {
            "file": request.filename,
            "sha256": hashlib.sha256(request.content).hexdigest(),
            "rows": len(rows[1]),
            "added": sheet.added_with_ids(),
            "already_entered": sheet.skipped,
        }
        uow.mention(*(item.public_id for item in sheet.new_items))  # their histories show it
        view = SheetView(
            batch=batch.public_id,
            rows=len(rows[1]),
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


class _Sheet:
    """One sheet being entered into one batch, row by row, inside one unit of work."""

    def __init__(self, uow: UnitOfWork, batch: ColumnBatch, filename: str) -> None:
        self.uow, self.batch, self.filename = uow, batch, filename
        self.cuts = {name.lower(): name for name in batch.cut_names}
        self.new_items: list[BatchPosition | Cut] = []
        self.added: list[dict[str, Any]] = []
        self.skipped = 0
        self.rows_of: dict[int, int] = {}  # slot -> the row of this sheet that lists it

    def check_columns(self, header: list[str]) -> None:
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
                    f"{self.batch.public_id}: {', '.join(self.batch.cut_names)})",
                )

    @contextmanager
    def cell(self, row: Row, column: str) -> Iterator[None]:
        """Refusals from the shared rules name this file, row and column instead."""
        try:
            yield
        except TrackerError as error:
            where = _COLUMN_OF.get(error.field, column)
            error.field = at_cell(self.filename, row.number, where)
            raise

    def enter(self, row: Row) -> None:
        position = self._position(row)
        for key, name in self.cuts.items():
            if row.cells.get(key, ""):
                self._cut(row, position, key, name)

    def _position(self, row: Row) -> BatchPosition:
        slot_text, kind_text = row.cells.get("slot", ""), row.cells.get("kind", "").lower()
        with self.cell(row, "slot"):
            slot = _slot(slot_text)
            if slot in self.rows_of:
                raise InputError(
                    "slot", slot_text, f"column {slot} is listed on row {self.rows_of[slot]} too"
                )
        self.rows_of[slot] = row.number
        with self.cell(row, "kind"):
            if kind_text not in {k.value for k in PositionKind}:
                raise InputError("kind", kind_text, "is not sample, blank or reference")
        kind = PositionKind(kind_text)
        item, loaded = row.cells.get("item", ""), row.cells.get("loaded", "")
        existing = next((p for p in self.batch.positions if p.slot == slot), None)
        if existing is not None:
            with self.cell(row, "item"):
                _same_position(existing, kind, item)
            self.skipped += 1
            return existing
        following = 1 + max((p.slot for p in self.batch.positions), default=0)
        if slot != following:
            raise InputError(
                at_cell(self.filename, row.number, "slot"),
                slot_text,
                f"column {following} is the next one to enter; list columns in order",
            )
        with self.cell(row, "item"):
            request = parse(
                AddPosition,
                {
                    "batch": self.batch.public_id,
                    "kind": kind,
                    "aliquot": item or None if kind is PositionKind.SAMPLE else None,
                    "reference_material": item or None if kind is PositionKind.REFERENCE else None,
                    "loaded_ug": _micrograms(loaded) if loaded else None,
                },
            )
            position, holds = place(self.uow, self.batch, slot, request)
            self.uow.session.flush()  # its ID names it to its cuts
        self.new_items.append(position)
        self.added.append(
            {
                "slot": slot,
                "kind": kind.value,
                "holds": holds,
                "loaded_ug": position.loaded_ug,
                "label": queue_label(self.uow, position),
            }
        )
        return position

    def _cut(self, row: Row, position: BatchPosition, key: str, name: str) -> None:
        text, u_text = row.cells[key], row.cells.get(f"{key} u", "") or None
        with self.cell(row, name):
            request = parse(
                RecordCut,
                {
                    "position": position.public_id,
                    "cut": name,
                    "recovered": text,
                    "uncertainty": u_text,
                },
            )
            existing = next((c for c in position.cuts if c.name == name), None)
            if existing is not None:
                _same_cut(existing, request)
                self.skipped += 1
                return
            cut = collect(self.uow, position, request)
        self.new_items.append(cut)
        self.added.append(
            {
                "slot": position.slot,
                "cut": name,
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
    holds = (
        position.aliquot.public_id
        if position.aliquot
        else position.reference_material.name
        if position.reference_material
        else ""
    )
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
    wanted = None if amount is None else amount.value
    same = (wanted is None and cut.recovered_ug is None) or (
        wanted is not None
        and cut.recovered_ug is not None
        and math.isclose(wanted, cut.recovered_ug, rel_tol=1e-12, abs_tol=1e-12)
    )
    if not same:
        raise RuleViolation(
            "cut",
            request.cut,
            f"of column {cut.position.slot} is recorded as {cut.recovered_ug} µg; "
            f"fix it with `tracker correct recovery {cut.public_id}`",
        )
