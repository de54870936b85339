"""Services and the domain speak of fields, never of one front end's flags or commands.

A refusal names the domain field (``operator``, ``database``, ``anchor file``); the
command line words it as ``--as``/``--db`` with its hints, the interface in its own terms.
So no string in tracker/services or tracker/domain (docstrings aside) may name a flag
(``--as``) or a backticked command (`` `tracker key new` ``).
"""

from __future__ import annotations

import ast
import re
from collections.abc import Iterator
from pathlib import Path

import tracker

FLAG = re.compile(r"(?<![-\w])--[a-z]")  # "--as", " --print"; not "-----BEGIN"
ROOT = Path(tracker.__file__).parent
CHECKED = [ROOT / "services", ROOT / "domain"]


def _docstrings(tree: ast.AST) -> set[int]:
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Module | ast.ClassDef | ast.FunctionDef | ast.AsyncFunctionDef):
            first = node.body[0] if node.body else None
            if isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant):
                found.add(id(first.value))
    return found


def front_end_words(source: str) -> Iterator[tuple[int, str]]:
    """(line, text) of every string constant, f-string parts included, that names a flag or
    a backticked tracker command."""
    tree = ast.parse(source)
    docstrings = _docstrings(tree)
    for node in ast.walk(tree):
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            if id(node) in docstrings:
                continue
            if FLAG.search(node.value) or "`tracker " in node.value:
                yield node.lineno, node.value


def test_the_check_finds_flags_and_commands() -> None:
    # A check that finds nothing would pass below; these are what it must catch.
    said = 'raise InputError("--as", None, f"see `tracker operator list` {x}")\n'
    assert [text for _, text in front_end_words(said)] == ["--as", "see `tracker operator list` "]
    assert not list(front_end_words('"""Run `tracker init` --db first."""\nx = "-----BEGIN"\n'))


def test_services_and_domain_name_no_flag_or_command() -> None:
    files = [path for folder in CHECKED for path in sorted(folder.rglob("*.py"))]
    assert len(files) > 60
    found = [
        f"{path.relative_to(ROOT.parent)}:{line}: {text!r}"
        for path in files
        for line, text in front_end_words(path.read_text(encoding="utf-8"))
    ]
    assert not found, "\n".join(found)
