"""Is a measured concentration possible? The dissolved powder's material says how much of
the element it can hold at most (:meth:`tracker.domain.materials.Material.ceiling`).

A concentration that puts more of the element in the solution than that — beyond the top of
the lab's recovery window (a recovery the lab accepts is never refused) and beyond what the
uncertainty explains (:func:`tracker.domain.recovery.beyond_ceiling`) — is almost always a
slip of the keyboard (a decimal point, µg/g for mg/g); it is refused unless the person
confirms it, and a confirmed one says so in its ledger event.
"""

from __future__ import annotations

from decimal import Decimal
from typing import Any

from sqlalchemy.orm import Session

from tracker.domain.budget import Amount, element_mass_ug
from tracker.domain.errors import NotFound, RuleViolation
from tracker.domain.materials import Material
from tracker.domain.models import Powder, Solution
from tracker.domain.precision import concentration, mass_mg, micrograms, percent
from tracker.domain.recovery import UG_PER_MG, beyond_ceiling
from tracker.services.admin.materials import find_material
from tracker.services.admin.recovery_window import recovery_window


def material_of(session: Session, powder: Powder) -> Material | None:
    """The material the powder was recorded as; None when none was, or it is gone."""
    if powder.material is None:
        return None
    try:
        return find_material(session, "material", powder.material)
    except NotFound:
        return None


def powder_taken(solution: Solution) -> Amount:
    """The powder dissolved into the solution, mg, with its weighing's uncertainty."""
    return Amount.of(solution.powder_mass_mg, solution.powder_mass_u_mg)


def require_plausible(
    session: Session,
    solution: Solution,
    element: str,
    value: tuple[Decimal, Decimal],
    confirmed: bool,
) -> dict[str, Any] | None:
    """Refuse a concentration (``value``: µg/g and its standard uncertainty) whose element
    mass the dissolved powder cannot hold, unless ``confirmed``. Returns what the event
    records of a confirmed one (None when nothing was out of the ordinary)."""
    material = material_of(session, solution.powder)
    ceiling = None if material is None else material.ceiling(element)
    if material is None or ceiling is None:
        return None
    held = element_mass_ug(
        Amount.of(solution.solution_mass_g, solution.solution_mass_u_g), Amount.of(*value)
    )
    powder = powder_taken(solution)
    most = ceiling * max(1.0, recovery_window(session).high)
    if not beyond_ceiling(held, powder, most):
        return None
    most_ug = UG_PER_MG * powder.value * most
    if confirmed:
        return {"element_ug": held.value, "most_ug": most_ug, "material": material.name}
    share = held.value / (UG_PER_MG * powder.value)
    raise RuleViolation(
        "value",
        concentration(value[0]),
        f"puts {micrograms(held.value, held.u)} of {element} in {solution.public_id}, "
        f"{percent(share)} of the {mass_mg(powder.value)} of powder dissolved, more than "
        f"{material.name} can hold ({percent(ceiling)} {element}); likely a typo — "
        "check the value and its unit, or confirm it",
    )
