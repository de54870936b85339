"""Weighings and the uncertainty of a mass by difference (GUM, JCGM 100:2008).

A digital balance of readability *d* rounds each reading; GUM F.2.2.1 treats
that as a rectangular distribution of half-width d/2, standard uncertainty
u = d/√12. A mass by difference uses two independent readings (gross and
tare), so u(m) = √2 · d/√12 = d/√6. Labs that know their balance's
repeatability better can pass it explicitly; readability is the floor.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import Decimal
from typing import TYPE_CHECKING

from tracker.domain.base import decimal_from_float
from tracker.domain.budget import SQRT6, Amount, by_difference

if TYPE_CHECKING:
    from uncertainties.core import Variable


def reading_uncertainty(readability: float) -> float:
    """Standard uncertainty of one reading from a balance of the given readability."""
    return readability / math.sqrt(12.0)


@dataclass(frozen=True)
class MassByDifference:
    """A net mass from a tare and a gross reading, in the unit of the inputs."""

    tare: Decimal
    gross: Decimal
    readability: Decimal

    @property
    def net(self) -> Decimal:
        return self.gross - self.tare

    def stored(self, shift: int = 0) -> tuple[Decimal, Decimal]:
        """The net mass and its standard uncertainty as the columns keep them: the net
        exactly as the readings give it (``shift`` moves the decimal point: -3 turns mg
        into g), the uncertainty as the shortest decimal of its computed float."""
        u = float(self.readability.scaleb(shift)) / SQRT6
        return self.net.scaleb(shift), decimal_from_float(u)

    def amount(self, scale: float = 1.0) -> Amount:
        """The net mass as a budget Amount, optionally rescaled (1e-3 turns mg into g)."""
        return by_difference(float(self.net) * scale, float(self.readability) * scale)

    def as_ufloat(self) -> Variable:
        """The net mass with its GUM uncertainty; ``uncertainties`` (and numpy) load only here."""
        from uncertainties import ufloat

        tare = ufloat(float(self.tare), reading_uncertainty(float(self.readability)))
        gross = ufloat(float(self.gross), reading_uncertainty(float(self.readability)))
        result: Variable = gross - tare
        return result
