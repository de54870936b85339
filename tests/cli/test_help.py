"""Every command the CLI exposes has help and a worked example, discovered by walking the tree.

Nothing here lists commands by hand: a command added without help or without an
"Example:" epilog fails these tests by itself.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest
import typer

from tests.cli.conftest import invoke
from tracker.cli import app


def _walk(command: Any, path: tuple[str, ...] = ()) -> Iterator[tuple[tuple[str, ...], Any]]:
    yield path, command
    for name, sub in sorted(getattr(command, "commands", {}).items()):
        yield from _walk(sub, (*path, name))


TREE = list(_walk(typer.main.get_command(app)))
LEAVES = [(path, cmd) for path, cmd in TREE if not getattr(cmd, "commands", None)]
GROUPS = [(path, cmd) for path, cmd in TREE if path and getattr(cmd, "commands", None)]
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
    for name in ROOT.commands:
        assert name in result.stdout


@pytest.mark.parametrize(("path", "command"), GROUPS, ids=[_id(p) for p, _ in GROUPS])
def test_group_help_exits_zero_and_lists_its_commands(path: tuple[str, ...], command: Any) -> None:
    assert (command.help or "").strip()
    result = invoke(*path, "--help")
    assert result.exit_code == 0, result.stderr
    for name in command.commands:
        assert name in result.stdout


@pytest.mark.parametrize(("path", "command"), GROUPS, ids=[_id(p) for p, _ in GROUPS])
def test_group_has_example_epilog(path: tuple[str, ...], command: Any) -> None:
    _assert_documented(command)
    assert "Example:" in invoke(*path, "--help").stdout
