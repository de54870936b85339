"""Rectangles in millimetres, origin at the page's top-left corner, y downwards."""

from __future__ import annotations

import math
from dataclasses import dataclass

EPSILON_MM = 1e-6


@dataclass(frozen=True)
class Box:
    x: float
    y: float
    w: float
    h: float

    @property
    def right(self) -> float:
        return self.x + self.w

    @property
    def bottom(self) -> float:
        return self.y + self.h

    @property
    def centre(self) -> tuple[float, float]:
        return self.x + self.w / 2, self.y + self.h / 2

    def inset(self, by: float) -> Box:
        return Box(self.x + by, self.y + by, self.w - 2 * by, self.h - 2 * by)

    def within(self, outer: Box) -> bool:
        """True when this box lies entirely inside ``outer``."""
        return (
            self.x >= outer.x - EPSILON_MM
            and self.y >= outer.y - EPSILON_MM
            and self.right <= outer.right + EPSILON_MM
            and self.bottom <= outer.bottom + EPSILON_MM
        )

    def within_circle(self, centre: tuple[float, float], radius: float) -> bool:
        """True when all four corners lie inside the circle."""
        cx, cy = centre
        corners = (
            (self.x, self.y),
            (self.right, self.y),
            (self.x, self.bottom),
            (self.right, self.bottom),
        )
        return all(math.hypot(x - cx, y - cy) <= radius + EPSILON_MM for x, y in corners)
