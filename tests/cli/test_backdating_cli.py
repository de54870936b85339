"""Backdating through the CLI: the window as a lab setting, and dated entries refused in one
line that names the option a person typed (`--at`)."""

from __future__ import annotations

from tests.cli.budget_book import refused
from tests.cli.conftest import Lab, counts, invoke, ok_json


def test_the_backdating_window_is_shown_and_set_by_managers(lab: Lab) -> None:
    shown = invoke("backdating-window", db=lab.path)
    assert shown.exit_code == 0 and shown.stdout.strip() == (
        "backdating window: 4 days (tracker's default)"
    )
    before = counts(lab.path)
    line = refused(
        invoke("backdating-window", "2 days", db=lab.path, actor=lab.technician), 1, "--as"
    )
    assert lab.manager in line
    assert "WINDOW: '4'" in refused(
        invoke("backdating-window", "4", db=lab.path, actor=lab.manager), 2, "WINDOW"
    )
    assert counts(lab.path) == before
    answer = ok_json(
        invoke("backdating-window", "36 hours", db=lab.path, actor=lab.manager, as_json=True)
    )
    assert answer["item"] == {"hours": 36, "said": "36 hours", "default": False}
    shown = ok_json(invoke("backdating-window", db=lab.path, as_json=True))
    assert shown == {"hours": 36, "said": "36 hours", "default": False}


def test_a_drill_dated_before_its_check_in_is_one_line_naming_at(lab: Lab) -> None:
    before = counts(lab.path)
    drill = (
        "drill",
        lab.on_hand,
        "--tissue",
        "enamel",
        "--tare",
        "1.000 mg",
        "--gross",
        "1.300 mg",
        "--at",
        "1999-06-01T10:00:00Z",
    )
    result = invoke(*drill, db=lab.path, actor=lab.manager)
    assert result.exit_code == 1
    (line,) = result.stderr.splitlines()  # one line (its value is a time: colons inside)
    assert line.startswith("error: --at: '1999-06-01T10:00:00.000000Z': is before ")
    assert f"{lab.on_hand} was checked in (" in line
    assert counts(lab.path) == before
