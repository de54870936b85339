"""The console script opens the interface at once only for ``tracker`` with --db/--as.

Everything else goes to the command line unchanged, which reads (or refuses) it itself.
"""

from __future__ import annotations

import subprocess
import sys

import pytest

from tracker.db.location import default_database
from tracker.launch import Interface, interface_only

ENV = {"TRACKER_DB": "env.sqlite", "TRACKER_OPERATOR": "priya"}


@pytest.mark.parametrize(
    ("args", "env", "expected"),
    [
        ([], {}, Interface(str(default_database()), None)),
        ([], ENV, Interface("env.sqlite", "priya")),
        (["--db", "lab.sqlite"], ENV, Interface("lab.sqlite", "priya")),
        (["--db=lab.sqlite", "--as", "ines"], {}, Interface("lab.sqlite", "ines")),
        (
            ["--as=ines", "--db", "postgresql://lab@db/tracker"],
            {},
            Interface("postgresql://lab@db/tracker", "ines"),
        ),
    ],
)
def test_only_db_and_as_open_the_interface_directly(
    args: list[str], env: dict[str, str], expected: Interface
) -> None:
    assert interface_only(args, env) == expected


@pytest.mark.parametrize(
    "args",
    [
        ["overview"],
        ["--json"],
        ["--help"],
        ["--version"],
        ["--db"],
        ["--db", "--as", "x"],
        ["--db", "a.sqlite", "--db", "b.sqlite"],
        ["--as", "ines", "show", "SP-00001-W"],
        ["--db="],
        ["--operator", "ines"],
    ],
)
def test_anything_else_is_the_command_lines(args: list[str]) -> None:
    assert interface_only(args, ENV) is None


def test_piped_tracker_still_prints_the_overview_through_the_command_line(
    demo_db: object,
) -> None:
    result = subprocess.run(
        [sys.executable, "-m", "tracker", "--db", str(demo_db), "--json"],
        capture_output=True,
        text=True,
        timeout=120,
        stdin=subprocess.DEVNULL,
    )
    assert result.returncode == 0, result.stderr
    assert '"reference"' in result.stdout and "KF-2026-014" in result.stdout
    plain = subprocess.run(
        [sys.executable, "-m", "tracker", "--db", str(demo_db)],
        capture_output=True,
        text=True,
        timeout=120,
        stdin=subprocess.DEVNULL,
    )
    assert plain.returncode == 0 and "KF-2026-014" in plain.stdout  # not a TTY: printed
