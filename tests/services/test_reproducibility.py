"""A reference material measured session after session: its control chart, the long-term
2SD every result is reported with at least, and the flag on a session whose material fell
outside the lab's limits; on both backends."""

from __future__ import annotations

import numpy
import pytest

from tests.services.test_instrument import STD, bench, delta_row, do_import, export
from tracker.db.database import Database
from tracker.services.bench import chemistry
from tracker.services.instrument import reduction, reproducibility, results

# Invented: the material's δ44/40 in six ordinary sessions, then one that came out high.
ORDINARY = [0.52, 0.47, 0.55, 0.50, 0.49, 0.53]
HIGH = 0.62


def a_session(db: Database, cut: str, material: float, name: str) -> str:
    """A session measuring the reference material once and the sample twice (0.50, 0.52)."""
    rows = [delta_row(1, "STD-X", STD, 0.0)]
    for run, (label, delta) in enumerate([("RM-A", material), (cut, 0.50), (cut, 0.52)], start=1):
        rows += [delta_row(2 * run, label, STD, delta), delta_row(2 * run + 1, "STD-X", STD, 0.0)]
    session = do_import(db, export(rows), name=name)
    reduction.reduce_session(db, "tech", {"session": session})
    return session


def test_the_control_chart_judges_each_session_by_the_others(db: Database) -> None:
    b = bench(db)
    made = [a_session(db, b.cut, m, f"S{i}") for i, m in enumerate([*ORDINARY, HIGH])]
    chart = reproducibility.control_chart(db, "RM-A", "44/40")
    assert [p.session for p in chart.points] == made
    assert chart.scale == "STD-X" and chart.kind == "delta"
    values = [p.value for p in chart.points]
    assert values == pytest.approx([*ORDINARY, HIGH], abs=1e-6)
    # numpy as the reference for the long-term statistics of all seven session means
    assert chart.long_term_mean == pytest.approx(float(numpy.mean(values)), abs=1e-12)
    assert chart.long_term_two_sd == pytest.approx(2 * float(numpy.std(values, ddof=1)))
    # "the others" are every other session, earlier or later: with seven, all are judged
    assert [p.within for p in chart.points] == [True] * len(ORDINARY) + [False]
    high = chart.points[-1]
    assert high.others_mean == pytest.approx(float(numpy.mean(ORDINARY)), abs=1e-6)


def test_results_carry_the_long_term_2sd_and_the_session_flag(db: Database) -> None:
    b = bench(db)
    for i, m in enumerate([*ORDINARY, HIGH]):
        a_session(db, b.cut, m, f"S{i}")
    listed = [r for r in results.results(db) if r.ratio == "44/40"]
    assert len(listed) == len(ORDINARY) + 1
    chart = reproducibility.control_chart(db, "RM-A", "44/40")
    assert chart.long_term_two_sd is not None
    for line in listed:
        # the sample's own 2SD from its two runs (0.50, 0.52: 2SD ≈ 0.028 ‰) is smaller
        # than the lab's long-term 2SD of RM-A, which it is therefore reported with
        assert line.internal_two_sd == pytest.approx(
            2 * float(numpy.std([0.50, 0.52], ddof=1)), abs=1e-6
        )
        assert line.two_sd == pytest.approx(chart.long_term_two_sd)
        assert line.uncertainty == "long-term"
    flagged = [r for r in listed if any("long-term limits" in f for f in r.flags)]
    assert [r.session for r in flagged] == [listed[-1].session]
    assert "RM-A δ44/40" in flagged[0].flags[-1]


def test_without_a_record_results_keep_their_own_2sd(db: Database) -> None:
    b = bench(db)
    for i, m in enumerate(ORDINARY[:2]):
        a_session(db, b.cut, m, f"S{i}")
    for line in results.results(db):
        assert line.two_sd == line.internal_two_sd and line.uncertainty == "internal"
        assert not any("long-term" in f for f in line.flags)
    chart = reproducibility.control_chart(db, "RM-A", "44/40")
    assert chart.long_term_two_sd is None
    assert [p.within for p in chart.points] == [None, None]


def test_the_charts_offered_are_those_with_results(db: Database) -> None:
    assert reproducibility.charts(db) == []  # nothing measured yet: nothing to choose
    b = bench(db)
    # a material with no results (its name sorts first) is not offered
    chemistry.add_reference_material(db, "boss", {"name": "RM-0", "element": "Ca"})
    made = [a_session(db, b.cut, m, f"S{i}") for i, m in enumerate(ORDINARY[:3])]
    offered = reproducibility.charts(db)
    assert [(c.reference, c.ratio, c.scale, c.kind) for c in offered] == [
        ("RM-A", "44/40", "STD-X", "delta"),
        ("RM-A", "44/42", "STD-X", "delta"),
    ]
    assert all(c.sessions == len(made) for c in offered)
    for choice in offered:  # each choice draws a chart with one point per session counted
        chart = reproducibility.control_chart(db, choice.reference, choice.ratio, choice.scale)
        assert [p.session for p in chart.points] == made
