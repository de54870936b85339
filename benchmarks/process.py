"""Timing a whole process as a person meets it: wall time, CPU time and peak memory.

The command is started by a small launcher interpreter rather than by the benchmark itself:
the kernel's peak-memory figure for a child also counts the pages of the process that forked
it, and the benchmark holds a large database's worth. The launcher (the standard library
only, isolated from the user's site) starts the command, waits for it with ``os.wait4`` and
prints the child's own resource use as one JSON line. A command that runs past its timeout
is killed and reported as giving no answer, never waited for.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path

TIMEOUT = 600.0  # seconds: no figure may hang the run

LAUNCHER = """
import json, os, subprocess, sys, time
argv, out, err, timeout = json.loads(sys.argv[1]), sys.argv[2], sys.argv[3], float(sys.argv[4])
with open(out, "wb") as sink, open(err, "wb") as trouble:
    started = time.perf_counter()
    child = subprocess.Popen(argv, stdin=subprocess.DEVNULL, stdout=sink, stderr=trouble)
    while True:
        pid, status, usage = os.wait4(child.pid, os.WNOHANG)
        if pid:
            break
        if time.perf_counter() - started > timeout:
            child.kill()
            pid, status, usage = os.wait4(child.pid, 0)
            status = -1
            break
        time.sleep(0.0005)
    wall = time.perf_counter() - started
code = os.waitstatus_to_exitcode(status) if status != -1 else None
cpu = usage.ru_utime + usage.ru_stime
print(json.dumps({"wall": wall, "cpu": cpu, "peak_mb": usage.ru_maxrss / 1024, "code": code}))
"""


@dataclass(frozen=True)
class ProcessRun:
    wall: float  # seconds from start to exit
    cpu: float  # user + system seconds of the command's own process
    peak_mb: float  # its peak resident memory (ru_maxrss)
    code: int | None  # exit code; None when it ran past the timeout and was killed
    stdout: str
    stderr: str

    @property
    def answered(self) -> bool:
        return self.code is not None


def run_process(argv: list[str], env: dict[str, str], timeout: float = TIMEOUT) -> ProcessRun:
    """Run ``argv`` from a fresh launcher; its times, peak memory and output."""
    with tempfile.TemporaryDirectory(prefix="tracker-bench-run-") as folder:
        out, err = Path(folder, "out"), Path(folder, "err")
        launched = subprocess.run(
            [
                sys.executable,
                "-I",
                "-c",
                LAUNCHER,
                json.dumps(argv),
                str(out),
                str(err),
                f"{timeout}",
            ],
            env=env,
            stdin=subprocess.DEVNULL,
            capture_output=True,
            text=True,
            check=True,
        )
        said = json.loads(launched.stdout.strip().splitlines()[-1])
        return ProcessRun(
            said["wall"],
            said["cpu"],
            said["peak_mb"],
            said["code"],
            out.read_text(encoding="utf-8", errors="replace"),
            err.read_text(encoding="utf-8", errors="replace"),
        )
