"""What a powder is made of, and so how much of an element it should hold.

Stoichiometric minerals carry a formula and their element mass fraction is
computed from it. Biogenic apatite is not stoichiometric (carbonate, water and
organic matter dilute the calcium), so its presets give a *range*: planning uses
the low end (enough element whatever the specimen), recovery checks use the
whole range. Users add their own materials with a formula or a measured range.
"""

from __future__ import annotations

from dataclasses import dataclass

from tracker.domain.formula import mass_fraction

HYDROXYAPATITE = "Ca10(PO4)6(OH)2"


@dataclass(frozen=True)
class Material:
    """A named material: a formula, or a measured range of one element's mass fraction."""

    name: str
    formula: str | None = None
    element: str | None = None  # the element a measured range refers to
    fraction_low: float | None = None
    fraction_high: float | None = None
    note: str = ""
    # The highest fraction the element can reach in this material whatever the specimen
    # (a range's stoichiometric end member); None: the range's high end or the formula's.
    fraction_ceiling: float | None = None

    def fraction_range(self, element: str) -> tuple[float, float] | None:
        """(low, high) mass fraction of ``element``; None when this material cannot say."""
        if self.fraction_low is not None and self.fraction_high is not None:
            if self.element == element:
                return self.fraction_low, self.fraction_high
            return None
        if self.formula is None:
            return None
        value = mass_fraction(self.formula, element)
        return (value, value) if value > 0 else None

    def ceiling(self, element: str) -> float | None:
        """The most of ``element`` this material can hold, as a mass fraction: more than
        this in a dissolved powder is impossible (see :func:`tracker.domain.recovery`)."""
        span = self.fraction_range(element)
        if span is None:
            return None
        return max(span[1], self.fraction_ceiling or 0.0)


def _apatite_range(name: str, low: float, high: float, note: str) -> Material:
    stoichiometric = mass_fraction(HYDROXYAPATITE, "Ca")
    return Material(
        name, None, "Ca", stoichiometric * low, stoichiometric * high, note, stoichiometric
    )


PRESETS: dict[str, Material] = {
    m.name: m
    for m in (
        Material("hydroxyapatite", HYDROXYAPATITE),
        Material("fluorapatite", "Ca10(PO4)6F2"),
        Material("calcite", "CaCO3", note="trigonal CaCO3"),
        Material("aragonite", "CaCO3", note="orthorhombic CaCO3; same Ca fraction as calcite"),
        # From memory / common practice: enamel and enameloid bioapatite hold a few per cent
        # less Ca than stoichiometric hydroxyapatite; bone and dentine, with 20-30 % organic
        # matter and water, much less. Measure your own material when it matters.
        _apatite_range(
            "enamel bioapatite",
            0.90,
            1.00,
            "90-100 % of hydroxyapatite's Ca (common practice, from memory)",
        ),
        _apatite_range(
            "bone-dentine bioapatite",
            0.60,
            0.80,
            "60-80 % of hydroxyapatite's Ca (common practice, from memory)",
        ),
    )
}

# The material a tissue most likely is, when the drill form does not say.
TISSUE_DEFAULTS = {
    "enamel": "enamel bioapatite",
    "enameloid": "enamel bioapatite",
    "dentine": "bone-dentine bioapatite",
    "dentin": "bone-dentine bioapatite",
    "bone": "bone-dentine bioapatite",
    "cementum": "bone-dentine bioapatite",
    "otolith": "aragonite",
    # shells may be calcite, aragonite or both: the form must say
}
