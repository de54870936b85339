"""A specimen is found by its catalogue number, a loan by its reference and a location by its
name, wherever an ID is asked for (lookup, show, the bench commands), when the name names one."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.conftest import Lab, counts, invoke, ok_json


def looked_up(lab: Lab, public_id: str) -> dict[str, str]:
    found: dict[str, str] = ok_json(invoke("lookup", public_id, db=lab.path, as_json=True))
    return found


def test_lookup_and_show_find_a_specimen_by_its_catalogue_number(demo_db: Path) -> None:
    found = ok_json(invoke("lookup", "kfmnh p 20311", db=demo_db, as_json=True))  # any case
    assert found["kind"] == "specimen" and found["label"][0] == "KFMNH P 20311"
    shown = invoke("show", "KFMNH P 20311", db=demo_db)
    assert shown.exit_code == 0 and found["id"] in shown.stdout


def test_a_name_that_names_nothing_says_so_in_one_line(demo_db: Path) -> None:
    result = invoke("lookup", "KFMNH P 99999", db=demo_db)
    assert result.exit_code == 2
    (line,) = result.stderr.strip().splitlines()
    assert "names nothing" in line and "catalogue number" in line


def test_a_broken_id_keeps_its_own_complaint(demo_db: Path) -> None:
    result = invoke("lookup", "SP-12-??", db=demo_db)
    assert result.exit_code == 2
    assert "is not an ID of the form" in result.stderr


def test_the_bench_commands_take_a_catalogue_number(lab: Lab) -> None:
    catalog = looked_up(lab, lab.on_hand)["label"][0]
    drilled = ok_json(
        invoke(
            "drill",
            catalog,
            "--tissue",
            "enamel",
            "--tare",
            "1.000 mg",
            "--gross",
            "1.500 mg",
            db=lab.path,
            actor=lab.technician,
            as_json=True,
        )
    )
    assert drilled["item"]["specimen"] == lab.on_hand


@pytest.mark.parametrize("field", ["catalogue number"])
def test_a_catalogue_number_shared_by_two_specimens_is_refused_with_both_ids(
    lab: Lab, field: str
) -> None:
    catalog = looked_up(lab, lab.on_hand)["label"][0]
    twin = ok_json(
        invoke(
            "specimen",
            "add",
            "--loan",
            lab.loan,
            "--catalog",
            catalog.lower(),  # the same number, written in another case
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )["item"]["id"]
    before = counts(lab.path)
    result = invoke("checkin", catalog, "--condition", "ok", db=lab.path, actor=lab.technician)
    assert result.exit_code == 2
    (line,) = result.stderr.strip().splitlines()
    assert f"is the {field} of several: " in line
    assert lab.on_hand in line and twin in line
    assert counts(lab.path) == before


def test_a_location_is_named_by_its_name(lab: Lab) -> None:
    shelf = ok_json(
        invoke(
            "location",
            "add",
            "position",
            "Slot B2",
            "--in",
            lab.box,
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )["item"]["id"]
    moved = ok_json(
        invoke(
            "move",
            lab.powder,
            "--to",
            "slot b2",
            db=lab.path,
            actor=lab.technician,
            as_json=True,
        )
    )
    assert moved["item"]["location"].endswith("Slot B2")
    found = ok_json(invoke("lookup", "SLOT B2", db=lab.path, as_json=True))
    assert found["id"] == shelf
