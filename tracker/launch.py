"""The ``tracker`` command's entry point: the terminal interface at once, or the command line.

``tracker`` alone at a terminal (at most ``--db`` and ``--as`` given) opens the interface
without loading the command line's modules — Typer and every command — which would only
delay the first screen; anything else goes to :mod:`tracker.cli` as before.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from tracker.db.location import default_database

GLOBAL_OPTIONS = {"--db": "TRACKER_DB", "--as": "TRACKER_OPERATOR"}  # option -> its variable


@dataclass(frozen=True)
class Interface:
    """What the interface is opened on: the database and the operator named (if any)."""

    target: str
    operator: str | None


def interface_only(args: Sequence[str], env: Mapping[str, str]) -> Interface | None:
    """The interface asked for when ``args`` are only --db/--as (each once); else None.

    Anything else — a command, --json, --help, a repeated or unknown option, an option
    without its value — is the command line's to read (and to refuse, if it must).
    """
    given: dict[str, str] = {}
    rest = list(args)
    while rest:
        word = rest.pop(0)
        name, sep, value = word.partition("=")
        if name not in GLOBAL_OPTIONS or name in given:
            return None
        if not sep:
            if not rest:
                return None
            value = rest.pop(0)
        if not value or value.startswith("-"):
            return None
        given[name] = value
    target = given.get("--db") or env.get("TRACKER_DB") or str(default_database())
    return Interface(target, given.get("--as") or env.get("TRACKER_OPERATOR") or None)


def main() -> None:
    """Console-script entry point."""
    asked = interface_only(sys.argv[1:], os.environ)
    if asked is not None and sys.stdin.isatty() and sys.stdout.isatty():
        from tracker.ui import run_tui

        sys.exit(run_tui(asked.target, asked.operator))
    from tracker.cli import main as command_line

    command_line()
