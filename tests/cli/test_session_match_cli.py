"""Matching a session's unmatched rows from the command line, on the demo's calcium rerun
(whose samples were typed at the instrument by catalogue number or by the lab's own name)."""

from __future__ import annotations

import shlex
from pathlib import Path

import pytest
import typer

from tests.cli.conftest import counts, invoke, ok_json, subcommands
from tracker.cli import app
from tracker.domain.ids import Kind, format_id

TECH = "priya"  # a technician of demo_db/scenario.toml
RERUN = "IS-00003-6"  # the demo's third session (demo_db/scenario.toml: "ca-rerun")
NICKNAMED = 6  # its run named "tooth 14 rerun"
SR_CUT = "CU-00012-F"  # the demo's first strontium cut


def example(command: str) -> list[str]:
    """The command's own help example, as the words a shell would pass."""
    group = subcommands(typer.main.get_command(app))["session"]
    epilog = str(subcommands(group)[command].epilog)
    assert epilog.startswith("Example: tracker ")
    return shlex.split(epilog.removeprefix("Example: tracker "))


@pytest.mark.parametrize("command", ["match", "match-names"])
def test_each_help_example_works_on_the_demo(demo: Path, command: str) -> None:
    before = counts(demo)
    result = invoke(*example(command), db=demo)
    assert result.exit_code == 0, result.stderr
    after = counts(demo)
    assert after["custody_event"] == before["custody_event"] + 1
    assert after["measurement"] == before["measurement"]


def test_names_then_a_row_by_hand_then_a_result_for_every_cut(demo: Path) -> None:
    answer = ok_json(invoke("session", "match-names", RERUN, db=demo, actor=TECH, as_json=True))
    matched = {row["run_order"]: row["target"] for row in answer["item"]["matched"]}
    left = {row["run_order"]: row["reason"] for row in answer["item"]["unmatched"]}
    assert set(matched) == {2, 4} and set(left) == {NICKNAMED}
    cut = format_id(Kind.CUT, 4)  # the demo's cut of KFMNH P 20313, the nicknamed tooth
    answer = ok_json(
        invoke("session", "match", RERUN, str(NICKNAMED), cut, db=demo, actor=TECH, as_json=True)
    )
    assert answer["item"]["matched"]["target"] == cut
    reduced = ok_json(invoke("session", "reduce", RERUN, db=demo, actor=TECH, as_json=True))
    targets = {line["target"] for line in reduced["item"]["results"]}
    assert {*matched.values(), cut} <= targets
    assert reduced["item"]["unmatched"] == 0


@pytest.mark.parametrize(
    ("run", "target", "code", "fragment"),
    [
        (1, "CU-00004-F", 1, "matched already, as the bracketing standard"),
        (NICKNAMED, SR_CUT, 1, "Sr batch"),
        (NICKNAMED, format_id(Kind.CUT, 999), 2, "no cut has this ID"),
        (NICKNAMED, "CU-00004-X", 2, "check character"),
        (99, "CU-00004-F", 2, "no such run"),
    ],
)
def test_refusals_say_one_line_and_write_nothing(
    demo: Path, run: int, target: str, code: int, fragment: str
) -> None:
    before = counts(demo)
    result = invoke("session", "match", RERUN, str(run), target, db=demo, actor=TECH)
    assert result.exit_code == code, result.stderr
    assert fragment in result.stderr and len(result.stderr.strip().splitlines()) == 1
    assert counts(demo) == before
