"""Peak memory of one command, measured in a fresh child process.

``resource.getrusage(RUSAGE_CHILDREN).ru_maxrss`` is the largest resident set of any child a
process has waited for (KiB on Linux). The test process has had many children, so each
measurement goes through a small driver interpreter whose only child is the command: the
driver's figure is that command's peak alone. The baseline is a child that only imports
what the command imports, so the difference is what the file cost.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

_DRIVER = (
    "import json, resource, subprocess, sys\n"
    "done = subprocess.run(sys.argv[1:], capture_output=True, text=True)\n"
    "peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss\n"
    "print(json.dumps([peak, done.returncode, done.stdout[-4000:], done.stderr[-4000:]]))\n"
)
MIB = 1024 * 1024


@dataclass(frozen=True)
class Measured:
    peak_mib: float
    exit_code: int
    stdout: str
    stderr: str


def measure(argv: list[str]) -> Measured:
    """Run ``argv`` as the driver's only child; its peak resident memory and its output."""
    keep = ("TRACKER_CONFIG_DIR", "TRACKER_PASSPHRASE")  # the session's key files, unlocked
    env = {k: v for k, v in os.environ.items() if not k.startswith("TRACKER_") or k in keep}
    found = subprocess.run(
        [sys.executable, "-c", _DRIVER, *argv], capture_output=True, text=True, env=env, check=True
    )
    peak_kib, code, out, err = json.loads(found.stdout)
    return Measured(peak_kib / 1024, code, out, err)


def tracker(db: Path, *args: str, actor: str | None = None) -> list[str]:
    """The argv of ``tracker --db DB [--as ACTOR] --json ARGS`` in a fresh interpreter."""
    who = ["--as", actor] if actor else []
    return [sys.executable, "-m", "tracker", "--db", str(db), *who, "--json", *args]


def baseline(*modules: str) -> float:
    """The peak of a child that only imports ``modules`` (what the command will load)."""
    code = "import " + ", ".join(["tracker.cli", *modules])
    return measure([sys.executable, "-c", code]).peak_mib


def file_mib(path: Path) -> float:
    return path.stat().st_size / MIB
