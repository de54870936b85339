"""Checking a lender's manifest row by row, in one pass that both previews and prepares.

The preview a person reads and the rows an import writes come from the same pass: each
row is checked once, and a clean row's specimen columns are validated once (a slice of
rows in one call, by the same model `specimen add` uses) and kept for the write. Rows
arrive as the file is read and are let go once checked, so memory follows what a write
needs, not the file's cells. Nothing here touches the database: :func:`check_file` needs
only the file (an import runs it before taking the writer lock); :func:`compare` is handed
a way to find the loan's specimens that a slice of rows names.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from datetime import date
from functools import lru_cache
from itertools import islice
from typing import Any, Literal, TypeVar

from pydantic import Field, TypeAdapter, ValidationError

from tracker.domain.chronostrat import TERM_PAIRS, name_problem, range_problem
from tracker.domain.darwincore import extra_terms_problem
from tracker.domain.dwc_dates import DateProblem, read_date
from tracker.domain.formula_cells import FORMULA_MARK, is_formula_cell, looks_like_formula
from tracker.domain.models import Specimen
from tracker.domain.spreadsheets import Row
from tracker.domain.text_rules import TextProblem, accept, nfc
from tracker.services.core.inputs import TextRefused, plain_reason
from tracker.services.core.views import View
from tracker.services.loans.manifest_terms import (
    DATE_TERMS,
    NUMBER_TERMS,
    OWN_FIELDS,
    REQUIRED,
    STRICT_DATE_TERMS,
    TERM_FIELDS,
    outside,
)
from tracker.services.loans.specimens import NewSpecimen

# A refusal of a specimen field's text names the file's column it came from.
_COLUMN_OF_FIELD = {
    field.replace("_", "-"): term for term, field in {**TERM_FIELDS, **OWN_FIELDS}.items()
}

# All clean rows validated in one call instead of one call (and one error path) per row.
_SPECIMENS = TypeAdapter(list[NewSpecimen])
# A row's specimen columns, validated, in the file's column order; "extra" packed (`unpacked`).
Fields = dict[str, Any]


class RowResult(View):
    row: int
    catalog_number: str | None
    action: Literal["create", "update", "unchanged", "error"]
    problems: list[str]
    changes: dict[str, list[Any]] = Field(default_factory=dict)
    # what the row keeps as typed but does not read as the standard has it (a legacy date)
    warnings: list[str] = Field(default_factory=list)

    def detail(self) -> str:
        """The row as a preview says it: its problems, or its changes; then any warnings."""
        said = "; ".join(self.problems) or "; ".join(
            f"{field}: {old!r} → {new!r}" for field, (old, new) in self.changes.items()
        )
        warned = "; ".join(f"warning: {warning}" for warning in self.warnings)
        return "; ".join(part for part in (said, warned) if part)


def header_problems(header: list[str]) -> list[str]:
    """Problems with the file as a whole, repeated on every row so no row looks clean."""
    found = [
        f"heading {h[:30]!r} looks like a spreadsheet formula"
        for h in header
        if looks_like_formula(h)
    ]
    seen: set[str] = set()
    for heading in header:
        try:
            kept = accept(heading)
        except TextProblem as problem:
            found.append(f"heading {problem.shown!r} {problem.reason}")
            continue
        if kept in seen:
            found.append(f"heading {kept!r} is written twice (composed two ways, NFC)")
        seen.add(kept)
    if REQUIRED not in header:
        found.append(f"no {REQUIRED} column (Darwin Core term); headings are: {', '.join(header)}")
    return found


T = TypeVar("T")
# Rows are checked a slice at a time, each slice as a whole (the bulk checks below), and
# then let go: a slice holds about this many cells, whatever the file's width.
SLICE_CELLS = 50_000
Find = Callable[[list[str]], Mapping[str, Specimen]]  # catalogue numbers -> the loan's specimens


@dataclass(frozen=True)
class CheckedRow:
    """One row checked on its own: its problems, or its validated specimen columns."""

    number: int
    catalog: str
    problems: list[str]
    fields: Fields | None  # None for a row with problems
    warnings: list[str]


@dataclass(frozen=True)
class Compared:
    """The checked rows held against the loan: the preview's results and what a write needs."""

    results: list[RowResult]
    fields: dict[int, Fields]  # row number -> validated columns, for rows that write
    updates: dict[str, Specimen]  # catalogue number -> the loan's specimen a row changes


def check_file(
    header: list[str],
    rows: Iterable[Row],
    file_problem: list[str],
    today: date,
    *,
    workbook: bool,
) -> list[CheckedRow]:
    """Every row checked against the file alone (no database): run before any lock.

    Rows are taken a slice at a time; a clean row's specimen columns are validated with
    its slice in one call, by the model `specimen add` uses, and only they are kept.
    :func:`compare` then says what each clean row changes. ``today`` is the last day a
    date may start on.

    Text is kept as typed: a locality "- 5 km N of the ford", a collector "@team", a
    telephone "+44 ..." or "=sum" are text, made safe only when exported (see
    `tracker.output.tabular`). Only a ``workbook``'s formula cells are reported (read
    as FORMULA_MARK and the formula, `tracker.domain.workbooks`): their value is a
    calculation the file does not hold, not text a person typed.
    """
    columns = _Columns.of(header, today, workbook)
    seen: dict[str, int] = {}
    checked: list[CheckedRow] = []
    for chunk in slices(rows, rows_per_slice(len(header))):
        checked += _check_slice(chunk, columns, seen, file_problem)
    return checked


def rows_per_slice(columns: int) -> int:
    """How many rows of this width make a slice of about SLICE_CELLS cells (at least one)."""
    return max(1, SLICE_CELLS // max(1, columns))


def slices(items: Iterable[T], size: int) -> Iterator[list[T]]:
    """``items`` in lists of ``size`` (the last one shorter), read as they are used."""
    iterator = iter(items)
    while chunk := list(islice(iterator, size)):
        yield chunk


def _check_slice(
    rows: list[Row], columns: _Columns, seen: dict[str, int], file_problem: list[str]
) -> list[CheckedRow]:
    """One slice of rows checked together; each clean row keeps its validated columns."""
    warned: list[list[str]] = [[] for _ in rows]
    if file_problem or not _cells_all_read(rows, columns):
        found = [
            _first_checks(row, seen, file_problem, columns, warnings)
            for row, warnings in zip(rows, warned, strict=True)
        ]
    else:  # the common case: only a catalogue number can still be wrong
        found = [_catalog_problems(row, seen, []) for row in rows]
    if columns.chrono:
        for row, problems, warnings in zip(rows, found, warned, strict=True):
            _chrono_checks(row.cells, columns.chrono, problems, warnings)
    clean = [n for n, problems in enumerate(found) if not problems]
    validated = _validate(columns, [rows[n] for n in clean])
    fields: dict[int, Fields] = {}
    for n, (values, problem) in zip(clean, validated, strict=True):
        if problem is None:
            fields[n] = values
        else:
            found[n].append(problem)
    return [
        CheckedRow(
            row.number,
            nfc(row.cells.get(REQUIRED, "").strip()),
            problems,
            fields.get(n),
            warned[n],
        )
        for n, (row, problems) in enumerate(zip(rows, found, strict=True))
    ]


def compare(checked: list[CheckedRow], find: Find, size: int) -> Compared:
    """Every row's result for the preview, against the loan's specimens as they stand.

    ``find`` gives the loan's specimens among a slice's catalogue numbers, so only those
    are ever loaded; rows with problems or nothing to change have no ``fields``.
    """
    compared = Compared([], {}, {})
    for chunk in slices(checked, size):
        existing = find([row.catalog for row in chunk if row.fields is not None])
        results = []
        for row in chunk:
            result = _result(row, existing)
            if result["action"] in ("create", "update") and row.fields is not None:
                compared.fields[row.number] = row.fields
            if result["action"] == "update":
                compared.updates[row.catalog] = existing[row.catalog]
            results.append(result)
        compared.results.extend(_ROW_RESULTS.validate_python(results))
    return compared


@dataclass(frozen=True)
class _Columns:
    """How a file's columns are read, worked out once: every row has the same ones.

    Cells arrive stripped (`read_table` strips every cell), so none is stripped again.
    """

    typed: list[tuple[str, bool]]  # (term, is a date) for dates and numbers, in file order
    texts: list[tuple[str, str]]  # Darwin Core term -> specimen column
    ages: list[tuple[str, str]]  # tracker's numeric age heading -> specimen column
    extras: list[str]  # any other heading: kept with the specimen when not blank
    keys: list[str]  # the specimen columns the file has: "extra", then in file order
    today: date  # the last day a date may start on
    chrono: list[str]  # the Darwin Core terms naming chart units that the file has
    formulas: bool  # whether a cell starting like a formula is a problem (workbooks only)

    @classmethod
    def of(cls, terms: list[str], today: date, workbook: bool) -> _Columns:
        return cls(
            typed=[(t, t in DATE_TERMS) for t in terms if t in DATE_TERMS or t in NUMBER_TERMS],
            texts=[(t, TERM_FIELDS[t]) for t in terms if t in TERM_FIELDS],
            ages=[(t, OWN_FIELDS[t]) for t in terms if t in OWN_FIELDS],
            extras=[t for t in terms if t not in TERM_FIELDS and t not in OWN_FIELDS],
            keys=[
                "extra",
                *(
                    TERM_FIELDS.get(t) or OWN_FIELDS[t]
                    for t in terms
                    if t in TERM_FIELDS or t in OWN_FIELDS
                ),
            ],
            today=today,
            chrono=[t for t in terms if t in _CHRONO_TERMS],
            formulas=workbook,
        )


def _first_checks(
    row: Row,
    seen: dict[str, int],
    file_problem: list[str],
    columns: _Columns,
    warnings: list[str],
) -> list[str]:
    """The problems a row's cells show before its columns are validated as a specimen.

    Only a row in which some cell was a workbook's formula needs every cell looked at;
    in any other row only the dates and numbers can be wrong, and only a date or
    number that does not read is looked at again to say why. What the row keeps as
    typed although it does not read (a legacy date) is added to ``warnings``.
    """
    problems = list(file_problem)
    cells = row.cells
    if columns.formulas and FORMULA_MARK in "".join(cells.values()):
        for term, value in cells.items():
            problems += _cell_problems(term, value)
    for term, is_date in columns.typed:
        value = cells[term]
        if value and not _reads(term, value, is_date, columns.today):
            said = _typed_problem(term, value, is_date, columns.today)
            unreadable = is_date and term not in STRICT_DATE_TERMS and said.endswith(_KEPT)
            (warnings if unreadable else problems).append(said)
    return _catalog_problems(row, seen, problems)


def _catalog_problems(row: Row, seen: dict[str, int], problems: list[str]) -> list[str]:
    """``problems`` with the row's catalogue number's own added: empty, or seen before.

    Numbers are compared in NFC, as they are kept: the same letters composed differently
    are the same number.
    """
    catalog = nfc(row.cells.get(REQUIRED, "").strip())
    if REQUIRED in row.cells and not catalog:
        problems.append(f"{REQUIRED} is empty")
    elif catalog and catalog in seen:
        problems.append(f"{REQUIRED} {catalog!r} repeats row {seen[catalog]}")
    elif catalog:
        seen[catalog] = row.number
    return problems


def _cells_all_read(rows: list[Row], columns: _Columns) -> bool:
    """True when every date and number reads (and, in a workbook, no cell was a formula).

    Checked column by column over the whole file, so that a clean file (the usual one)
    needs no cell-by-cell look; a file where this is False is checked row by row.
    """
    if columns.formulas and FORMULA_MARK in "".join(["".join(r.cells.values()) for r in rows]):
        return False
    return all(
        _column_reads(term, [row.cells[term] for row in rows], is_date, columns.today)
        for term, is_date in columns.typed
    )


def _column_reads(term: str, values: list[str], is_date: bool, today: date) -> bool:
    """Whether every filled cell of a date or number column reads as one (a number within
    its term's range)."""
    filled = [value for value in values if value]
    try:
        if is_date:
            [read_date(value, today) for value in filled]
            return True
        numbers = list(map(float, filled))
    except ValueError:  # DateProblem is one
        return False
    return not any(outside(term, number) for number in numbers)


def _reads(term: str, value: str, is_date: bool, today: date) -> bool:
    """Whether a (stripped) cell reads as the date or number its column holds."""
    try:
        if is_date:
            read_date(value, today)
            return True
        return outside(term, float(value)) is None
    except ValueError:
        return False


# The chronostratigraphic terms: a name the chart does not have is kept as typed with a
# warning (tracker computes with none of them: they are stored and exported as given);
# an earliest unit wholly after its latest is refused, since the pair contradicts itself.
_CHRONO_TERMS = frozenset(term for pair in TERM_PAIRS for term in pair[:2])


def _chrono_checks(
    cells: dict[str, str], present: list[str], problems: list[str], warnings: list[str]
) -> None:
    """A row's chart names checked: unknown ones warned of, a reversed pair a problem."""
    for term in present:
        said = _chart_warning(term, cells[term]) if cells[term] else None
        if said is not None:
            warnings.append(said)
    for earliest, latest, _ in TERM_PAIRS:
        if cells.get(earliest) and cells.get(latest):
            said = range_problem(cells[earliest], cells[latest])
            if said is not None:
                problems.append(f"columns {earliest} and {latest}: {said}")


@lru_cache(maxsize=1024)  # one text for a name every row repeats, held once
def _chart_warning(term: str, name: str) -> str | None:
    said = name_problem(term, name)
    return None if said is None else f"column {term}: {name!r} {said}; kept as typed"


# How a warning about a date kept as typed ends (told apart from a refusal by it).
_KEPT = "; kept as typed"


def _typed_problem(term: str, value: str, is_date: bool, today: date) -> str:
    """Why a date or number cell does not read, said at its column.

    A decimal comma (12,5) is not read as a number: as 12.5 or as 125 it would be a
    guess, so it is said to be no number like any other text.
    """
    where = f"column {term}: {value!r}"
    if not is_date:
        try:
            said = outside(term, float(value))
        except ValueError:
            return f"{where} is not a number (write decimals with a point: 12.5)"
        return f"{where} {said}"
    try:
        read_date(value, today)
    except DateProblem as problem:
        kept = _KEPT if problem.unreadable and term not in STRICT_DATE_TERMS else ""
        return f"{where} {problem.reason}{kept}"
    return f"{where} is not a date"  # not reached: the caller found it unreadable


def _cell_problems(term: str, value: str) -> list[str]:
    if is_formula_cell(value):
        shown = value.removeprefix(FORMULA_MARK)[:30]
        return [f"column {term}: {shown!r} is a spreadsheet formula (export values, not formulas)"]
    return []


def _validate(columns: _Columns, rows: list[Row]) -> list[tuple[Fields, str | None]]:
    """Each row's specimen columns validated like `specimen add`, or the row's first problem.

    Columns the file does not have are left out (an update never blanks them); other
    headings become extra terms, kept with the specimen within the caps on extra terms.
    All rows go to pydantic in one call; only when some row fails are the others
    validated again, without it.
    """
    present = [_present(columns, row.cells) for row in rows]
    said: dict[int, str] = {}
    for n, candidate in enumerate(present):
        problem = extra_terms_problem(candidate["extra"])
        if problem is not None:
            said[n] = f"extra terms: {problem}"
    keep = [n for n in range(len(present)) if n not in said]
    try:
        specimens = _SPECIMENS.validate_python([present[n] for n in keep])
    except ValidationError as exc:
        for error in exc.errors(include_url=False):
            said.setdefault(keep[int(error["loc"][0])], _said(error))  # (row in the list, field)
        keep = [n for n in keep if n not in said]
        specimens = _SPECIMENS.validate_python([present[n] for n in keep])
    good = dict(zip(keep, specimens, strict=True))
    return [
        (_fields(columns.keys, good[n]), None) if n in good else ({}, said[n])
        for n in range(len(present))
    ]


def _present(columns: _Columns, cells: dict[str, str]) -> dict[str, Any]:
    """A row as `specimen add` takes it (the loan is not checked here: it is known)."""
    present: dict[str, Any] = {term: cells[heading] or None for heading, term in columns.texts}
    for heading, term in columns.ages:
        value = cells[heading]
        present[term] = float(value) if value else None
    present["extra"] = {term: cells[term] for term in columns.extras if cells[term]}
    present["loan"] = "-"
    return present


def _fields(keys: list[str], specimen: NewSpecimen) -> Fields:
    """The validated columns the file has, in its order, the extra terms packed as JSON text.

    A pydantic model keeps its field values in ``__dict__``; they are read there
    rather than through one getattr per column of each of 20,000 rows. A row's extra
    terms are most of a wide list's cells: kept as one text until they are compared
    (an update) or written, they cost about their characters rather than a dictionary
    entry and a string each.
    """
    values = vars(specimen)
    fields = {key: values[key] for key in keys}
    fields["extra"] = json.dumps(fields["extra"], ensure_ascii=False, separators=(",", ":"))
    return fields


def unpacked(fields: Fields) -> Fields:
    """A checked row's columns as a specimen takes them: its extra terms a mapping again."""
    return {**fields, "extra": json.loads(fields["extra"])}


def _said(error: Any) -> str:
    """A validation error as the preview says it: at the file's column where the field came
    from one (else the field, or who is blamed), with the value and why."""
    blamed = error.get("ctx", {}).get("error")
    if isinstance(blamed, TextRefused):  # said at the cell, as the other cell problems are
        column = _COLUMN_OF_FIELD.get(blamed.field) or blamed.field.removeprefix("extra.")
        return f"column {column}: {blamed.value!r} {blamed.reason}"
    reason = getattr(blamed, "reason", None) or plain_reason(error)
    field = str(getattr(blamed, "field", None) or ".".join(str(p) for p in error["loc"][1:]))
    heading = _COLUMN_OF_FIELD.get(field.replace("_", "-"))
    if heading is None:
        return f"{field}: {reason}"
    given = getattr(blamed, "value", error.get("input"))
    if isinstance(given, float):
        return f"column {heading}: {given:g} {reason}"
    return (
        f"column {heading}: {given!r} {reason}"
        if isinstance(given, str)
        else f"column {heading}: {reason}"
    )


# The preview's rows are validated in one call (a list adapter), not one call per row.
_ROW_RESULTS = TypeAdapter(list[RowResult])


def _result(row: CheckedRow, existing: Mapping[str, Specimen]) -> dict[str, Any]:
    """A row's result, as the fields of its RowResult."""
    said = {"row": row.number, "problems": row.problems, "warnings": row.warnings}
    if row.problems or row.fields is None:
        return {**said, "catalog_number": row.catalog or None, "action": "error"}
    current = existing.get(row.catalog)
    if current is None:
        return {**said, "catalog_number": row.catalog, "action": "create"}
    changes = _changes(current, row.fields)
    action = "update" if changes else "unchanged"
    return {**said, "catalog_number": row.catalog, "action": action, "changes": changes}


def _changes(current: Specimen, fields: Fields) -> dict[str, list[Any]]:
    """Only what the file says differently: columns it lacks leave the specimen alone."""
    changes = {
        k: [getattr(current, k), v]
        for k, v in fields.items()
        if k != "extra" and getattr(current, k) != v
    }
    for term, value in json.loads(fields["extra"]).items():
        if current.extra.get(term) != value:
            changes[f"extra.{term}"] = [current.extra.get(term), value]
    return changes
