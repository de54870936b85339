"""Columns, instrument import and δ reduction through the services, on both backends."""

from __future__ import annotations

import math
import random
from dataclasses import dataclass

import pytest

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.isotopes import exponential_factor, predicted_delta
from tracker.services.bench import chemistry, columns
from tracker.services.instrument import reduction, results, sessions

PROFILE = {
    "format": "csv",
    "columns": {
        "run_order": "Run",
        "sample_name": "Name",
        "ratios": {"44/40": "r4440", "44/42": "r4442"},
    },
}
K = exponential_factor("Ca", "44/40", "44/42")


@dataclass
class Bench:
    cut: str
    blank_position: str
    batch: str


def bench(db: Database) -> Bench:
    """A tooth aliquot on a Ca column with a blank and a reference material, cuts recorded."""
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.concentration(db, solution, "500 ug/g")
    aliquot = make.aliquot(db, solution, grams="0.0200")  # 10 µg Ca loaded
    batch = make.batch(db)
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    blank = chemistry.add_position(db, "tech", {"batch": batch, "kind": "blank"}).item.id
    sample = chemistry.add_position(
        db, "tech", {"batch": batch, "kind": "sample", "aliquot": aliquot}
    ).item.id
    reference = chemistry.add_position(
        db,
        "tech",
        {"batch": batch, "kind": "reference", "reference_material": "RM-A", "loaded_ug": 10.0},
    ).item.id
    columns.record_cut(db, "tech", {"position": blank, "cut": "Ca", "recovered": "0.050 ug"})
    cut = columns.record_cut(
        db, "tech", {"position": sample, "cut": "Ca", "recovered": "9.000 ug"}
    ).item.id
    columns.record_cut(db, "tech", {"position": reference, "cut": "Ca", "recovered": "9.9 ug"})
    sessions.save_profile(db, "tech", {"name": "p1", "definition": PROFILE})
    return Bench(cut, blank, batch)


def delta_row(
    run: int, name: str, std: tuple[float, float], d4440: float, d4442: float | None = None
) -> str:
    """A row whose ratios sit δ above the (constant) standard."""
    d4442 = ((1 + d4440 / 1000) ** (1 / K) - 1) * 1000 if d4442 is None else d4442
    return f"{run},{name},{std[0] * (1 + d4440 / 1000):.12f},{std[1] * (1 + d4442 / 1000):.12f}"


STD = (0.0221, 3.2160)


def export(rows: list[str]) -> bytes:
    return ("Run,Name,r4440,r4442\n" + "\n".join(rows) + "\n").encode()


def session_of(cut: str, deltas: list[float], extra: list[str] | None = None) -> bytes:
    rows, run = [delta_row(1, "STD-X", STD, 0.0)], 1
    for d in deltas:
        rows += [delta_row(run + 1, cut, STD, d), delta_row(run + 2, "STD-X", STD, 0.0)]
        run += 2
    return export(rows + (extra or []))


def do_import(db: Database, content: bytes, **extra: object) -> str:
    request = {
        "profile": "p1",
        "filename": "run.csv",
        "content": content,
        "name": "S1",
        "instrument": "test MC",
        "element": "Ca",
        "bracketing_standard": "STD-X",
    } | extra
    return sessions.import_session(db, "tech", request).item.id


def test_yield_and_blank_fraction(db: Database) -> None:
    b = bench(db)
    summary = columns.summarize_batch(db, b.batch)
    sample = next(p for p in summary.positions if p.kind == "sample")
    # by hand: 0.0200 g × 500 µg/g = 10 µg loaded; 9.000 recovered → 90 % (< 95 %: flagged);
    # blank 50 ng / 10 000 ng = 0.5 % (< 1 %)
    assert sample.loaded_ug == pytest.approx(10.0)
    assert sample.yield_fraction == pytest.approx(0.9)
    assert sample.blank_fraction == pytest.approx(0.005)
    assert sample.flags == ["low yield"]
    assert summary.blank_ng == pytest.approx(50.0)


def test_cut_rules(db: Database, counts: Counts) -> None:
    b = bench(db)
    before = counts()
    with pytest.raises(RuleViolation, match="already recorded"):
        columns.record_cut(db, "tech", {"position": b.blank_position, "cut": "Ca"})
    with pytest.raises(RuleViolation, match="not one of the batch's cuts"):
        columns.record_cut(db, "tech", {"position": b.blank_position, "cut": "Sr"})
    assert counts() == before


def test_reduction_by_hand(db: Database) -> None:
    b = bench(db)
    session = do_import(db, session_of(b.cut, [0.50, 0.60, 0.40]))
    answer = reduction.reduce_session(db, "tech", {"session": session}).item
    line = next(r for r in answer.results if r.target == b.cut and r.ratio == "44/40")
    # by hand: constant standard, so each run's δ is what was written; mean 0.5, SD 0.1 (n−1)
    assert line.value == pytest.approx(0.5, abs=1e-9)
    assert line.sd == pytest.approx(0.1, abs=1e-9) and line.n == 3
    assert line.two_se == pytest.approx(2 * 0.1 / math.sqrt(3), abs=1e-9)
    assert "low yield" in line.flags  # the column's 90 % yield follows the result
    rows = results.results(db)
    assert {r.ratio for r in rows} == {"44/40", "44/42"} and rows[0].specimen.startswith("SP-")


def test_reference_material_pass_and_fail(db: Database) -> None:
    b = bench(db)
    results.set_reference_value(
        db,
        "boss",
        {
            "reference": "RM-A",
            "ratio": "44/40",
            "scale": "STD-X",
            "value": 0.70,
            "two_sd": 0.10,
            "source": "invented for the test",
        },
    )

    def rm(d: float) -> list[str]:
        return [delta_row(10, "RM-A", STD, d), delta_row(11, "STD-X", STD, 0.0)]

    passing = do_import(db, session_of(b.cut, [0.5], rm(0.75)))
    good = reduction.reduce_session(db, "tech", {"session": passing}).item
    assert good.flags == []
    failing = do_import(db, session_of(b.cut, [0.5], rm(0.95)), name="S2")
    bad = reduction.reduce_session(db, "tech", {"session": failing}).item
    assert bad.flags == ["reference material failed: RM-A 44/40"]
    line = next(r for r in bad.results if r.label == "RM-A" and r.ratio == "44/40")
    assert line.passed is False and line.accepted == 0.70
    with pytest.raises(RuleViolation, match="manager role"):
        results.set_reference_value(
            db,
            "tech",
            {
                "reference": "RM-A",
                "ratio": "44/40",
                "scale": "STD-X",
                "value": 0.7,
                "two_sd": 0.1,
                "source": "someone",
            },
        )


def test_mass_dependence_check(db: Database) -> None:
    b = bench(db)
    consistent = do_import(db, session_of(b.cut, [0.50, 0.52, 0.48]))
    ok = reduction.reduce_session(db, "tech", {"session": consistent}).item
    assert not any("mass-dependence" in f for r in ok.results for f in r.flags)
    # 44/42 three times too large for its 44/40: not mass-dependent fractionation
    rows = [delta_row(1, "STD-X", STD, 0.0)]
    for i, d in enumerate([0.50, 0.52, 0.48]):
        rows += [
            delta_row(2 + 2 * i, b.cut, STD, d, d * 0.75),
            delta_row(3 + 2 * i, "STD-X", STD, 0.0),
        ]
    off = reduction.reduce_session(db, "tech", {"session": do_import(db, export(rows), name="S3")})
    flagged = [r for r in off.item.results if any("mass-dependence" in f for f in r.flags)]
    assert {r.ratio for r in flagged} == {"44/40", "44/42"}


def mass_flags(reduced: reduction.Reduction) -> set[str]:
    return {f for r in reduced.results for f in r.flags if f.startswith("mass-dependence")}


def test_an_offset_hidden_in_runs_that_drift_along_the_law_is_flagged(db: Database) -> None:
    # Each run's mass bias moves δ44/40 and δ44/42 together along the law (0.1 ‰ of
    # δ44/42, invented); δ44/40 sits 0.05 ‰ off the law. The two ratios' errors are then
    # correlated: judged as independent, the spread would hide the offset.
    b = bench(db)
    rng = random.Random(3)
    rows, run = [delta_row(1, "STD-X", STD, 0.0)], 1
    for _ in range(6):
        d4442 = 0.4 + rng.gauss(0, 0.1)
        d4440 = predicted_delta(d4442, K) + 0.05
        rows += [
            delta_row(run + 1, b.cut, STD, d4440, d4442),
            delta_row(run + 2, "STD-X", STD, 0.0),
        ]
        run += 2
    reduced = reduction.reduce_session(db, "tech", {"session": do_import(db, export(rows))}).item
    (flag,) = mass_flags(reduced)
    assert "44/40 vs 44/42" in flag and "from replicates" in flag


def test_a_single_run_is_judged_by_its_internal_errors(db: Database) -> None:
    b = bench(db)
    columns_with_errors = {
        "run_order": "Run",
        "sample_name": "Name",
        "ratios": {"44/40": "r4440", "44/42": "r4442"},
        "errors": {"44/40": "e4440", "44/42": "e4442"},
    }
    definition = {"format": "csv", "columns": columns_with_errors}
    sessions.save_profile(db, "tech", {"name": "with errors", "definition": definition})

    def one_run(offset: float, two_se: float) -> bytes:
        # internal 2SE of each ratio, as a fraction of it (invented)
        rows = [
            delta_row(1, "STD-X", STD, 0.0),
            delta_row(2, b.cut, STD, predicted_delta(0.4, K) + offset, 0.4),
            delta_row(3, "STD-X", STD, 0.0),
        ]
        lines = [f"{row},{STD[0] * two_se:.3e},{STD[1] * two_se:.3e}" for row in rows]
        return ("Run,Name,r4440,r4442,e4440,e4442\n" + "\n".join(lines) + "\n").encode()

    def reduced(content: bytes, name: str) -> reduction.Reduction:
        session = do_import(db, content, profile="with errors", name=name)
        return reduction.reduce_session(db, "tech", {"session": session}).item

    # 2SE of 2e-5 of each ratio: about 0.02 ‰ on each bracketed δ, far below 0.3 ‰
    (flag,) = mass_flags(reduced(one_run(0.3, 2e-5), "off"))
    assert "from internal errors" in flag
    assert not mass_flags(reduced(one_run(0.003, 2e-5), "on the law"))
    # without internal errors a single run has nothing to be judged by
    bare = [
        delta_row(1, "STD-X", STD, 0.0),
        delta_row(2, b.cut, STD, predicted_delta(0.4, K) + 0.3, 0.4),
        delta_row(3, "STD-X", STD, 0.0),
    ]
    plain = do_import(db, export(bare), name="bare")
    assert not mass_flags(reduction.reduce_session(db, "tech", {"session": plain}).item)


def test_blank_correction_when_the_blank_delta_is_known(db: Database) -> None:
    b = bench(db)
    columns.set_blank_delta(db, "tech", {"batch": b.batch, "ratio": "44/40", "delta_permil": -2.0})
    session = do_import(db, session_of(b.cut, [0.50, 0.50]))
    line = next(
        r
        for r in reduction.reduce_session(db, "tech", {"session": session}).item.results
        if r.target == b.cut and r.ratio == "44/40"
    )
    # mass balance by hand: 9000 ng recovered of which 50 ng blank at −2.0 ‰
    sample_ng, blank = 9000 - 50, 50
    assert line.blank_corrected and line.value == pytest.approx(
        (0.5 * 9000 - (-2.0) * blank) / sample_ng, abs=1e-9
    )


def test_unmatched_rows_are_kept_and_listed(db: Database) -> None:
    b = bench(db)
    extra = ["20,tune solution,0.0221,3.216", "21,CU-99999-0,0.0221,3.216"]
    answer = sessions.import_session(
        db,
        "tech",
        {
            "profile": "p1",
            "filename": "r.csv",
            "content": session_of(b.cut, [0.5], extra),
            "name": "S",
            "instrument": "x",
            "element": "Ca",
            "bracketing_standard": "STD-X",
        },
    )
    assert [u.run_order for u in answer.item.unmatched] == [20, 21]
    assert "check character" in answer.item.unmatched[1].reason
    assert answer.item.measurements == 5


@pytest.mark.parametrize(
    ("rows", "field", "fragment"),
    [
        (
            ["1,STD-X,0.0221,3.216", "2,{cut},0,3.216", "3,STD-X,0.0221,3.216"],
            "row 3, column r4440",
            "positive",
        ),
        (
            ["1,STD-X,0.0221,3.216", "2,{cut},nan,3.216", "3,STD-X,0.0221,3.216"],
            "row 3, column r4440",
            "positive",
        ),
        (
            ["1,STD-X,0.0221,3.216", "1,{cut},0.0221,3.216", "3,STD-X,0.0221,3.216"],
            "row 3, column Run",
            "repeats",
        ),
        (["1,STD-X,0.0221,3.216", "2,{cut},0.0221,3.216"], "row 3, column Name", "after it"),
        (["2,{cut},0.0221,3.216", "3,STD-X,0.0221,3.216"], "row 2, column Name", "before it"),
    ],
)
def test_bad_exports_import_nothing(
    db: Database, counts: Counts, rows: list[str], field: str, fragment: str
) -> None:
    b = bench(db)
    before = counts()
    with pytest.raises(InputError) as caught:
        do_import(db, export([r.format(cut=b.cut) for r in rows]))
    # the refusal names the file too: file, row and column
    assert caught.value.field == f"run.csv, {field}" and fragment in caught.value.reason
    assert counts() == before


def test_profile_must_match_the_file(db: Database, counts: Counts) -> None:
    bench(db)
    sessions.save_profile(
        db,
        "tech",
        {
            "name": "p2",
            "definition": {
                "format": "csv",
                "columns": {
                    "run_order": "Run",
                    "sample_name": "Name",
                    "ratios": {"44/40": "missing column"},
                },
            },
        },
    )
    before = counts()
    with pytest.raises(InputError, match="names a column the file lacks") as caught:
        do_import(db, export(["1,STD-X,0.0221,3.216"]), profile="p2")
    assert (caught.value.field, caught.value.value) == ("profile", "missing column")
    assert counts() == before
