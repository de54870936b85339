"""How the interface is reached: ``tracker`` and ``tracker demo`` open it on a terminal and
print the overview otherwise (pipes, scripts, CliRunner)."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.conftest import invoke
from tracker.cli import cmd_inspect
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

    monkeypatch.setattr(cmd_inspect, "interactive", lambda ctx: True)
    monkeypatch.setattr("tracker.ui.run_tui", run_tui)
    result = invoke("demo", "--out", str(tmp_path / "d.sqlite"), actor="ines")
    assert result.exit_code == 0
    assert opened == [(str(tmp_path / "d.sqlite"), "ines")]


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
