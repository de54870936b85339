"""How the interface is reached: ``tracker`` and ``tracker demo`` open it on a terminal and
print the overview otherwise (pipes, scripts, CliRunner)."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from tests.cli.conftest import invoke
from tracker.cli import app
from tracker.cli.groups import inspecting
from tracker.ui.scan import BurstDetector


def test_piped_tracker_prints_the_overview(tmp_path: Path) -> None:
    db = tmp_path / "demo.sqlite"
    built = invoke("demo", "--out", str(db))  # not a terminal: builds and prints, no interface
    assert built.exit_code == 0 and "KF-2026-014" in built.stdout
    shown = invoke(db=db)
    assert shown.exit_code == 0 and "Loans, most urgent first" in shown.stdout


def test_demo_no_open_prints_the_overview(tmp_path: Path) -> None:
    result = invoke("demo", "--out", str(tmp_path / "d.sqlite"), "--no-open")
    assert result.exit_code == 0 and "MDGC/LN/0457" in result.stdout


def test_on_a_terminal_the_interface_opens(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    opened: list[tuple[str, str | None]] = []

    def run_tui(target: str, operator: str | None) -> int:
        opened.append((target, operator))
        return 0

    monkeypatch.setattr(inspecting, "interactive", lambda ctx: True)
    monkeypatch.setattr("tracker.ui.run_tui", run_tui)
    result = invoke("demo", "--out", str(tmp_path / "d.sqlite"), actor="ines")
    assert result.exit_code == 0
    assert opened == [(str(tmp_path / "d.sqlite"), "ines")]


@pytest.mark.parametrize(
    ("argv", "env", "expected"),
    [
        (["--db", "lab.sqlite", "--as", "ines"], {}, ("lab.sqlite", "ines")),
        (["--as=ines", "--db=lab.sqlite"], {}, ("lab.sqlite", "ines")),
        ([], {"TRACKER_DB": "env.sqlite", "TRACKER_OPERATOR": "priya"}, ("env.sqlite", "priya")),
        (["--db", "lab.sqlite"], {"TRACKER_OPERATOR": "priya"}, ("lab.sqlite", "priya")),
        (["--db", "postgresql://lab@db/tracker"], {}, ("postgresql://lab@db/tracker", None)),
    ],
)
def test_tracker_alone_opens_the_interface_with_the_options_the_command_line_read(
    argv: list[str],
    env: dict[str, str],
    expected: tuple[str, str | None],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """One reading of --db/--as (Typer's, with TRACKER_DB/TRACKER_OPERATOR): the interface
    gets what the commands would have got."""
    opened: list[tuple[str, str | None]] = []

    def run_tui(target: str, operator: str | None) -> int:
        opened.append((target, operator))
        return 0

    monkeypatch.setattr(inspecting, "interactive", lambda ctx: True)
    monkeypatch.setattr("tracker.ui.run_tui", run_tui)
    clean: dict[str, str | None] = {"TRACKER_DB": None, "TRACKER_OPERATOR": None, **env}
    result = CliRunner().invoke(app, argv, env=clean, catch_exceptions=False)
    assert result.exit_code == 0, result.stdout
    assert opened == [expected]


def test_a_mistyped_global_option_is_refused_not_opened(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(inspecting, "interactive", lambda ctx: True)
    monkeypatch.setattr("tracker.ui.run_tui", lambda target, operator: pytest.fail("opened"))
    result = CliRunner().invoke(app, ["--operator", "ines"])
    assert result.exit_code == 2 and "--operator" in result.output


def test_bursts_are_scans_and_typing_is_not() -> None:
    scanner = BurstDetector(gap=0.04)
    for index, char in enumerate("SP00011S"):
        scanner.feed(char, 10.0 + index * 0.005)
    assert scanner.enter(10.045) == "SP00011S"
    person = BurstDetector(gap=0.04)
    for index, char in enumerate("SP00011S"):
        person.feed(char, 10.0 + index * 0.15)
    assert person.enter(11.3) is None
    late = BurstDetector(gap=0.04)
    for index, char in enumerate("SP00011S"):
        late.feed(char, 10.0 + index * 0.005)
    assert late.enter(12.0) is None  # Enter long after the burst: a person pressed it
