"""`tracker results --ratio R --law L`: every δ on one ratio, the others converted and marked.

Expected values are computed here from isotope masses of periodictable 2.1 (AME2020), the
reference library, with the exact power form written out by hand; nothing is copied from a
run of tracker. The demo's calcium session measured both δ44/40 and δ44/42.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import periodictable
import pytest

from tests.cli.budget_book import validate
from tests.cli.conftest import counts, invoke, ok_json
from tests.cli.test_instrument_cli import refused
from tests.cli.test_instrument_cli_results import assert_png

KF, MDGC = "KF-2026-014", "MDGC/LN/0457"  # loans of demo_db/scenario.toml


def k_by_hand(law: str, wanted: str, measured: str) -> float:
    """k from periodictable's calcium masses (the reference library): exponential
    ln(mi/mj) ratio, equilibrium (1/mj − 1/mi) ratio."""
    (i, j), (p, q) = ([int(x) for x in r.split("/")] for r in (wanted, measured))
    m = {n: float(periodictable.Ca[n].mass) for n in (i, j, p, q)}
    if law == "exponential":
        return math.log(m[i] / m[j]) / math.log(m[p] / m[q])
    return (1 / m[j] - 1 / m[i]) / (1 / m[q] - 1 / m[p])


def on_ratio(value: float, k: float) -> float:
    """δ on the other ratio, exactly: 1 + δa/1000 = (1 + δb/1000)^k."""
    return float(((1 + value / 1000) ** k - 1) * 1000)


def shown(db: Path, loan: str, *options: str) -> list[dict[str, Any]]:
    rows: list[dict[str, Any]] = ok_json(
        invoke("results", "--loan", loan, *options, db=db, as_json=True)
    )
    validate(rows, "results.schema.json")
    return rows


@pytest.mark.parametrize(
    ("loan", "wanted", "law"),
    [(KF, "44/40", "exponential"), (MDGC, "44/42", "equilibrium"), (KF, "43/42", "exponential")],
)
def test_every_delta_is_shown_on_the_asked_ratio(
    demo_db: Path, loan: str, wanted: str, law: str
) -> None:
    plain = shown(demo_db, loan)
    moved = shown(demo_db, loan, "--ratio", wanted, "--law", law)
    assert len(moved) == len(plain) > 0
    converted = 0
    for old, new in zip(plain, moved, strict=True):
        assert (new["specimen"], new["cut"], new["n"]) == (old["specimen"], old["cut"], old["n"])
        if old["kind"] != "delta" or old["ratio"] == wanted:  # as measured, and said so
            assert new == old | {"converted_from": None, "law": None, "factor": None}
            continue
        converted += 1
        k = k_by_hand(law, wanted, old["ratio"])
        assert (new["ratio"], new["converted_from"], new["law"]) == (wanted, old["ratio"], law)
        assert new["factor"] == pytest.approx(k, rel=1e-12)
        assert new["value"] == pytest.approx(on_ratio(old["value"], k), rel=1e-12)
        slope = k * (1 + old["value"] / 1000) ** (k - 1)  # d δa / d δb at the value
        assert new["two_sd"] == pytest.approx(old["two_sd"] * slope, rel=1e-12)
    assert converted >= 2


def test_the_ratio_of_a_strontium_result_is_left_as_measured(demo_db: Path) -> None:
    moved = shown(demo_db, MDGC, "--ratio", "44/40")
    strontium = [r for r in moved if r["ratio"] == "87/86"]
    assert strontium and all(r["converted_from"] is None for r in strontium)


def test_the_text_marks_each_converted_delta_and_says_how(demo_db: Path) -> None:
    rows = shown(demo_db, KF, "--ratio", "44/40")
    printed = invoke("results", "--loan", KF, "--ratio", "44/40", db=demo_db).stdout
    converted = [r for r in rows if r["converted_from"]]
    assert converted and printed.count("← 44/42") == len(converted)
    k = k_by_hand("exponential", "44/40", "44/42")
    assert f"← δ44/40 converted from δ44/42, exponential law, k = {k:.4f}" in printed
    assert k == pytest.approx(2.05, abs=0.005)  # from memory: k ≈ 2.05 for 44/40 from 44/42
    measured_only = invoke("results", "--loan", KF, db=demo_db).stdout
    assert "←" not in measured_only and "converted" not in measured_only


@pytest.mark.parametrize(
    ("options", "option", "value"),
    [
        (("--ratio", "45/40"), "--ratio", "45/40"),  # calcium has no isotope 45
        (("--ratio", "44-40"), "--ratio", "44-40"),
        (("--ratio", "44/40", "--law", "linear"), "--law", "linear"),
    ],
)
def test_a_ratio_or_law_that_cannot_be_used_is_refused(
    demo: Path, options: tuple[str, ...], option: str, value: str
) -> None:
    before = counts(demo)
    line = refused(invoke("results", "--loan", KF, *options, db=demo), 2, option)
    assert value in line
    assert counts(demo) == before


def test_a_plot_draws_the_converted_deltas_too(demo_db: Path, tmp_path: Path) -> None:
    out = tmp_path / "age.png"
    options = ("--ratio", "44/40", "--plot", str(out))
    result = invoke("results", "--loan", MDGC, *options, db=demo_db)
    assert result.exit_code == 0, result.stderr
    assert_png(out)
