"""Chemical formulas → element mass fractions from standard atomic weights.

Accepts what a geochemist writes: ``CaCO3``, ``Ca10(PO4)6(OH)2``, ``Ca5(PO4)3F``,
non-integer subscripts for non-stoichiometric phases (``Ca9.5(PO4)5.5(CO3)0.5``)
and hydrates with a middle dot (``CaSO4·2H2O``). Mass fractions are computed,
never typed: w(E) = n(E)·Ar(E) / Σ n(X)·Ar(X) with the CIAAW abridged standard
atomic weights of :mod:`tracker.domain.elements`.
"""

from __future__ import annotations

import re
from collections import Counter
from decimal import Decimal

from tracker.domain.elements import ATOMIC_WEIGHT


class FormulaError(ValueError):
    """A formula that cannot be read; the message says where and why."""


def parse_formula(formula: str) -> dict[str, Decimal]:
    """Element → amount (mol per formula unit)."""
    text = formula.strip()
    if not text:
        raise FormulaError("is empty")
    total: Counter[str] = Counter()
    for part in re.split(r"\s*[·*]\s*|\s+\.\s+", text):  # hydrate separators
        multiplier, rest = _leading_number(part)
        counts, end = _parse_group(rest, 0, formula)
        if end != len(rest):
            raise FormulaError(f"unexpected {rest[end]!r} at position {end + 1} of {formula!r}")
        for element, n in counts.items():
            total[element] += n * multiplier  # type: ignore[assignment]
    for element in total:
        weight = ATOMIC_WEIGHT.get(element)
        if element not in ATOMIC_WEIGHT:
            raise FormulaError(f"{element!r} is not an element symbol")
        if weight is None:
            raise FormulaError(f"{element} has no standard atomic weight")
    return {element: Decimal(n) for element, n in total.items()}


def _leading_number(part: str) -> tuple[Decimal, str]:
    match = re.match(r"^(\d+(?:\.\d+)?)(?=[A-Z(\[])", part)
    if match:
        return Decimal(match.group(1)), part[match.end() :]
    return Decimal(1), part


def _parse_group(text: str, position: int, whole: str) -> tuple[Counter[str], int]:
    counts: Counter[str] = Counter()
    while position < len(text):
        char = text[position]
        if char in ")]":
            return counts, position
        if char in "([":
            inner, position = _parse_group(text, position + 1, whole)
            if position >= len(text) or text[position] not in ")]":
                raise FormulaError(f"unclosed bracket in {whole!r}")
            position += 1
            count, position = _number(text, position)
            for element, n in inner.items():
                counts[element] += n * count  # type: ignore[assignment]
            continue
        match = re.match(r"[A-Z][a-z]?", text[position:])
        if not match:
            raise FormulaError(f"unexpected {char!r} at position {position + 1} of {whole!r}")
        element = match.group(0)
        position += len(element)
        count, position = _number(text, position)
        counts[element] += count  # type: ignore[assignment]
    return counts, position


def _number(text: str, position: int) -> tuple[Decimal, int]:
    match = re.match(r"\d+(?:\.\d+)?", text[position:])
    if not match:
        return Decimal(1), position
    value = Decimal(match.group(0))
    if value <= 0:
        raise FormulaError(f"a subscript of zero in {text!r}")
    return value, position + len(match.group(0))


def molar_mass(formula: str) -> float:
    """g/mol from standard atomic weights."""
    return sum(float(n) * _weight(e) for e, n in parse_formula(formula).items())


def mass_fraction(formula: str, element: str) -> float:
    """Mass fraction of ``element`` in ``formula`` (0 when absent)."""
    amounts = parse_formula(formula)
    if element not in amounts:
        return 0.0
    return float(amounts[element]) * _weight(element) / molar_mass(formula)


def _weight(element: str) -> float:
    weight = ATOMIC_WEIGHT[element]
    assert weight is not None  # parse_formula refuses elements without one
    return weight
