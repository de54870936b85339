"""Telling a barcode scanner from a person: a burst of characters ended by Enter.

A scanner acting as a keyboard types a whole ID within a few milliseconds per character
and presses Enter; a person types far slower. :class:`BurstDetector` only keeps time —
it decides nothing about IDs (the services read and check them).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

# Scanners type a character every 1-15 ms; a fast typist leaves 60 ms or more between keys.
DEFAULT_GAP_MS = 40.0
MIN_LENGTH = 6  # the shortest ID (XX00000C) is 8 characters; leave room for a mistyped one


def gap_seconds() -> float:
    try:
        return float(os.environ.get("TRACKER_SCAN_GAP_MS", DEFAULT_GAP_MS)) / 1000
    except ValueError:
        return DEFAULT_GAP_MS / 1000


@dataclass
class BurstDetector:
    """Collects printable characters that arrive close together."""

    gap: float = field(default_factory=gap_seconds)
    min_length: int = MIN_LENGTH
    chars: list[str] = field(default_factory=list)
    last: float | None = None

    def feed(self, char: str, at: float) -> bool:
        """Add a character; True when it continues the current burst, False when it starts one."""
        continues = self.last is not None and at - self.last <= self.gap and bool(self.chars)
        if not continues:
            self.chars = []
        self.chars.append(char)
        self.last = at
        return continues

    def enter(self, at: float) -> str | None:
        """Enter pressed: the scanned text when a burst just ended here, else None."""
        text = "".join(self.chars)
        recent = self.last is not None and at - self.last <= self.gap * 3
        self.reset()
        if recent and len(text) >= self.min_length:
            return text
        return None

    def reset(self) -> None:
        self.chars = []
        self.last = None

    @property
    def pending(self) -> int:
        return len(self.chars)
