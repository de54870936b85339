"""Child interpreters the benchmark starts (builds, probes): they import ``benchmarks`` too.

The benchmark is not installed with tracker; it runs from a checkout (``python -m benchmarks``).
A child started with ``-m benchmarks.x`` finds it only when the checkout is on its path, so
every child gets the checkout's folder prepended to ``PYTHONPATH`` (its working folder is
left alone: paths given on the command line stay relative to where the person typed them).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

CHECKOUT = Path(__file__).resolve().parent.parent


def command(module: str, *args: str) -> list[str]:
    """``python -m benchmarks.<module> ARGS`` with this interpreter."""
    return [sys.executable, "-m", f"benchmarks.{module}", *args]


def environment(**extra: str) -> dict[str, str]:
    """This process's environment, the checkout first on ``PYTHONPATH``, plus ``extra``."""
    paths = [str(CHECKOUT), *filter(None, os.environ.get("PYTHONPATH", "").split(os.pathsep))]
    return {**os.environ, "PYTHONPATH": os.pathsep.join(paths), **extra}


def probe_answer(module: str, *args: str) -> dict[str, Any]:
    """Run ``python -m benchmarks.<module> ARGS`` and return the JSON line it printed last;
    a child that failed raises, naming the last line of its error output."""
    with tempfile.TemporaryFile() as errors:
        process = subprocess.run(
            command(module, *args),
            env=environment(),
            stdout=subprocess.PIPE,
            stderr=errors,
            check=False,
        )
        if process.returncode:
            errors.seek(0)
            last = errors.read().decode("utf-8", "replace").strip().splitlines()[-1:]
            raise RuntimeError(f"{module} {args[0]} failed: {last}")
    answer: dict[str, Any] = json.loads(process.stdout.decode("utf-8").strip().splitlines()[-1])
    return answer


def print_timed(compute: Callable[[], dict[str, object]]) -> int:
    """A probe's main: time ``compute()``, add its seconds and this process's peak memory to
    its answer, print that as one JSON line."""
    from benchmarks.probe import peak_mb

    started = time.perf_counter()
    answer = compute()
    answer["seconds"] = time.perf_counter() - started
    answer["peak_mb"] = peak_mb()
    print(json.dumps(answer), flush=True)
    return 0
