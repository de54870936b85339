"""``tracker batch remove``: a column scanned by mistake taken off, answered in JSON and in
words; a column that has run is refused in one line and nothing is written."""

from __future__ import annotations

from datetime import date
from typing import Any

from tests.cli.conftest import Lab, counts, invoke, ok_json
from tracker.cli.groups.batch import BATCH_REMOVE_EPILOG

REASON = "scanned the neighbouring tube by mistake"


def _run(lab: Lab, *args: str) -> Any:
    return ok_json(invoke(*args, db=lab.path, actor=lab.technician, as_json=True))["item"]


def _batch_with_a_sample(lab: Lab) -> tuple[str, str, str]:
    aliquot = _run(
        lab, "aliquot", lab.solution, "--tare", "3.1021 g", "--gross", "3.1253 g", "--to", lab.box
    )["id"]
    batch = _run(
        lab,
        "batch",
        "create",
        "--name",
        "Ca CLI-1",
        "--date",
        date.today().isoformat(),
        "--element",
        "Ca",
        "--resin",
        "DGA",
        "--scheme",
        "load; elute",
        "--cuts",
        "matrix,Ca",
    )["id"]
    position = _run(lab, "batch", "add", batch, "--sample", aliquot)["id"]
    return batch, aliquot, position


def test_remove_answers_in_json_and_frees_the_slot(lab: Lab) -> None:
    batch, aliquot, position = _batch_with_a_sample(lab)
    before = counts(lab.path)
    answer = ok_json(
        invoke(
            "batch",
            "remove",
            position,
            "--reason",
            REASON,
            db=lab.path,
            actor=lab.technician,
            as_json=True,
        )
    )
    assert counts(lab.path)["ledger_head"] == before["ledger_head"] + 1
    item = answer["item"]
    assert (item["id"], item["batch"], item["slot"], item["reason"]) == (position, batch, 1, REASON)
    assert item["holds"] == aliquot
    shown = ok_json(invoke("batch", "show", batch, db=lab.path, as_json=True))
    assert shown["positions"] == [] and [r["id"] for r in shown["removed"]] == [position]
    words = invoke("batch", "show", batch, db=lab.path)
    assert words.exit_code == 0 and REASON in " ".join(words.stdout.split())
    again = _run(lab, "batch", "add", batch, "--sample", aliquot)
    assert again["slot"] == 1 and again["id"] != position


def test_a_column_with_a_cut_is_refused_in_one_line(lab: Lab) -> None:
    _, _, position = _batch_with_a_sample(lab)
    _run(lab, "batch", "cut", position, "--cut", "Ca", "--recovered", "9.9 ug")
    before = counts(lab.path)
    result = invoke(
        "batch", "remove", position, "--reason", REASON, db=lab.path, actor=lab.technician
    )
    assert result.exit_code == 1
    [line] = result.stderr.strip().splitlines()
    assert position in line and "dispose of its cuts" in line
    assert counts(lab.path) == before


def test_the_example_runs_on_a_fresh_lab(lab: Lab) -> None:
    # the epilog names the second column position of a fresh lab: a sample, then a blank
    batch, _, _ = _batch_with_a_sample(lab)
    second = _run(lab, "batch", "add", batch, "--blank")["id"]
    command, reason = BATCH_REMOVE_EPILOG.removeprefix("Example: tracker ").split(" --reason ")
    assert second in command.split()
    answer = ok_json(
        invoke(
            *command.split(),
            "--reason",
            reason.strip("'"),
            db=lab.path,
            actor=lab.technician,
            as_json=True,
        )
    )
    assert answer["item"]["id"] == second and answer["item"]["slot"] == 2
