"""`tracker reference chart`: a reference material's session means against the lab's
long-term limits, as text, JSON and PNG, on the demo database.

The expected session means are recomputed here from the demo's invented exports
(demo_db/instrument/*.csv) by standard–sample bracketing by hand (δ = R / mean of the two
neighbouring standards − 1, IUPAC notation, Coplen 2011); nothing is copied from tracker.
"""

from __future__ import annotations

import statistics
from pathlib import Path

import pytest

from tests.cli.budget_book import validate
from tests.cli.conftest import invoke, ok_json
from tests.cli.test_instrument_cli import refused
from tests.cli.test_instrument_cli_results import INSTRUMENT, assert_png, kept_rows

CA_EXPORTS = ("ca-session-2026-11-24.csv", "ca-rerun-2026-11-27.csv")  # oldest first


def bracketed_mean(export: str, name: str, standard: str = "SRM 915a") -> float:
    """The mean δ44/40 (‰) of every run of ``name`` in a demo export, bracketed by hand."""
    _header, *rows = kept_rows(INSTRUMENT / export)
    runs = sorted((int(r[0]), r[1], float(r[2])) for r in rows)
    deltas = []
    for index, (_, sample, ratio) in enumerate(runs):
        if sample != name:
            continue
        before = next(r for _, s, r in reversed(runs[:index]) if s == standard)
        after = next(r for _, s, r in runs[index + 1 :] if s == standard)
        deltas.append((ratio / ((before + after) / 2) - 1) * 1000)
    return statistics.fmean(deltas)


def test_the_chart_lists_each_session_mean_oldest_first(demo_db: Path) -> None:
    chart = ok_json(
        invoke("reference", "chart", "SRM 915b", "--ratio", "44/40", db=demo_db, as_json=True)
    )
    assert (chart["reference"], chart["ratio"], chart["scale"]) == ("SRM 915b", "44/40", "SRM 915a")
    expected = [bracketed_mean(export, "SRM 915b") for export in CA_EXPORTS]
    assert [p["value"] for p in chart["points"]] == pytest.approx(expected, abs=1e-9)
    days = [p["day"] for p in chart["points"]]
    assert days == sorted(days) == ["2026-11-24", "2026-11-27"]
    validate(chart, "control-chart.schema.json")
    # two sessions are too few for a long-term record: nothing is judged yet
    assert chart["long_term_two_sd"] is None
    assert [p["within"] for p in chart["points"]] == [None, None]


def test_the_printed_chart_says_what_it_is_and_that_nothing_is_judged_yet(demo_db: Path) -> None:
    printed = invoke("reference", "chart", "SRM 915b", "--ratio", "44/40", db=demo_db)
    assert printed.exit_code == 0, printed.stderr
    assert "SRM 915b, δ44/40 on the SRM 915a scale: 2 session(s)" in printed.stdout
    assert "not yet (needs 3 sessions)" in printed.stdout
    assert printed.stdout.count("not judged") == 2


def test_the_chart_is_drawn_to_a_real_png(demo_db: Path, tmp_path: Path) -> None:
    out = tmp_path / "chart.png"
    result = invoke(
        "reference", "chart", "SRM 915b", "--ratio", "44/40", "--png", str(out), db=demo_db
    )
    assert result.exit_code == 0, result.stderr
    assert_png(out)


def test_an_unknown_material_or_an_unmeasured_ratio_is_refused(
    demo_db: Path, tmp_path: Path
) -> None:
    unknown = invoke("reference", "chart", "No such RM", "--ratio", "44/40", db=demo_db)
    assert "No such RM" in refused(unknown, 2, "NAME")  # the argument, as its help names it
    out = tmp_path / "none.png"
    unmeasured = invoke(
        "reference", "chart", "SRM 915b", "--ratio", "43/42", "--png", str(out), db=demo_db
    )
    assert "43/42" in refused(unmeasured, 2, "--ratio")
    assert not out.exists()
