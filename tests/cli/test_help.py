"""Every command the CLI exposes has help and a worked example, discovered by walking the tree.

Nothing here lists commands by hand: a command added without help or without an
"Example:" epilog fails these tests by itself.
"""

from __future__ import annotations

import subprocess
import sys
from collections.abc import Iterator
from typing import Any

import pytest
import typer

from tests.cli.conftest import invoke, subcommands
from tracker.cli import BY_NAME, COMMANDS, app, load


def _walk(command: Any, path: tuple[str, ...] = ()) -> Iterator[tuple[tuple[str, ...], Any]]:
    yield path, command
    for name, sub in sorted(subcommands(command).items()):
        yield from _walk(sub, (*path, name))


TREE = list(_walk(typer.main.get_command(app)))
LEAVES = [(path, cmd) for path, cmd in TREE if not subcommands(cmd)]
GROUPS = [(path, cmd) for path, cmd in TREE if path and subcommands(cmd)]
ROOT = TREE[0][1]


def _id(path: tuple[str, ...]) -> str:
    return " ".join(path) or "tracker"


def test_the_walk_finds_nested_commands() -> None:
    # Guard against a walk that silently finds nothing (e.g. a Click/Typer type change).
    assert len(LEAVES) >= 20
    assert any(len(path) == 2 for path, _ in LEAVES), "no sub-commands discovered"
    assert GROUPS, "no command groups discovered"


def _assert_documented(command: Any) -> None:
    assert (command.help or "").strip(), "empty help"
    assert "Example:" in (command.epilog or ""), "no 'Example:' in the epilog"


@pytest.mark.parametrize(("path", "command"), LEAVES, ids=[_id(p) for p, _ in LEAVES])
def test_command_has_help_and_example(path: tuple[str, ...], command: Any) -> None:
    _assert_documented(command)
    result = invoke(*path, "--help")
    assert result.exit_code == 0, result.stderr
    # Help text is re-wrapped for the terminal: compare word sequences, not lines.
    assert " ".join(command.help.split()[:6]) in " ".join(result.stdout.split())
    assert "Example:" in result.stdout


def test_root_has_help_and_example() -> None:
    _assert_documented(ROOT)
    result = invoke("--help")
    assert result.exit_code == 0
    assert "Example:" in result.stdout
    for name in subcommands(ROOT):
        assert name in result.stdout


@pytest.mark.parametrize(("path", "command"), GROUPS, ids=[_id(p) for p, _ in GROUPS])
def test_group_help_exits_zero_and_lists_its_commands(path: tuple[str, ...], command: Any) -> None:
    assert (command.help or "").strip()
    result = invoke(*path, "--help")
    assert result.exit_code == 0, result.stderr
    for name in subcommands(command):
        assert name in result.stdout


@pytest.mark.parametrize(("path", "command"), GROUPS, ids=[_id(p) for p, _ in GROUPS])
def test_group_has_example_epilog(path: tuple[str, ...], command: Any) -> None:
    _assert_documented(command)
    assert "Example:" in invoke(*path, "--help").stdout


@pytest.mark.parametrize("entry", COMMANDS, ids=[entry.name for entry in COMMANDS])
def test_the_table_lists_each_command_as_its_own_help_says(entry: Any) -> None:
    """`tracker --help` lists commands from the table without loading them: each line must
    be what the command itself says, and each command of a module must be in the table."""
    assert load(entry).get_short_help_str(10_000) == entry.help


def test_every_command_of_every_module_is_in_the_table() -> None:
    for entry in COMMANDS:
        if not entry.group:
            group = load(BY_NAME[entry.name])
            assert group is not None
    modules = {entry.module for entry in COMMANDS if not entry.group}
    for module in modules:
        from tracker.cli import _module_commands

        for name in _module_commands(module, None).commands:
            assert BY_NAME[name].module == module, name


@pytest.mark.parametrize("asked", ["--version", "--help"])
def test_version_and_help_load_no_command_service_or_database_library(asked: str) -> None:
    code = (
        "import atexit, sys\n"
        "heavy = ('sqlalchemy', 'tracker.cli.groups', 'tracker.services',\n"
        "    'tracker.domain.models')\n"
        "atexit.register(lambda: print('LOADED', *sorted(\n"
        "    m for m in sys.modules if m.startswith(heavy))))\n"
        f"sys.argv = ['tracker', {asked!r}]\n"
        "from tracker.cli import main\n"
        "main()\n"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    loaded = result.stdout.strip().splitlines()[-1]
    assert loaded == "LOADED", loaded
