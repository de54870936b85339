"""`tracker correct ...` on a real file: the history keeps both values, refusals are one line."""

from __future__ import annotations

import pytest

from tests.cli.budget_book import validate
from tests.cli.conftest import Lab, counts, invoke, ok_json

WHY = "gross copied from the neighbouring vial's line"


def test_a_technician_corrects_their_own_weighing_and_show_has_both(lab: Lab) -> None:
    answer = ok_json(
        invoke(
            "correct",
            "weighing",
            lab.powder,
            "--tare",
            "1203.557 mg",
            "--gross",
            "1206.181 mg",
            "--reason",
            WHY,
            db=lab.path,
            actor=lab.technician,
            as_json=True,
        )
    )
    validate(answer, "correction.schema.json")
    # by hand: 1206.181 − 1203.557 = 2.624 mg (it was 1206.118 − 1203.557 = 2.561 mg)
    assert answer["item"]["value"]["mass_mg"] == "2.624"  # measured values: their digits
    assert answer["item"]["replaced"]["mass_mg"] == "2.561"
    shown = ok_json(invoke("show", lab.powder, db=lab.path, as_json=True))
    assert shown["item"]["facts"]["mass_mg"] == "2.624"
    masses = {
        e["action"]: (e["payload"].get("mass_mg") or e["payload"].get("value", {}).get("mass_mg"))
        for e in shown["history"]
    }
    assert masses["powder.drilled"] == "2.561"
    assert masses["powder.corrected"] == "2.624"
    listed = ok_json(invoke("correct", "list", lab.powder, db=lab.path, as_json=True))
    assert [(c["recorded_by"], c["entry_by"], c["reason"]) for c in listed] == [
        (lab.technician, lab.technician, WHY)
    ]
    human = invoke("correct", "list", db=lab.path)
    assert human.exit_code == 0 and lab.powder in human.stdout


def test_correcting_someone_elses_entry_is_refused_in_one_line_until_a_manager_does_it(
    lab: Lab,
) -> None:
    public = lab.path.with_name("wren.pub")
    ok_json(invoke("key", "new", "--out", str(public), actor="wren", as_json=True))
    named = ("--name", "Wren Tallis", "--key", str(public))
    ok_json(invoke("operator", "add", "wren", *named, db=lab.path, actor=lab.manager, as_json=True))
    argv = (
        "correct",
        "concentration",
        lab.solution,
        "--element",
        "Ca",
        "--value",
        "405 ug/g",
        "--rel-u",
        "1.5",
        "--reason",
        "dilution factor applied twice",
    )
    before = counts(lab.path)
    refused = invoke(*argv, db=lab.path, actor="wren")
    assert refused.exit_code == 1
    assert refused.stderr.strip().splitlines() == [
        f"error: --as: 'wren': correcting concentration Ca recorded by {lab.technician} needs "
        f"an operator with the manager role (wren is a technician); ask a manager "
        f"({lab.manager}) to do it"
    ]
    assert counts(lab.path) == before
    done = ok_json(invoke(*argv, db=lab.path, actor=lab.manager, as_json=True))
    assert done["item"]["entry_by"] == lab.technician
    shown = ok_json(invoke("show", lab.solution, db=lab.path, as_json=True))
    # by hand: 1.0000 g × 405 µg/g = 405 µg of Ca in the solution
    assert shown["item"]["facts"]["elements"]["Ca"]["ug"] == pytest.approx(405.0)


@pytest.mark.parametrize(
    ("argv", "code", "fragment"),
    [
        (
            ("weighing", "{powder}", "--tare", "1203.557 mg", "--gross", "1204.000 mg"),
            1,
            "less than the 1.500 mg already dissolved",
        ),
        (("weighing", "{powder}", "--tare", "1203.557", "--gross", "1206.181 mg"), 2, "--tare"),
        (("powder-taken", "{solution}", "--mass", "3.000 mg"), 1, "--mass"),
        (("recovery", "{powder}"), 2, "--recovered"),
    ],
)
def test_bad_corrections_change_nothing(
    lab: Lab, argv: tuple[str, ...], code: int, fragment: str
) -> None:
    names = {"powder": lab.powder, "solution": lab.solution}
    args = [a.format(**names) for a in argv]
    before = counts(lab.path)
    result = invoke("correct", *args, "--reason", WHY, db=lab.path, actor=lab.technician)
    assert result.exit_code == code and fragment in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert counts(lab.path) == before
