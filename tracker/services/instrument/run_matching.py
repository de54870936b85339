"""Matching a session's unmatched rows after its import.

Instrument exports often name a sample by the lab's own name (a catalogue number typed at
the instrument, a nickname) rather than by its cut's label, and the import keeps such rows
*unmatched*. Two actions settle them, each one unit of work with one ledger event:

* :func:`match_row` — a person says what one row (session + run order) measured: a cut, or
  what names exactly one cut of the session's element (a specimen's catalogue number or ID,
  a powder, solution or aliquot ID), a column position, a reference material, or the
  session's bracketing standard by name;
* :func:`match_by_name` — every unmatched row whose sample name is, ignoring case and
  spaces, the catalogue number (or one of the other catalogue numbers, Darwin Core's
  ``otherCatalogNumbers``) of exactly one specimen that has exactly one cut of the session's
  element. The rest stay unmatched and are listed with the reason; no row is dropped.

A row is matched once, from unmatched; what the import matched, and what was matched
since, stands. Replicate runs of one cut are normal (a cut is usually run several times in
a session), so a cut measured at other rows is matched again without remark. The stored
results are not touched: reducing the session again computes them anew, in place, the
matched rows included (``reduction.reduce_session``).
"""

from __future__ import annotations

import re
from collections import defaultdict
from collections.abc import Iterable
from typing import Annotated

from pydantic import Field
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import NotFound, RuleViolation
from tracker.domain.ids import Kind, looks_like_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    Cut,
    InstrumentSession,
    Measurement,
    MeasurementRole,
    PositionKind,
    Powder,
    ReferenceMaterial,
    Solution,
    Specimen,
)
from tracker.domain.text_rules import nfc
from tracker.domain.timing import Since, not_before
from tracker.services.core.common import finish
from tracker.services.core.inputs import Name, Raw, Request, parse
from tracker.services.core.lookup import get_by_id, get_named, prefix_for, read_public_id
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.instrument.matching import Matcher
from tracker.services.instrument.reduction import cut_label, public_target

RunOrder = Annotated[int, Field(ge=0)]


class MatchRow(Request):
    """One unmatched row of a session and what it measured, as a person scans or types it."""

    session: str
    run_order: RunOrder
    target: Name


class MatchByName(Request):
    session: str


class MatchedRow(View):
    run_order: int
    sample_name: str
    role: str  # sample, reference, blank or standard
    target: str | None  # the cut, reference material or blank's column; none for a standard
    label: str  # how the target reads (a cut: its specimen's catalogue number and ID)


class LeftRow(View):
    run_order: int
    sample_name: str
    reason: str


class RowMatched(View):
    session: str
    matched: MatchedRow


class NamesMatched(View):
    session: str
    matched: list[MatchedRow]
    unmatched: list[LeftRow]


def match_row(db: Database, actor: str | None, data: MatchRow | Raw) -> Done[RowMatched]:
    """Say what one unmatched row of a session measured; reduce the session again after."""
    request = parse(MatchRow, data)
    with unit_of_work(db, actor, "match an instrument row") as uow:
        session = get_by_id(uow.session, InstrumentSession, "session", request.session)
        run = _unmatched_run(session, request.run_order)
        matcher = Matcher(uow.session, session.bracketing_standard, session.element)
        _assign(uow.session, matcher, session, run, request.target)
        bracket = _bracket_problem(session, run)
        if bracket:
            raise RuleViolation("run order", run.run_order, bracket)
        early = _time_problem(uow.session, session, run)
        if early:
            raise RuleViolation("target", request.target, early)
        matched = _matched(uow.session, run)
        payload = {"run_order": run.run_order, "sample_name": run.sample_name}
        payload |= {"role": matched.role, "target": matched.target}
        view = lambda: RowMatched(session=session.public_id, matched=matched)  # noqa: E731
        return finish(uow, "session.row_matched", session, payload, view)


def match_by_name(db: Database, actor: str | None, data: MatchByName | Raw) -> Done[NamesMatched]:
    """Match every unmatched row whose sample name names one cut; list the rest with why."""
    request = parse(MatchByName, data)
    with unit_of_work(db, actor, "match instrument rows by name") as uow:
        session = get_by_id(uow.session, InstrumentSession, "session", request.session)
        runs = [m for m in session.measurements if m.role is MeasurementRole.UNMATCHED]
        if not runs:
            raise RuleViolation("session", session.public_id, "has no unmatched rows")
        matcher = Matcher(uow.session, session.bracketing_standard, session.element)
        chosen, left = _by_name(uow.session, matcher, session, runs)
        if not chosen:
            raise RuleViolation(
                "session", session.public_id, f"no unmatched row could be matched: {_why(left)}"
            )
        matched = [_matched(uow.session, run) for run in chosen]
        payload = {
            "matched": [{"run_order": m.run_order, "target": m.target} for m in matched],
            "unmatched": [row.model_dump() for row in left],  # the reasons the screen shows
        }
        view = lambda: NamesMatched(  # noqa: E731
            session=session.public_id, matched=matched, unmatched=left
        )
        return finish(uow, "session.rows_matched", session, payload, view)


def _unmatched_run(session: InstrumentSession, run_order: int) -> Measurement:
    run = next((m for m in session.measurements if m.run_order == run_order), None)
    if run is None:
        raise NotFound("run order", run_order, f"session {session.public_id} has no such run")
    if run.role is not MeasurementRole.UNMATCHED:
        what = _describe(run)
        raise RuleViolation("run order", run_order, f"is matched already, as {what}")
    return run


def _describe(run: Measurement) -> str:
    """What a matched run measured, in words, for the refusal of matching it again."""
    if run.role is MeasurementRole.STANDARD:
        return "the bracketing standard"
    if run.cut_id is not None:
        return f"a run of cut {public_target('cut', run.cut_id)}"
    if run.reference_material_id is not None:
        return (
            f"a run of reference material {public_target('reference', run.reference_material_id)}"
        )
    return f"a procedural blank of column {public_target('blank', run.position_id or 0)}"


_LINEAGE = (Kind.SPECIMEN, Kind.POWDER, Kind.SOLUTION, Kind.ALIQUOT)


def _assign(
    sql: Session, matcher: Matcher, session: InstrumentSession, run: Measurement, text: str
) -> None:
    """Make ``run`` what ``text`` names, or refuse naming ``target`` and the reason."""
    key = text.strip().lower()
    if key == matcher.standard or key in matcher.materials:
        matcher.assign(run, text)
        _require_element(run, matcher, text)
        return
    if not looks_like_id(text, prefix_for(sql, text)):
        specimen = get_by_id(sql, Specimen, "target", text)  # its catalogue number
        _place_cut(matcher, run, _one_cut(sql, Kind.SPECIMEN, specimen.id, session, text), text)
        return
    public = read_public_id(sql, "target", text)
    if public.kind is Kind.CUT:
        found = get_named(sql, "target", text, public)
        assert isinstance(found, Cut)
        _place_cut(matcher, run, found, text)
    elif public.kind is Kind.POSITION:
        position = get_named(sql, "target", text, public)
        assert isinstance(position, BatchPosition)
        _placed(matcher.place(run, position, None, text), text)
    elif public.kind is Kind.REFERENCE_MATERIAL:
        material = get_named(sql, "target", text, public)
        assert isinstance(material, ReferenceMaterial)
        matcher.assign(run, material.name)
        _require_element(run, matcher, text)
    elif public.kind in _LINEAGE:
        get_named(sql, "target", text, public)  # refused by name when it names nothing
        _place_cut(matcher, run, _one_cut(sql, public.kind, public.number, session, text), text)
    else:
        raise RuleViolation(
            "target",
            text,
            "is not a cut, column, specimen, powder, solution, aliquot or reference material",
        )


def _place_cut(matcher: Matcher, run: Measurement, cut: Cut, text: str) -> None:
    _placed(matcher.place(run, cut.position, cut, text), text)


def _placed(reason: str, text: str) -> None:
    if reason:  # the matcher's reason, which starts with the label it was given
        raise RuleViolation("target", text, reason.removeprefix(text).removeprefix(":").strip())


def _require_element(run: Measurement, matcher: Matcher, text: str) -> None:
    """A reference material run in a session of another element is not what it says."""
    if run.reference_material_id is None:
        return
    material = matcher.session.get_one(ReferenceMaterial, run.reference_material_id)
    if material.element != matcher.element:
        raise RuleViolation(
            "target",
            text,
            f"is a {material.element} reference material; the session measured {matcher.element}",
        )


def _one_cut(sql: Session, kind: Kind, number: int, session: InstrumentSession, text: str) -> Cut:
    """The one cut of the session's element below a specimen, powder, solution or aliquot."""
    cuts = cuts_below(sql, kind, [number], session.element).get(number, [])
    if len(cuts) == 1:
        return cuts[0]
    if not cuts:
        raise RuleViolation("target", text, f"has no {session.element} cut recorded")
    ids = ", ".join(c.public_id for c in cuts)
    raise RuleViolation(
        "target", text, f"has {len(cuts)} {session.element} cuts ({ids}); scan or type the cut's ID"
    )


_KEY_COLUMN = {
    Kind.SPECIMEN: Powder.specimen_id,
    Kind.POWDER: Solution.powder_id,
    Kind.SOLUTION: Aliquot.solution_id,
    Kind.ALIQUOT: BatchPosition.aliquot_id,
}


def cuts_below(
    sql: Session, kind: Kind, numbers: Iterable[int], element: str
) -> dict[int, list[Cut]]:
    """The sample cuts of ``element`` descending from each item (by row number), in order."""
    wanted = sorted(set(numbers))
    key = _KEY_COLUMN[kind]
    found: dict[int, list[Cut]] = defaultdict(list)
    for start in range(0, len(wanted), 500):  # every backend's limit on parameters
        query = (
            select(key, Cut)
            .join(BatchPosition, Cut.position_id == BatchPosition.id)
            .join(ColumnBatch, BatchPosition.batch_id == ColumnBatch.id)
            .join(Aliquot, BatchPosition.aliquot_id == Aliquot.id)
            .join(Solution, Aliquot.solution_id == Solution.id)
            .join(Powder, Solution.powder_id == Powder.id)
            .where(
                key.in_(wanted[start : start + 500]),
                ColumnBatch.element == element,
                Cut.name == element,
                BatchPosition.kind == PositionKind.SAMPLE,
            )
            .order_by(Cut.id)
        )
        for number, cut in sql.execute(query):
            if number is not None:  # the key column is not null on these joins
                found[number].append(cut)
    return found


def catalogue_key(text: str) -> str:
    """A catalogue number as compared with an export's sample name: any case, no spaces."""
    return "".join(nfc(text).casefold().split())


# Darwin Core's otherCatalogNumbers is a list; its recommended separator is " | " (TDWG
# Darwin Core quick reference guide, from memory); ";" is common practice in older records.
_LIST = re.compile(r"[|;]")


def _by_name(
    sql: Session, matcher: Matcher, session: InstrumentSession, runs: list[Measurement]
) -> tuple[list[Measurement], list[LeftRow]]:
    """Match each run by its sample name, as the import would now (a cut recorded since), or
    else by a catalogue number; a run that could not be reduced so is left, with why."""
    wanted = {catalogue_key(run.sample_name) for run in runs} - {""}
    specimens = _specimens_named(sql, wanted)
    below = (s.id for named in specimens.values() for s in named)
    cuts = cuts_below(sql, Kind.SPECIMEN, below, session.element)
    chosen: list[Measurement] = []
    left: list[LeftRow] = []
    for run in runs:
        reason = matcher.assign(run, run.sample_name)
        if reason and not looks_like_id(run.sample_name):
            named = specimens.get(catalogue_key(run.sample_name), [])
            reason = _reason(named, cuts, session.element)
            if not reason:
                run.role, run.cut_id = MeasurementRole.SAMPLE, cuts[named[0].id][0].id
        reason = reason or _bracket_problem(session, run) or _time_problem(sql, session, run)
        if reason:
            _unmatch(run)
            left.append(
                LeftRow(run_order=run.run_order, sample_name=run.sample_name, reason=reason)
            )
        else:
            chosen.append(run)
    return chosen, left


def _unmatch(run: Measurement) -> None:
    run.role = MeasurementRole.UNMATCHED
    run.cut_id = run.reference_material_id = run.position_id = None


def _reason(named: list[Specimen], cuts: dict[int, list[Cut]], element: str) -> str:
    if not named:
        return "names no specimen's catalogue number"
    if len(named) > 1:
        ids = ", ".join(s.public_id for s in named)
        return f"is the catalogue number of several specimens ({ids}): match it by hand"
    mine = cuts.get(named[0].id, [])
    if len(mine) == 1:
        return ""
    if not mine:
        return f"specimen {named[0].public_id} has no {element} cut recorded"
    ids = ", ".join(c.public_id for c in mine)
    return f"specimen {named[0].public_id} has {len(mine)} {element} cuts ({ids}): match it by hand"


def _specimens_named(sql: Session, wanted: set[str]) -> dict[str, list[Specimen]]:
    """Specimens by every catalogue number they are known by, for the names wanted only.

    Read a few columns at a time (``yield_per``): a lab's specimens are compared in Python,
    where "any case" means Unicode case folding on both backends alike.
    """
    other = Specimen.extra["otherCatalogNumbers"].as_string()
    query = select(Specimen.id, Specimen.catalog_number, other).execution_options(yield_per=2000)
    ids: dict[str, set[int]] = defaultdict(set)
    for specimen_id, number, others in sql.execute(query):
        for name in [number, *_LIST.split(others or "")]:
            key = catalogue_key(name)
            if key in wanted:
                ids[key].add(specimen_id)
    rows = {
        s.id: s
        for s in sql.scalars(
            select(Specimen).where(Specimen.id.in_({i for v in ids.values() for i in v}))
        )
    }
    return {key: [rows[i] for i in sorted(found)] for key, found in ids.items()}


def _why(left: list[LeftRow], shown: int = 3) -> str:
    said = "; ".join(f"run {r.run_order} {r.sample_name!r} {r.reason}" for r in left[:shown])
    return said + (f"; and {len(left) - shown} more" if len(left) > shown else "")


def _bracket_problem(session: InstrumentSession, run: Measurement) -> str:
    """Why a run could not be reduced where it stands: no standard run before or after it
    (the rule the import holds every matched row to)."""
    if run.role is MeasurementRole.STANDARD:
        return ""
    standards = [m.run_order for m in session.measurements if m.role is MeasurementRole.STANDARD]
    if not any(order < run.run_order for order in standards):
        return "has no bracketing standard measured before it, so it cannot be reduced"
    if not any(order > run.run_order for order in standards):
        return "has no bracketing standard measured after it, so it cannot be reduced"
    return ""


def _time_problem(sql: Session, session: InstrumentSession, run: Measurement) -> str:
    """Why a run cannot have measured its cut or blank: the session started before the
    column chemistry it came from was performed (the import's own rule)."""
    batch = _batch_of(sql, run)
    if batch is None:
        return ""
    try:
        when = Since(f"batch {batch.public_id} was performed", batch.performed_on)
        not_before("session started", session.started_at, [when])
    except RuleViolation as refused:
        return f"is from a batch performed after the session started ({refused.reason})"
    return ""


def _batch_of(sql: Session, run: Measurement) -> ColumnBatch | None:
    if run.cut_id is not None:
        return sql.get_one(Cut, run.cut_id).position.batch
    if run.position_id is not None:
        return sql.get_one(BatchPosition, run.position_id).batch
    return None


def _matched(sql: Session, run: Measurement) -> MatchedRow:
    role = run.role.value
    if run.cut_id is not None:
        target, label = public_target("cut", run.cut_id), cut_label(sql.get_one(Cut, run.cut_id))
    elif run.reference_material_id is not None:
        material = sql.get_one(ReferenceMaterial, run.reference_material_id)
        target, label = material.public_id, material.name
    elif run.position_id is not None:
        target = public_target("blank", run.position_id)
        label = f"procedural blank {run.position_id}"
    else:
        target, label = None, run.session.bracketing_standard
    return MatchedRow(
        run_order=run.run_order, sample_name=run.sample_name, role=role, target=target, label=label
    )
