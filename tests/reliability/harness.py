"""The parent's side: start the zygote, hand it jobs, kill children at random moments.

:class:`Zygote` runs ``tests/reliability/workers.py``. :func:`crash_rounds` is the
generic crash harness: for each round it forks a child that repeats one job (an
import, a batch sheet ...) until done, waits until the child has started a call,
SIGKILLs it at a random moment, and hands the database to a checker. Every pid is
one this harness forked; nothing else is ever signalled.
"""

from __future__ import annotations

import contextlib
import json
import os
import random
import signal
import subprocess
import sys
import time
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]


class Zygote:
    def __init__(self) -> None:
        self.process = subprocess.Popen(
            [sys.executable, "-m", "tests.reliability.workers"],
            cwd=ROOT,
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            text=True,
        )
        assert self.process.stdout is not None and self.process.stdin is not None
        assert self.process.stdout.readline().strip() == "ready"
        self.children: list[int] = []

    def fork(self, job: str, args: dict[str, Any]) -> int:
        assert self.process.stdin is not None and self.process.stdout is not None
        self.process.stdin.write(json.dumps({"job": job, "args": args}) + "\n")
        self.process.stdin.flush()
        pid = int(self.process.stdout.readline())
        self.children.append(pid)
        return pid

    def kill(self, pid: int) -> None:
        """SIGKILL one of our children — only while it is still this zygote's child."""
        if self.owns(pid):
            with contextlib.suppress(ProcessLookupError):
                os.kill(pid, signal.SIGKILL)

    def owns(self, pid: int) -> bool:
        """Alive and forked by this zygote (a recycled pid has another parent)."""
        try:
            status = Path(f"/proc/{pid}/status").read_text(encoding="utf-8")
        except OSError:
            return False
        parent = next(line for line in status.splitlines() if line.startswith("PPid:"))
        return pid in self.children and int(parent.split()[1]) == self.process.pid

    def close(self) -> None:
        for pid in self.children:  # stragglers of a failed test; only our own children
            self.kill(pid)
        if self.process.stdin is not None:
            self.process.stdin.close()
        self.process.wait(timeout=30)


def wait_for_files(paths: list[Path], timeout: float) -> None:
    deadline = time.monotonic() + timeout
    while not all(p.exists() for p in paths):
        if time.monotonic() > deadline:
            missing = [str(p) for p in paths if not p.exists()]
            raise TimeoutError(f"no result from {missing}")
        time.sleep(0.02)


def _lines(path: Path) -> list[str]:
    return path.read_text(encoding="utf-8").splitlines() if path.exists() else []


def phase_of(markers: list[str]) -> str:
    """Where a kill landed, from the markers after the last call the child began."""
    calls = [i for i, line in enumerate(markers) if line.startswith("call ")]
    if not calls or markers[-1] == "finished":
        return "after the job finished" if markers and markers[-1] == "finished" else "at start"
    after = markers[calls[-1] + 1 :]
    if any(line.startswith(("done", "skip")) for line in after):
        return "between calls"
    if "committed" in after:
        return "after commit"
    if "commit" in after:
        return "during commit"
    if "begin" in after:
        return "inside the transaction"
    return "before the transaction"


@dataclass
class CrashReport:
    kills: int = 0
    phases: Counter[str] = field(default_factory=Counter)
    rounds: int = 0

    def summary(self) -> str:
        return ", ".join(f"{count} {phase}" for phase, count in self.phases.most_common())


def crash_rounds(
    zygote: Zygote,
    job: str,
    args: dict[str, Any],
    folder: Path,
    check: Callable[[], object],
    *,
    kills: int,
    window: float,
    seed: int,
) -> CrashReport:
    """Fork the job, SIGKILL it at a random moment within ``window`` s of a call starting,
    check the database, and again — ``kills`` times; then let one round run to the end.

    ``check`` raises when the database is not whole; what it returns is not used."""
    rng = random.Random(seed)
    report = CrashReport()
    while report.kills < kills:
        markers = folder / f"markers-{report.rounds}.txt"
        pid = zygote.fork(job, {**args, "markers": str(markers)})
        report.rounds += 1
        if not _wait_for_call(zygote, markers, pid):
            break  # the job finished before a kill could land: nothing left to interrupt
        _pause(rng, report.rounds, window, markers)
        zygote.kill(pid)
        _wait_gone(zygote, pid)
        phase = phase_of(_lines(markers))
        check()
        if phase == "after the job finished":
            break  # everything was done before the kill: nothing left to interrupt
        report.kills += 1
        report.phases[phase] += 1
    final = folder / "markers-final.txt"
    pid = zygote.fork(job, {**args, "markers": str(final)})
    _wait_gone(zygote, pid, timeout=300)
    assert _lines(final)[-1:] == ["finished"], _lines(final)[-5:]
    check()
    return report


def _pause(rng: random.Random, round_number: int, window: float, markers: Path) -> None:
    """When to kill: mostly at a random moment; every fourth round the instant a commit
    starts (to hit the commit itself), and every fourth the instant the call begins."""
    style = round_number % 4
    if style == 3:
        return
    if style == 2:
        deadline = time.monotonic() + window
        while time.monotonic() < deadline and "commit" not in _lines(markers)[-3:]:
            time.sleep(0.0005)
        return
    time.sleep(rng.uniform(0, window))


def _wait_for_call(zygote: Zygote, markers: Path, pid: int, timeout: float = 60) -> bool:
    """True once the child has begun a call; False if it finished (or died) first."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        lines = _lines(markers)
        if any(line.startswith("call ") for line in lines):
            return True
        if "finished" in lines or not zygote.owns(pid):
            return False
        time.sleep(0.002)
    raise TimeoutError(f"child {pid} never started a call")


def _wait_gone(zygote: Zygote, pid: int, timeout: float = 30) -> None:
    deadline = time.monotonic() + timeout
    while zygote.owns(pid):
        if time.monotonic() > deadline:
            zygote.kill(pid)
            raise TimeoutError(f"child {pid} still running after {timeout} s")
        time.sleep(0.005)
