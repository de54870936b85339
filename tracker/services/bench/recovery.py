"""A solution's dissolution recoveries: the one place every reader gets them from.

``tracker show``, the interface's item view and the return report's data all call
:func:`dissolution_recoveries`; the arithmetic is :func:`tracker.domain.recovery.recovery`'s
and the window the lab's (:func:`tracker.services.admin.recovery_window.recovery_window`).
"""

from __future__ import annotations

from sqlalchemy.orm import object_session

from tracker.domain.models import Solution
from tracker.domain.recovery import Recovery, recovery
from tracker.services.admin.recovery_window import recovery_window
from tracker.services.bench.plausibility import material_of, powder_taken
from tracker.services.bench.solutions import solution_element


def dissolution_recoveries(solution: Solution) -> list[Recovery]:
    """One recovery per element measured in the solution whose mass fraction the powder's
    material states (usually Ca); none when the powder has no material recorded."""
    session = object_session(solution)
    if session is None:
        return []
    material = material_of(session, solution.powder)
    if material is None:
        return []
    window = recovery_window(session)
    found = []
    for symbol in dict.fromkeys(c.element for c in solution.concentrations):
        fractions = material.fraction_range(symbol)
        held = solution_element(solution, symbol)
        if fractions is None or held is None:
            continue
        made = recovery(symbol, material.name, held[1], powder_taken(solution), fractions, window)
        if made is not None:
            found.append(made)
    return found
