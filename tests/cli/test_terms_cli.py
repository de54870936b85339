"""Limits, overrides, amendments, materials and residual weighings through the CLI."""

from __future__ import annotations

import hashlib
import math
import re
from datetime import date, timedelta
from decimal import Decimal
from pathlib import Path
from typing import Any

import periodictable
import pytest
from typer.testing import Result

from tests.cli.budget_book import (
    KF,
    REASON,
    LoanBook,
    book,
    close,
    open_powder,
    reconcile,
    refused,
    specimen_id,
    specimen_line,
    today,
)
from tests.cli.conftest import Lab, counts, invoke, ok_json

# ---------------------------------------------------------------- c. limits and overrides

# KFMNH P 20311 has given 2.561 mg of its 3 mg (scenario: 1206.118 − 1203.557); a 0.500 mg
# drill passes the per-specimen limit but not the loan's 17 mg (16.019 + 0.500 = 16.519).
OVER_DRILL = ("--tissue", "enameloid", "--tare", "1000.000 mg", "--gross", "1000.500 mg")


def with_u(value: Decimal) -> str:
    """A value as tracker may print it (trailing zeros allowed), then "± u mg"."""
    return re.escape(str(value)) + r"0* ± (\d+\.\d+) mg"


def test_drill_past_the_specimen_limit_is_refused_then_overridden(demo: Path) -> None:
    expected = book(KF)
    (alias,) = [a for a, c in expected.catalog.items() if c == "KFMNH P 20311"]
    used, limit = LoanBook.drilled(expected.of(alias)), expected.terms["max_mass_per_specimen"]
    asked = Decimal("1000.500") - Decimal("1000.000")
    assert used + asked > limit
    assert LoanBook.drilled(expected.powders) + asked <= expected.terms["max_total_mass"]
    specimen = specimen_id(demo, KF, "KFMNH P 20311")
    before = counts(demo)

    # the drilled mass is no option a person typed: its field is said in words
    line = refused(invoke("drill", specimen, *OVER_DRILL, db=demo, actor="tomas"), 1, None)
    assert line.startswith("error: drilled mass: ")
    assert f"per-specimen limit {limit:g} mg" in line
    for label, value in (
        ("already drilled", used),
        ("requested", asked),
        ("remaining", limit - used),
    ):
        match = re.search(f"{label} {with_u(value)}", line)
        assert match, (label, line)
        # one mass by difference on a 0.001 mg balance: u = d/√6 (GUM F.2.2.1) = 0.000408 mg,
        # whose leading digits (408) keep one significant digit (Particle Data Group's rule;
        # from memory): printed within half its last place
        printed = Decimal(match.group(1))
        half_step = Decimal(1).scaleb(-len(match.group(1).split(".")[1])) / 2
        assert abs(float(printed) - 0.001 / math.sqrt(6)) <= half_step, line
    assert "override" in line
    assert counts(demo) == before

    attempt = invoke("drill", specimen, *OVER_DRILL, "--override", REASON, db=demo, actor="tomas")
    assert "tomas" in refused(attempt, 1, "--as")
    assert counts(demo) == before

    ok_json(
        invoke(
            "drill",
            specimen,
            *OVER_DRILL,
            "--override",
            REASON,
            db=demo,
            actor="ines",
            as_json=True,
        )
    )
    loan = reconcile(demo, KF)
    assert {"override used", "over limit"} <= set(specimen_line(loan, "KFMNH P 20311")["flags"])
    assert "override used" in loan["flags"]
    assert invoke("ledger", "verify", db=demo).exit_code == 0
    (event,) = ok_json(invoke("ledger", "list", "--limit", "1", db=demo, as_json=True))
    assert event["action"] == "powder.drilled" and event["operator"] == "ines"
    override = event["payload"]["override"]
    assert override["reason"] == REASON
    assert len(override["limits"]) == 1
    assert override["limits"][0].startswith(f"per-specimen limit {limit:g} mg")


# ---------------------------------------------------------------- d. amendments in time


def test_an_extension_applies_from_its_effective_day_only(lab: Lab, tmp_path: Path) -> None:
    t = today()
    received, due, effective, new_due = (t - timedelta(days=n) for n in (300, 200, 150, -100))
    late, between = t - timedelta(days=100), t - timedelta(days=180)  # after / before `effective`
    assert received < due < between < effective < late < t < new_due

    def run(*args: str, actor: str = lab.manager) -> Any:
        return ok_json(invoke(*args, db=lab.path, actor=actor, as_json=True))

    terms = (
        "--tissues",
        "enamel",
        "--max-per-specimen",
        "6 mg",
        "--received",
        received.isoformat(),
        "--due",
        due.isoformat(),
    )
    loan = run(
        "loan",
        "add",
        "--lender",
        "Fernhollow Natural History Collection",
        "--reference",
        "FH-78",
        "--title",
        "Invented jaw fragments",
        "--borrower",
        "Ysolde Marrin",
        *terms,
    )["item"]["id"]
    specimen = run("specimen", "add", "--loan", "FH-78", "--catalog", "FNHC Z-9")["item"]["id"]
    run("checkin", specimen, "--condition", "complete", "--at", f"{received}T09:00:00Z")

    def drill(on: date, actor: str = lab.technician) -> Result:
        return invoke(
            "drill",
            specimen,
            "--tissue",
            "enamel",
            "--tare",
            "1.000 mg",
            "--gross",
            "1.400 mg",
            "--at",
            f"{on}T10:00:00Z",
            db=lab.path,
            actor=actor,
        )

    before = counts(lab.path)
    assert due.isoformat() in refused(drill(late), 1, "--at")
    assert counts(lab.path) == before

    letter = tmp_path / "fh-78-extension.txt"
    letter.write_bytes(b"Invented letter: the loan FH-78 is extended. Test data only.\n")
    digest = hashlib.sha256(letter.read_bytes()).hexdigest()
    amend = (
        "loan",
        "amend",
        "FH-78",
        "--kind",
        "extension",
        "--effective",
        effective.isoformat(),
        "--due",
        new_due.isoformat(),
        "--reason",
        "extension granted by letter",
        "--document",
        str(letter),
    )
    assert lab.technician in refused(invoke(*amend, db=lab.path, actor=lab.technician), 1, "--as")
    assert counts(lab.path) == before
    early = list(amend)
    early[early.index("--effective") + 1] = (received - timedelta(days=1)).isoformat()
    assert invoke(*early, db=lab.path, actor=lab.manager).exit_code == 2
    assert counts(lab.path) == before

    assert run(*amend)["item"]["terms"]["version"] == 2
    powders = counts(lab.path)["powder"]
    # dated 100 days back: within the extension, but beyond the backdating window
    assert lab.manager in refused(drill(late), 1, "--as")
    passed = drill(late, actor=lab.manager)
    assert passed.exit_code == 0, passed.stderr
    assert counts(lab.path)["powder"] == powders + 1
    assert "backdated entry" in reconcile(lab.path, "FH-78")["flags"]
    before = counts(lab.path)
    assert due.isoformat() in refused(drill(between), 1, "--at")
    assert counts(lab.path) == before

    shown = ok_json(invoke("show", loan, db=lab.path, as_json=True))
    (event,) = [e for e in shown["history"] if e["action"] == "loan.amended"]
    assert event["payload"]["document"]["sha256"] == digest
    assert event["payload"]["effective_from"] == effective.isoformat()


# ---------------------------------------------------------------- e. materials


def test_materials_by_formula_and_by_measured_range(lab: Lab) -> None:
    add = ("material", "add")
    ok_json(
        invoke(
            *add,
            "dolomite",
            "--formula",
            "CaMg(CO3)2",
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )
    ok_json(
        invoke(
            *add,
            "lab shark enameloid",
            "--element",
            "Ca",
            "--low",
            "0.352",
            "--high",
            "0.371",
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )
    rows = {r["name"]: r for r in ok_json(invoke("material", "list", db=lab.path, as_json=True))}
    # periodictable 2.1 (standard atomic weights): w(Ca) = Ar(Ca) / M(CaMg(CO3)2)
    ca = periodictable.formula("CaMg(CO3)2").mass_fraction[periodictable.Ca]
    dolomite = rows["dolomite"]
    assert dolomite["formula"] == "CaMg(CO3)2" and dolomite["preset"] is False
    assert math.isclose(dolomite["fraction_low"], ca, rel_tol=1e-12)
    assert math.isclose(dolomite["fraction_high"], ca, rel_tol=1e-12)
    measured = rows["lab shark enameloid"]
    assert measured["formula"] is None and measured["element"] == "Ca"
    assert (measured["fraction_low"], measured["fraction_high"]) == (0.352, 0.371)


BAD_FORMULAS = ["CaXx3", "Ca(CO3", "ca", "Ca0"]


@pytest.mark.parametrize("formula", BAD_FORMULAS)
def test_bad_formula_exits_2_and_writes_nothing(lab: Lab, formula: str) -> None:
    before = counts(lab.path)
    result = invoke("material", "add", "bad", "--formula", formula, db=lab.path, actor=lab.manager)
    assert result.exit_code == 2
    assert len(result.stderr.splitlines()) == 1 and formula in result.stderr
    assert counts(lab.path) == before


# ---------------------------------------------------------------- f. residual weighings

RESIDUAL_TARE = Decimal("500.000")  # an invented empty return vial, mg


def remainder(catalog: str) -> Decimal:
    """What the scenario leaves in the specimen's one open vial: drilled − dissolved."""
    expected = book(KF)
    (alias,) = [a for a, c in expected.catalog.items() if c == catalog]
    (powder,) = [p for p in expected.of(alias) if not p.disposed]
    return powder.drilled - powder.dissolved


def return_powder(db: Path, catalog: str, residual: Decimal | None) -> dict[str, Any]:
    """Return the specimen's open powder (weighing ``residual`` mg out, if given); its line."""
    powder = open_powder(db, specimen_id(db, KF, catalog))
    weighing = (
        ()
        if residual is None
        else (
            "--residual-tare",
            f"{RESIDUAL_TARE} mg",
            "--residual-gross",
            f"{RESIDUAL_TARE + residual} mg",
            "--readability",
            "0.001 mg",
        )
    )
    why = ("--outcome", "returned", "--reason", "unused powder returned with the specimen")
    result = invoke("dispose", powder, *why, *weighing, db=db, actor="ines")
    assert result.exit_code == 0, result.stderr
    return specimen_line(reconcile(db, KF), catalog)


# P 20316: 1.644 mg drilled, never dissolved; P 20314: 2.224 mg drilled, 1.206 mg dissolved.
@pytest.mark.parametrize("catalog", ["KFMNH P 20316", "KFMNH P 20314"])
def test_residual_matching_the_remainder_closes_the_books(demo: Path, catalog: str) -> None:
    left = remainder(catalog)
    line = return_powder(demo, catalog, left)
    assert "unaccounted material" not in line["flags"]
    assert "missing weighing" not in line["flags"]
    assert close(line["powder_returned_mg"], left)
    assert close(line["powder_on_hand_mg"], Decimal(0))


def test_residual_0_2_mg_light_is_unaccounted_material(demo: Path) -> None:
    # 0.2 mg is 100 readings of a 0.001 mg balance: far beyond what rounding can explain
    line = return_powder(demo, "KFMNH P 20316", remainder("KFMNH P 20316") - Decimal("0.2"))
    assert "unaccounted material" in line["flags"]
    assert "unaccounted material" in reconcile(demo, KF)["flags"]


# Four readings (drill tare, gross; residual tare, gross) on a 0.001 mg balance can each round by
# d/2, so the books may be off by 2d = 0.002 mg without any material lost (common practice).
@pytest.mark.parametrize(
    ("catalog", "offset"),
    [
        ("KFMNH P 20317", Decimal("-0.002")),
        ("KFMNH P 20315", Decimal("-0.002")),
        ("KFMNH P 20317", Decimal("0.002")),
    ],
)
def test_residual_off_by_rounding_is_not_unaccounted(
    demo: Path, catalog: str, offset: Decimal
) -> None:
    line = return_powder(demo, catalog, remainder(catalog) + offset)
    assert "unaccounted material" not in line["flags"], line


def test_powder_returned_without_a_weighing_is_a_missing_weighing(demo: Path) -> None:
    line = return_powder(demo, "KFMNH P 20314", None)
    assert "missing weighing" in line["flags"]
    assert "missing weighing" in reconcile(demo, KF)["flags"]
    assert close(line["powder_returned_mg"], remainder("KFMNH P 20314"))  # the book value


# ---------------------------------------------------------------- refusals name what was typed


@pytest.mark.parametrize(
    ("argv", "option"),
    [
        pytest.param(("material", "add", "bad", "--formula", "CaXx3"), "--formula"),
        pytest.param(
            ("material", "add", "r", "--element", "Ca", "--low", "0.5", "--high", "1.5"), "--high"
        ),
        pytest.param(
            (
                "loan",
                "amend",
                "FH-77",
                "--kind",
                "extension",
                "--effective",
                "2000-01-01",
                "--due",
                "2999-01-01",
                "--reason",
                "too early",
            ),
            "--effective",
        ),
        pytest.param(
            (
                "drill",
                "{on_hand}",
                "--tissue",
                "enamel",
                "--tare",
                "1.000 mg",
                "--gross",
                "1.500 mg",
                "--override",
                REASON,
            ),
            "--override",
        ),
    ],
)
def test_refusal_names_the_option_typed(lab: Lab, argv: tuple[str, ...], option: str) -> None:
    before = counts(lab.path)
    args = [a.format(on_hand=lab.on_hand) for a in argv]
    result = invoke(*args, db=lab.path, actor=lab.manager)
    refused(result, 2, option)
    assert counts(lab.path) == before


def test_late_drill_refusal_shows_the_date_typed(lab: Lab) -> None:
    t = today()
    received, due, late = (t - timedelta(days=n) for n in (60, 30, 10))
    invoke(
        "loan",
        "add",
        "--lender",
        "Fernhollow Natural History Collection",
        "--reference",
        "FH-79",
        "--title",
        "Invented",
        "--borrower",
        "Ysolde Marrin",
        "--tissues",
        "enamel",
        "--received",
        received.isoformat(),
        "--due",
        due.isoformat(),
        db=lab.path,
        actor=lab.manager,
    )
    add = ("specimen", "add", "--loan", "FH-79", "--catalog", "FNHC Z-10")
    specimen = ok_json(invoke(*add, db=lab.path, actor=lab.manager, as_json=True))["item"]["id"]
    invoke(
        "checkin",
        specimen,
        "--condition",
        "ok",
        "--at",
        f"{received}T09:00:00Z",
        db=lab.path,
        actor=lab.manager,
    )
    line = refused(
        invoke(
            "drill",
            specimen,
            "--tissue",
            "enamel",
            "--tare",
            "1.000 mg",
            "--gross",
            "1.400 mg",
            "--at",
            f"{late}T10:00:00Z",
            db=lab.path,
            actor=lab.technician,
        ),
        1,
        "--at",
    )
    value = line.removeprefix("error: --at: ").split(": ", 1)[0]
    assert late.isoformat() in value, line
