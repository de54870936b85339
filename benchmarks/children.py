"""Child interpreters the benchmark starts (builds, probes): they import ``benchmarks`` too.

The benchmark is not installed with tracker; it runs from a checkout (``python -m benchmarks``).
A child started with ``-m benchmarks.x`` finds it only when the checkout is on its path, so
every child gets the checkout's folder prepended to ``PYTHONPATH`` (its working folder is
left alone: paths given on the command line stay relative to where the person typed them).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

CHECKOUT = Path(__file__).resolve().parent.parent


def command(module: str, *args: str) -> list[str]:
    """``python -m benchmarks.<module> ARGS`` with this interpreter."""
    return [sys.executable, "-m", f"benchmarks.{module}", *args]


def environment(**extra: str) -> dict[str, str]:
    """This process's environment, the checkout first on ``PYTHONPATH``, plus ``extra``."""
    paths = [str(CHECKOUT), *filter(None, os.environ.get("PYTHONPATH", "").split(os.pathsep))]
    return {**os.environ, "PYTHONPATH": os.pathsep.join(paths), **extra}
