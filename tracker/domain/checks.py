"""What can never be true, refused by the database itself (CHECK constraints).

The services refuse such values first, with a person's words; these constraints make the
same rules hold for every other program that writes to the file or the server (a raw
``INSERT``, a spreadsheet tool, a script). Each rule is one named constraint
(``ck_<table>_<column>_<rule>``, the naming convention of ``domain.base``) carrying the
sentence a person is shown if a write ever reaches it (:func:`said`).

Measured values are compared as ``CAST(column AS NUMERIC)``: SQLite keeps exact decimals
as their text (``base.Exact``), and text compared with a number would be compared as text
there; on PostgreSQL the column is NUMERIC already and the cast changes nothing.
"""

from __future__ import annotations

from sqlalchemy import CheckConstraint

from tracker.domain.base import Base

SAYS = "says"  # the key of a constraint's ``info`` holding its sentence


def _rule(name: str, sql: str, says: str) -> CheckConstraint:
    return CheckConstraint(sql, name=name, info={SAYS: says})


def _value(column: str) -> str:
    return f"CAST({column} AS NUMERIC)"


def above_zero(column: str) -> CheckConstraint:
    """A measured value that exists only above zero (a mass, a readability, a limit)."""
    return _rule(f"{column}_above_zero", f"{_value(column)} > 0", f"{column} must be above zero")


def not_negative(column: str) -> CheckConstraint:
    """A measured value that may be zero but never below (an uncertainty, a concentration)."""
    return _rule(
        f"{column}_not_negative", f"{_value(column)} >= 0", f"{column} must not be negative"
    )


def fraction(column: str) -> CheckConstraint:
    """A share of a whole: from 0 to 1 (a yield, an element's mass fraction)."""
    value = _value(column)
    return _rule(
        f"{column}_fraction",
        f"{value} >= 0 AND {value} <= 1",
        f"{column} must be a fraction from 0 to 1",
    )


def share(column: str) -> CheckConstraint:
    """A threshold or bound given as a share: above 0, at most 1 (a yield to reach, an
    element's mass fraction in a material)."""
    value = _value(column)
    return _rule(
        f"{column}_share",
        f"{value} > 0 AND {value} <= 1",
        f"{column} must be above 0 and at most 1",
    )


def heavier(gross: str, tare: str) -> CheckConstraint:
    """A gross reading above its tare: the mass by difference exists."""
    return _rule(
        f"{gross}_above_{tare}",
        f"{_value(gross)} > {_value(tare)}",
        f"{gross} must be heavier than {tare}",
    )


def ordered(low: str, high: str) -> CheckConstraint:
    """Two ends of a range: the low end not above the high end."""
    return _rule(
        f"{low}_not_above_{high}",
        f"{_value(low)} <= {_value(high)}",
        f"{low} must not be above {high}",
    )


def counted_from_one(column: str) -> CheckConstraint:
    """A sequence number or a position: 1, 2, 3 ..."""
    return _rule(f"{column}_from_one", f"{column} >= 1", f"{column} counts from 1")


def count(column: str) -> CheckConstraint:
    """How many of something: never below zero."""
    return _rule(f"{column}_count", f"{column} >= 0", f"{column} must not be negative")


def ratio_positive(value: str, kind: str) -> CheckConstraint:
    """In ratio mode the value is an isotope ratio, which exists only above zero
    (a δ value may be negative)."""
    return _rule(
        f"{value}_ratio_above_zero",
        f"{kind} <> 'ratio' OR {_value(value)} > 0",
        f"{value} must be above zero when it is a ratio",
    )


def said(constraint: str) -> str | None:
    """The sentence of the CHECK constraint named ``constraint`` (its full name), if any:
    what a person is told when a write reaches it."""
    for table in Base.metadata.tables.values():
        for found in table.constraints:
            if isinstance(found, CheckConstraint) and found.name == constraint:
                return f"{table.name}: {found.info.get(SAYS, constraint)}"
    return None
