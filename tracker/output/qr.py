"""QR symbols (ISO/IEC 18004) as module matrices, drawn later as vector squares.

The qrcode library chooses the version and the encoding mode; an upper-case ID
is encoded in the compact alphanumeric mode. The matrix is kept without a
quiet zone: the layout reserves the 4-module quiet zone itself, so it can
prove that nothing else is drawn there.
"""

from __future__ import annotations

from dataclasses import dataclass

import qrcode
import qrcode.constants
import qrcode.exceptions

from tracker.domain.errors import InputError

QUIET_ZONE_MODULES = 4  # ISO/IEC 18004 (from memory): 4 modules of light space on each side
_LEVELS = {
    "L": qrcode.constants.ERROR_CORRECT_L,
    "M": qrcode.constants.ERROR_CORRECT_M,
    "Q": qrcode.constants.ERROR_CORRECT_Q,
    "H": qrcode.constants.ERROR_CORRECT_H,
}


@dataclass(frozen=True)
class QrSymbol:
    payload: str
    version: int
    level: str
    dark: tuple[tuple[bool, ...], ...]  # rows of modules, True = dark

    @property
    def modules(self) -> int:
        """Modules per side, without the quiet zone (21 for version 1)."""
        return len(self.dark)

    @property
    def with_quiet_zone(self) -> int:
        return self.modules + 2 * QUIET_ZONE_MODULES


def encode(payload: str, level: str = "M") -> QrSymbol:
    """The smallest symbol holding ``payload`` at error-correction ``level``."""
    code = qrcode.QRCode(version=None, error_correction=_LEVELS[level], border=0)
    code.add_data(payload)
    try:
        code.make(fit=True)
    except (qrcode.exceptions.DataOverflowError, ValueError):
        raise InputError("payload", payload, "is too long for any QR code") from None
    dark = tuple(tuple(bool(cell) for cell in row) for row in code.get_matrix())
    return QrSymbol(payload=payload, version=int(code.version), level=level, dark=dark)


def dark_runs(symbol: QrSymbol) -> list[tuple[int, int, int]]:
    """(row, first column, length) of each horizontal run of dark modules.

    Drawing runs rather than single modules keeps the PDF small and leaves no
    hairline seams between neighbouring modules when the page is rasterised.
    """
    runs: list[tuple[int, int, int]] = []
    for row, cells in enumerate(symbol.dark):
        column = 0
        while column < len(cells):
            if cells[column]:
                end = column
                while end < len(cells) and cells[end]:
                    end += 1
                runs.append((row, column, end - column))
                column = end
            else:
                column += 1
    return runs
