"""Reconcile, plan and show on the demo: their schemas, and totals kept by hand."""

from __future__ import annotations

from decimal import Decimal
from pathlib import Path

import pytest
from jsonschema import ValidationError

from tests.cli.budget_book import (
    KF,
    MDGC,
    NMFI,
    LoanBook,
    book,
    close,
    reconcile,
    specimen_id,
    specimen_line,
    validate,
)
from tests.cli.conftest import invoke, ok_json

# ---------------------------------------------------------------- a. documents match schemas


def test_reconcile_plan_and_show_validate_against_their_schemas(demo_db: Path) -> None:
    reconciled = ok_json(invoke("reconcile", db=demo_db, as_json=True))
    validate(reconciled, "reconcile.schema.json")
    plan = ("plan", KF, "--ug", "2", "--replicates", "4")
    planned = ok_json(invoke(*plan, db=demo_db, as_json=True))
    validate(planned, "plan.schema.json")
    specimen = specimen_id(demo_db, KF, "KFMNH P 20314")  # a specimen with a full lineage
    shown = ok_json(invoke("show", specimen, db=demo_db, as_json=True))
    validate(shown, "show.schema.json")
    # the check has teeth: a loan line without its flags is not a valid reconcile document
    del reconciled[0]["flags"]
    with pytest.raises(ValidationError, match="flags"):
        validate(reconciled, "reconcile.schema.json")


# ---------------------------------------------------------------- b. done-when, by hand


def test_reconcile_kf_matches_the_scenario_per_loan_and_per_specimen(demo_db: Path) -> None:
    expected = book(KF)
    line = reconcile(demo_db, KF)
    terms = expected.terms
    assert line["terms_version"] == expected.version == 2  # the amendment took effect 2026-06-01
    assert line["permitted_tissues"] == terms["permitted_tissues"]
    assert close(line["max_mass_per_specimen_mg"], terms["max_mass_per_specimen"])
    assert close(line["max_total_mass_mg"], terms["max_total_mass"])
    assert line["max_specimens_sampled"] == terms["max_specimens_sampled"]
    assert line["due_on"] == terms["due_on"]
    assert line["specimens"] == len(expected.catalog)
    assert line["sampled"] == len({p.specimen for p in expected.powders})
    assert close(line["drilled_mg"], LoanBook.drilled(expected.powders))
    assert close(line["dissolved_mg"], LoanBook.dissolved(expected.powders))
    assert close(line["powder_on_hand_mg"], LoanBook.on_hand(expected.powders))
    assert close(
        line["used_fraction"], LoanBook.drilled(expected.powders) / terms["max_total_mass"]
    )
    assert {s["catalog_number"] for s in line["specimen_lines"]} == set(expected.catalog.values())
    for alias, catalog in expected.catalog.items():
        mine, got = expected.of(alias), specimen_line(line, catalog)
        assert got["powders"] == len(mine), catalog
        assert close(got["drilled_mg"], LoanBook.drilled(mine)), catalog
        assert close(got["dissolved_mg"], LoanBook.dissolved(mine)), catalog
        assert close(got["powder_on_hand_mg"], LoanBook.on_hand(mine)), catalog
        assert close(got["permitted_mg"], terms["max_mass_per_specimen"]), catalog


@pytest.mark.parametrize("reference", [KF, MDGC, NMFI])
def test_reconcile_loan_totals_match_the_scenario(demo_db: Path, reference: str) -> None:
    expected = book(reference)
    line = reconcile(demo_db, reference)
    assert line["terms_version"] == expected.version
    assert line["sampled"] == len({p.specimen for p in expected.powders})
    assert close(line["drilled_mg"], LoanBook.drilled(expected.powders))
    assert close(line["dissolved_mg"], LoanBook.dissolved(expected.powders))
    assert close(line["powder_on_hand_mg"], LoanBook.on_hand(expected.powders))


def test_mdgc_carries_the_managers_override_and_is_over_limit(demo_db: Path) -> None:
    expected = book(MDGC)
    line = reconcile(demo_db, MDGC)
    assert {"override used", "over limit"} <= set(line["flags"])
    # the scenario's override drill, and the specimens whose sum passes the per-specimen limit
    overridden = {p.specimen for p in expected.powders if p.override}
    limit = expected.terms["max_mass_per_specimen"]
    over = {a for a in expected.catalog if LoanBook.drilled(expected.of(a)) > limit}
    assert overridden and over
    for alias, catalog in expected.catalog.items():
        flags = specimen_line(line, catalog)["flags"]
        assert ("override used" in flags) == (alias in overridden), (catalog, flags)
        assert ("over limit" in flags) == (alias in over), (catalog, flags)


def test_returned_loan_with_weighed_out_vials_has_nothing_unaccounted(demo_db: Path) -> None:
    expected = book(NMFI)
    # premise, from the TOML: every powder left weighed, and its books close to one reading
    assert expected.powders and all(p.disposed for p in expected.powders)
    for p in expected.powders:
        assert p.residual is not None
        assert abs(p.drilled - p.dissolved - p.residual) <= Decimal("0.001")
    line = reconcile(demo_db, NMFI)
    assert line["status"] == "returned"
    for flags in [line["flags"], *(s["flags"] for s in line["specimen_lines"])]:
        assert "unaccounted material" not in flags
        assert "missing weighing" not in flags


# ---------------------------------------------------------------- c. text: summary or detail


def test_reconcile_of_every_loan_is_a_summary_and_specimens_come_on_request(
    demo_db: Path,
) -> None:
    """Without --loan a line block per loan, its totals as the document has them; the
    specimens' rows only with --specimens (or --loan); --json always holds them."""
    document = ok_json(invoke("reconcile", db=demo_db, as_json=True))
    summary = invoke("reconcile", db=demo_db)
    detail = invoke("reconcile", "--specimens", db=demo_db)
    assert summary.exit_code == detail.exit_code == 0, summary.stderr + detail.stderr
    specimens = [s["id"] for line in document for s in line["specimen_lines"]]
    assert specimens  # the premise: the demo's loans hold specimens
    for line in document:
        assert line["reference"] in summary.stdout and line["id"] in summary.stdout
        assert f"{line['sampled']}/" in summary.stdout
    assert not [s for s in specimens if s in summary.stdout]
    assert not [s for s in specimens if s not in detail.stdout]
    one = document[0]
    single = invoke("reconcile", "--loan", one["reference"], db=demo_db)
    assert all(s["id"] in single.stdout for s in one["specimen_lines"])
