"""A throwaway PostgreSQL server for the test session (and, when asked, for the benchmark).

Order of preference (tests/conftest.py): ``TRACKER_TEST_PG_URL`` (CI starts a cluster and
exports it); else, where PostgreSQL's server binaries are installed, :func:`private_cluster`
starts a cluster in a temporary directory, listening on 127.0.0.1 only, with ``fsync=off``
(nothing in it is meant to survive), and deletes it afterwards; else the PostgreSQL tests are
skipped with the reason printed — unless ``TRACKER_REQUIRE_PG=1`` (CI), which turns that into
a failure. ``initdb`` and ``pg_ctl`` refuse to run as root, so as root they run as the
``postgres`` user. tracker itself never starts a server: this lives with the tests, and the
benchmark borrows it only for ``python -m benchmarks run --pg-cluster``.
"""

from __future__ import annotations

import os
import shutil
import socket
import subprocess
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path


def server_binaries() -> Path | None:
    candidates = sorted(
        (str(p) for p in Path("/usr/lib/postgresql").glob("*/bin")), key=_version_key
    )
    for folder in reversed(candidates):
        if Path(folder, "initdb").exists() and Path(folder, "pg_ctl").exists():
            return Path(folder)
    found = shutil.which("initdb")
    return Path(found).parent if found else None


def _version_key(path: str) -> tuple[int, ...]:
    part = Path(path).parent.name
    return tuple(int(p) for p in part.split(".") if p.isdigit())


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


def _as_postgres(command: list[str]) -> list[str]:
    """initdb and pg_ctl refuse to run as root: drop to the postgres user when we are root."""
    if os.geteuid() == 0:
        return ["runuser", "-u", "postgres", "--", *command]
    return command


@contextmanager
def private_cluster(binaries: Path, *settings: str) -> Iterator[str]:
    """Start a cluster on 127.0.0.1 only, yield its URL, stop and delete it afterwards.

    ``settings`` are extra ``-c name=value`` server settings (the benchmark gives it more
    memory than the tests need).
    """
    root = Path(tempfile.mkdtemp(prefix="tracker-pg-"))
    if os.geteuid() == 0:
        shutil.chown(root, "postgres", "postgres")
    data, port = root / "data", _free_port()

    def run(*args: object) -> None:
        subprocess.run(_as_postgres([str(a) for a in args]), check=True, capture_output=True)

    options = " ".join(
        [f"-c listen_addresses=127.0.0.1 -p {port} -k {root} -c fsync=off"]
        + [f"-c {setting}" for setting in settings]
    )
    try:
        run(
            binaries / "initdb",
            "-D",
            data,
            "-U",
            "postgres",
            "-A",
            "trust",
            "-E",
            "UTF8",
            "--no-sync",
        )
        run(
            binaries / "pg_ctl",
            "-D",
            data,
            "-l",
            root / "server.log",
            "-w",
            "-t",
            "60",
            "-o",
            options,
            "start",
        )
        yield f"postgresql+psycopg://postgres@127.0.0.1:{port}/postgres"
    finally:
        if data.exists():
            subprocess.run(
                _as_postgres(
                    [str(binaries / "pg_ctl"), "-D", str(data), "-m", "fast", "-w", "stop"]
                ),
                capture_output=True,
            )
        time.sleep(0.1)
        shutil.rmtree(root, ignore_errors=True)
