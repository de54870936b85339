"""Telling a barcode scanner from a person: a burst of characters ended by Enter.

A scanner acting as a keyboard types a whole ID within a few milliseconds per character
and presses Enter; a person types far slower. :class:`BurstDetector` only keeps time —
it decides nothing about IDs (the services read and check them).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Generic, TypeVar

K = TypeVar("K")

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


# A person typing a word leaves well under this between keys (about 0.2-0.3 s at 40 words a
# minute, from memory); a shortcut is a key with nothing after it for this long.
TYPING_GAP = 0.4


@dataclass
class TypedRun(Generic[K]):
    """Printable keys typed while no field has the focus, held until it is clear whether they
    are one shortcut or text (two or more keys, each within ``gap`` of the last)."""

    gap: float = TYPING_GAP
    keys: list[K] = field(default_factory=list)
    chars: list[str] = field(default_factory=list)
    last: float | None = None

    def continues(self, at: float) -> bool:
        """Does a key at ``at`` belong to this run? Text goes on until Enter or Esc, however
        slowly it is typed; a lone key is a run of its own once ``gap`` has passed."""
        if not self.keys or self.is_text:
            return True
        return self.last is not None and at - self.last <= self.gap

    def add(self, key: K, char: str, at: float) -> None:
        self.keys.append(key)
        self.chars.append(char)
        self.last = at

    @property
    def is_text(self) -> bool:
        return len(self.keys) > 1

    @property
    def text(self) -> str:
        return "".join(self.chars)

    def clear(self) -> list[K]:
        """Empty the run; returns the keys it held."""
        keys, self.keys, self.chars, self.last = self.keys, [], [], None
        return keys
