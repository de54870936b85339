"""Optional strontium age screening of a loan's specimens against a reference curve.

The curve is the user's (a table of age, ⁸⁷Sr/⁸⁶Sr and uncertainty); tracker only
applies it. For every specimen with a ⁸⁷Sr/⁸⁶Sr result (ratio mode), the ages the
curve allows are listed, and a specimen whose stratigraphic age range overlaps none of
them is flagged "possibly reworked or altered".
"""

from __future__ import annotations

import hashlib
import math
from typing import Annotated

from pydantic import Field
from sqlalchemy import select

from tracker.db.database import Database
from tracker.domain.errors import InputError, NotFound, RuleViolation, at_cell
from tracker.domain.models import SrCurve
from tracker.domain.srcurve import Curve, CurveError, CurvePoint, overlaps, parse_curve_csv
from tracker.domain.textfiles import FileProblem, decode_text
from tracker.services.core.common import finish
from tracker.services.core.inputs import Name, Raw, Request, Text, parse
from tracker.services.core.lookup import get_loan
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, LoanView, View
from tracker.services.instrument.results import SpecimenResult, results

SR_RATIO = "87/86"
# A curve of a few thousand points is a few hundred kB (common practice: published
# curves tabulate every 0.1 Myr or coarser); 16 MB leaves room and bounds the work.
MAX_CURVE_BYTES = 16 * 1024 * 1024


class CurveView(View):
    name: str
    points: int
    youngest_ma: float
    oldest_ma: float
    sha256: str


class NewCurve(Request):
    name: Name
    content: Annotated[bytes, Field(min_length=1)]
    filename: Annotated[str, Field(max_length=255)] | None = None
    note: Text | None = None


def add_curve(db: Database, actor: str | None, data: NewCurve | Raw) -> Done[CurveView]:
    """Keep a reference curve (CSV: age_ma, 87sr/86sr, u — sorted by age, no gaps)."""
    request = parse(NewCurve, data)
    return _add_curve(db, actor, request)


def _add_curve(db: Database, actor: str | None, request: NewCurve) -> Done[CurveView]:
    file = request.filename or request.name
    try:  # the whole file, before the writer lock
        curve = parse_curve_csv(decode_text(request.content, limit=MAX_CURVE_BYTES))
    except (CurveError, FileProblem) as exc:
        raise InputError(at_cell(file, exc.row, exc.column), None, exc.reason) from None
    with unit_of_work(db, actor, "add Sr curve") as uow:
        if uow.session.scalars(select(SrCurve).where(SrCurve.name == request.name)).first():
            raise RuleViolation("name", request.name, "a curve with this name exists")
        digest = hashlib.sha256(request.content).hexdigest()
        row = SrCurve(
            name=request.name,
            source_sha256=digest,
            note=request.note,
            points=[[p.age_ma, p.ratio, p.u] for p in curve.points],
            created_at=uow.now,
        )
        uow.session.add(row)
        view = CurveView(
            name=row.name,
            points=len(curve.points),
            youngest_ma=curve.span[0],
            oldest_ma=curve.span[1],
            sha256=digest,
        )
        payload = {
            "name": row.name,
            "sha256": digest,
            "points": len(curve.points),
            "file": request.filename,
        }
        return finish(uow, "curve.added", "", payload, lambda: view)


class UseCurve(Request):
    loan: str
    curve: Name


def use_curve(db: Database, actor: str | None, data: UseCurve | Raw) -> Done[LoanView]:
    """Turn on age screening for a loan with a stored curve."""
    request = parse(UseCurve, data)
    with unit_of_work(db, actor) as uow:
        loan = get_loan(uow.session, "loan", request.loan)
        curve = uow.session.scalars(select(SrCurve).where(SrCurve.name == request.curve)).first()
        if curve is None:
            raise NotFound("curve", request.curve, "no stored curve has this name")
        loan.sr_curve_id = curve.id
        view = lambda: LoanView.of(loan, uow.now.date())  # noqa: E731
        return finish(uow, "loan.curve_set", loan, {"curve": curve.name}, view)


def _curve_view(row: SrCurve) -> CurveView:
    return CurveView(
        name=row.name,
        points=len(row.points),
        youngest_ma=row.points[0][0],
        oldest_ma=row.points[-1][0],
        sha256=row.source_sha256,
    )


def list_curves(db: Database) -> list[CurveView]:
    """Every stored curve, by name: what a loan may be screened against."""
    with db.read_session() as session:
        return [_curve_view(c) for c in session.scalars(select(SrCurve).order_by(SrCurve.name))]


def chosen_curve(db: Database, loan: str) -> CurveView | None:
    """The curve a loan is screened against, or None before one is chosen."""
    with db.read_session() as session:
        row = get_loan(session, "loan", loan)
        if row.sr_curve_id is None:
            return None
        return _curve_view(session.get_one(SrCurve, row.sr_curve_id))


class Screening(View):
    specimen: str
    catalog_number: str
    ratio: float
    two_sd: float | None
    n: int
    intervals_ma: list[tuple[float, float]]
    age_min_ma: float | None
    age_max_ma: float | None
    # the curve's ⁸⁷Sr/⁸⁶Sr ± 2u over the stated ages: what the specimen should measure
    expected_low: float | None
    expected_high: float | None
    consistent: bool | None
    verdict: str


def screen(db: Database, loan: str) -> list[Screening]:
    """Ages the curve allows for each specimen's ⁸⁷Sr/⁸⁶Sr, and whether they fit its strata."""
    with db.read_session() as session:
        row = get_loan(session, "loan", loan)
        if row.sr_curve_id is None:
            raise RuleViolation("loan", row.reference, "has no reference curve; set one first")
        stored = session.get_one(SrCurve, row.sr_curve_id)
        curve = Curve(tuple(CurvePoint(*p) for p in stored.points))
        reference = row.reference
    lines = []
    for result in results(db, reference):
        if result.ratio != SR_RATIO or result.kind != "ratio":
            continue
        u = (result.two_se or 0.0) / 2 if result.n > 1 else (result.two_sd or 0.0) / 2
        intervals = curve.intervals(result.value, max(u, 1e-9))
        lines.append(_verdict(result, intervals, curve))
    return lines


def _verdict(
    result: SpecimenResult, intervals: list[tuple[float, float]], curve: Curve
) -> Screening:
    youngest, oldest = result.age_min_ma, result.age_max_ma
    expected = None if youngest is None or oldest is None else curve.expected(youngest, oldest)
    if youngest is None or oldest is None:
        consistent, verdict = None, "no stratigraphic age on record"
    elif not intervals:
        consistent, verdict = False, "ratio outside the curve: possibly altered"
    elif overlaps(intervals, youngest, oldest):
        consistent, verdict = True, "consistent with its stratigraphic age"
    else:
        consistent, verdict = False, "possibly reworked or altered"
    rounded = [(round(a, 3), round(b, 3)) for a, b in intervals if not math.isnan(a)]
    return Screening(
        specimen=result.specimen,
        catalog_number=result.catalog_number,
        ratio=result.value,
        two_sd=result.two_sd,
        n=result.n,
        intervals_ma=rounded,
        age_min_ma=youngest,
        age_max_ma=oldest,
        expected_low=None if expected is None else expected[0],
        expected_high=None if expected is None else expected[1],
        consistent=consistent,
        verdict=verdict,
    )
