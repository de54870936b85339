"""The first screen's glance: the open loans' overview read before SQLAlchemy has loaded.

Loading SQLAlchemy, the models and the services takes longer than Textual takes to draw a
whole screen, so the interface would otherwise sit on an empty overview. The glance reads
the same lines in a thread started with the app, with the standard library's ``sqlite3``
(read-only) and SQL compiled from the services' own statements
(:mod:`tracker.services.glance_sql`), and judges them with the reconciliation's own rules
(:mod:`tracker.services.loan_rules`), loading neither SQLAlchemy nor pydantic. When the
database opens properly, the overview reads them again through the services and replaces
them.

It only ever reads, only SQLite files, and only a database at the schema revision its SQL
was compiled for; anything else (PostgreSQL, an older file awaiting its upgrade, a locked
or unreadable file) gives no glance, and the overview simply waits for the services.
"""

from __future__ import annotations

import json
import sqlite3
import threading
from collections import defaultdict
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import Any

from tracker.domain.ids import Kind, format_id
from tracker.domain.terms import terms_in_force
from tracker.domain.vocab import Disposition, LoanStatus
from tracker.services import glance_sql
from tracker.services.loan_rules import (
    NO_TOTALS,
    LoanFacts,
    OverviewLine,
    Terms,
    overview_line,
    totals_from_row,
    urgency,
)


@dataclass(frozen=True)
class Glance:
    """The open loans' lines, most urgent first, and their counts of results missing."""

    lines: list[OverviewLine]
    missing: dict[str, int]  # loan ID -> sampled specimens with no result yet


@dataclass(frozen=True, slots=True)
class _Version:
    """One version of a loan's terms, as the glance reads it."""

    version: int
    effective_from: date
    terms: Terms


def sqlite_file(target: str) -> Path | None:
    """The file a ``--db`` value names, when it is an existing SQLite file (else None)."""
    if "://" in target:
        prefix = "sqlite:///"
        if not target.startswith(prefix):
            return None
        target = target.removeprefix(prefix)
    path = Path(target).expanduser()
    return path if path.is_file() else None


def read_glance(path: Path, today: date) -> Glance | None:
    """The open loans' lines as of ``today``, or None when this file cannot be glanced."""
    try:
        connection = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=1)
    except sqlite3.Error:
        return None
    try:
        revision = connection.execute("SELECT version_num FROM alembic_version").fetchall()
        if revision != [(glance_sql.HEAD,)]:
            return None  # an older (or newer) schema: the services will deal with it
        rows = {
            name: connection.execute(getattr(glance_sql, name)).fetchall()
            for name in ("LOANS", "TERMS", "TOTALS", "MISSING")
        }
    except sqlite3.Error:
        return None
    finally:
        connection.close()
    try:
        return _glance(rows, today)
    except (ValueError, TypeError, KeyError):  # a row the services would refuse to read too:
        return None  # no glance; the overview waits for the services, which say what it is


def _glance(rows: dict[str, list[Any]], today: date) -> Glance:
    versions: dict[int, list[_Version]] = defaultdict(list)
    for loan_id, version, effective, tissues, per, total, count, due, powder in rows["TERMS"]:
        terms = Terms(
            version,
            json.loads(tissues),
            per,
            total,
            count,
            date.fromisoformat(due),
            Disposition(powder),
        )
        versions[loan_id].append(_Version(version, date.fromisoformat(effective), terms))
    totals = dict(totals_from_row(row) for row in rows["TOTALS"])
    lines = []
    for loan_id, reference, status, lender, code in rows["LOANS"]:
        facts = LoanFacts(
            id=format_id(Kind.LOAN, loan_id),
            reference=reference,
            status=LoanStatus(status),
            lender=lender,
            lender_code=code or lender,
            terms=terms_in_force(versions[loan_id], today).terms,
        )
        lines.append(overview_line(facts, today, totals.get(loan_id, NO_TOTALS)))
    missing = {format_id(Kind.LOAN, loan): int(n) for loan, n in rows["MISSING"]}
    return Glance(sorted(lines, key=urgency), missing)


class Glancer:
    """Reads the glance in a thread of its own, started at once; ``result`` waits for it."""

    def __init__(self, path: Path, today: date) -> None:
        self._glance: Glance | None = None
        self._thread = threading.Thread(
            target=self._read, args=(path, today), name="glance", daemon=True
        )
        self._thread.start()

    def _read(self, path: Path, today: date) -> None:
        self._glance = read_glance(path, today)

    def result(self, timeout: float = 5.0) -> Glance | None:
        """The glance, once read (None if it could not be, or took longer than ``timeout``)."""
        self._thread.join(timeout)
        return self._glance


def start_glance(target: str, today: date) -> Glancer | None:
    """Start reading the glance of ``target`` now, if it is a SQLite file."""
    path = sqlite_file(target)
    return Glancer(path, today) if path is not None else None
