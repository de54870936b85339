"""Which version of a loan's terms is in force on a given day."""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date

from tracker.domain.models import LoanTerms


def terms_in_force(versions: Sequence[LoanTerms], on: date) -> LoanTerms:
    """The newest version effective on or before ``on`` (the original if ``on`` precedes all)."""
    if not versions:
        raise ValueError("a loan always has at least its original terms")
    ordered = sorted(versions, key=lambda t: t.version)
    current = ordered[0]
    for version in ordered[1:]:
        if version.effective_from <= on:
            current = version
    return current
