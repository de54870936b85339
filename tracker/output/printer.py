"""Handing a finished PDF to the operating system's print queue with ``lp``, if there is one.

The print job is already recorded when this runs: a missing ``lp`` or a
refusing queue is reported, never turned into a failed record, because the PDF
exists and can be printed by hand.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

from pydantic import BaseModel, ConfigDict

LP_TIMEOUT_S = 60


class PrinterReport(BaseModel):
    model_config = ConfigDict(frozen=True)

    printer: str
    sent: bool
    message: str


def send(pdf: Path, printer: str) -> PrinterReport:
    """``lp -d PRINTER PDF``; says what happened in words either way."""
    lp = shutil.which("lp")
    if lp is None:
        return PrinterReport(
            printer=printer,
            sent=False,
            message=f"not sent: `lp` is not installed here; print {pdf} by hand",
        )
    try:
        result = subprocess.run(
            [lp, "-d", printer, str(pdf.resolve())],
            capture_output=True,
            text=True,
            timeout=LP_TIMEOUT_S,
            check=False,
        )
    except (OSError, subprocess.TimeoutExpired) as exc:
        return PrinterReport(printer=printer, sent=False, message=f"not sent: lp failed: {exc}")
    if result.returncode != 0:
        why = " ".join((result.stderr or result.stdout).split()) or f"exit {result.returncode}"
        return PrinterReport(printer=printer, sent=False, message=f"not sent: lp said: {why}")
    said = " ".join(result.stdout.split())
    return PrinterReport(printer=printer, sent=True, message=said or f"sent to {printer}")
