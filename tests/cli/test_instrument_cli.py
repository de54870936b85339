"""Instrument sessions through the CLI: a saved profile, an import, a reduction, by hand.

Every expected number is computed here from the ratios the test itself writes, with the
IUPAC definition δ = R(sample)/R(standard) − 1 expressed in ‰ (Coplen 2011, Rapid
Commun. Mass Spectrom. 25:2538) and the standard–sample bracketing of common practice
(the standard is the mean of the runs just before and just after the sample). Nothing is
copied from a run of tracker. All names, exports and numbers are invented. The helpers
here (an invented export layout and its writers) are shared by the other
test_instrument_cli_*.py files.
"""

from __future__ import annotations

import csv
import io
import math
import re
import statistics
from collections import defaultdict
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from openpyxl import Workbook
from typer.testing import Result

from tests.cli.budget_book import validate
from tests.cli.conftest import counts, invoke, ok_json

TECH = "priya"  # a technician of demo_db/scenario.toml
CA_BATCH, SR_BATCH = "CB-00001-G", "CB-00002-E"  # the demo's first and second column batches
STD = "SRM 915a"  # the demo's Ca bracketing standard

# Accepted values recorded by demo_db/scenario.toml ("from memory" literature values there;
# tolerances invented): (value, 2SD) in ‰ on the SRM 915a scale.
ACCEPTED = {
    ("SRM 915b", "44/40"): (0.72, 0.12),
    ("SRM 915b", "44/42"): (0.35, 0.08),
    ("Seawater in-house", "44/40"): (1.88, 0.12),
    ("Seawater in-house", "44/42"): (0.92, 0.08),
}

# ---------------------------------------------------------------- an invented bench export

R4440, R4442 = "R 44/40 (bc)", "R 44/42 (bc)"
E4440, E4442 = "2s.e. 44/40", "2s.e. 44/42"
HEADER = ["Seq#", "Vial label", R4440, E4440, R4442, E4442]
PREAMBLE = ["; Bench export from the invented 'Halvard' collector rig", "; not measured data"]
PROFILE_TOML = """\
# An invented export layout: semicolon preamble, then one header row.
format = "csv"
header_row = 1
comment_prefix = ";"

[columns]
run_order = "Seq#"
sample_name = "Vial label"

[columns.ratios]
"44/40" = "R 44/40 (bc)"
"44/42" = "R 44/42 (bc)"

[columns.errors]
"44/40" = "2s.e. 44/40"
"44/42" = "2s.e. 44/42"
"""


def profile_text(fmt: str = "csv", sheet: str | None = None) -> str:
    top = f'format = "{fmt}"' + (f'\nsheet = "{sheet}"' if sheet else "")
    return PROFILE_TOML.replace('format = "csv"', top)  # top-level keys before any [table]


def standard_ratios(k: int) -> tuple[float, float]:
    """The bracketing standard drifts slowly and linearly (invented)."""
    return 0.02208600 * (1 + 4e-6 * k), 3.216000 * (1 + 3e-6 * k)


@dataclass
class Export:
    """Lines of a CSV export as a person sees them in an editor (1 = first line)."""

    lines: list[list[str]] = field(default_factory=list)  # [] is a blank line

    def add(self, cells: list[str]) -> int:
        self.lines.append(cells)
        return len(self.lines)

    def csv_bytes(self) -> bytes:
        out = io.StringIO()
        writer = csv.writer(out, lineterminator="\n")
        for cells in self.lines:
            writer.writerow(cells)
        return out.getvalue().encode("utf-8")

    def xlsx_bytes(self, sheet: str) -> bytes:
        book = Workbook()
        page = book.active
        assert page is not None
        page.title = sheet
        for number, cells in enumerate(self.lines, start=1):
            for column, text in enumerate(cells, start=1):
                page.cell(number, column, _cell_value(text))
        buffer = io.BytesIO()
        book.save(buffer)
        return buffer.getvalue()

    def data(self) -> list[tuple[int, dict[str, str]]]:
        """(line, cells by header) of every data line, read back with the csv module."""
        header_at = next(i for i, c in enumerate(self.lines) if c and not c[0].startswith(";"))
        header = self.lines[header_at]
        return [
            (number, dict(zip(header, cells, strict=True)))
            for number, cells in enumerate(self.lines, start=1)
            if number > header_at + 1 and cells
        ]


def _cell_value(text: str) -> Any:
    try:
        number = float(text)
    except ValueError:
        return text
    return int(number) if number.is_integer() and "." not in text else number


def bench_export(targets: list[tuple[str, float, float]], blank_after: int = 4) -> Export:
    """Standard, target, standard, … standard; runs numbered from 101 so run ≠ line.

    Each target is (label, δ44/40, δ44/42) in ‰: its ratios are the mean bracketing
    standard × (1 + δ/1000), written with 9 and 7 decimals (the test recomputes δ from
    the written text, not from these targets).
    """
    export = Export()
    for line in PREAMBLE:
        export.add([line])
    export.add(list(HEADER))
    k = 0

    def row(label: str, r40: float, r42: float) -> None:
        export.add([str(101 + k), label, f"{r40:.9f}", "0.00000088", f"{r42:.7f}", "0.000096"])

    row(STD, *standard_ratios(k))
    for index, (label, d40, d42) in enumerate(targets):
        k += 1
        s40, s42 = standard_ratios(k)  # mean of k−1 and k+1 for a linear drift
        row(label, s40 * (1 + d40 / 1000), s42 * (1 + d42 / 1000))
        k += 1
        row(STD, *standard_ratios(k))
        if index == blank_after:
            export.add([])  # instruments leave blank lines; they are skipped, not renumbered
    return export


def hand_deltas(export: Export, ratio_column: str) -> dict[str, list[float]]:
    """δ per label, bracketed by hand: IUPAC δ = R/R_std − 1 (Coplen 2011), std = mean of
    the nearest standard runs before and after (standard–sample bracketing, practice)."""
    runs = sorted(
        (int(c["Seq#"]), c["Vial label"], float(c[ratio_column])) for _, c in export.data()
    )
    standards = [(run, value) for run, label, value in runs if label == STD]
    found: dict[str, list[float]] = defaultdict(list)
    for run, label, value in runs:
        if label == STD:
            continue
        before = [v for r, v in standards if r < run][-1]
        after = next(v for r, v in standards if r > run)
        found[label].append((value / ((before + after) / 2) - 1) * 1000)
    return found


# ---------------------------------------------------------------- CLI helpers


def demo_cuts(db: Path, batch: str) -> list[str]:
    """Cut IDs of the batch's sample columns, read through `batch show` and `show`."""
    summary = ok_json(invoke("batch", "show", batch, db=db, as_json=True))
    cuts = []
    for position in summary["positions"]:
        if position["kind"] != "sample":
            continue
        tree = ok_json(invoke("show", position["id"], db=db, as_json=True))["item"]
        cuts += [child["id"] for child in tree["children"] if child["kind"] == "cut"]
    return cuts


def save_profile(db: Path, tmp: Path, name: str, text: str, *, as_json: bool = True) -> Result:
    path = tmp / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return invoke("profile", "save", name, str(path), db=db, actor=TECH, as_json=as_json)


def import_file(
    db: Path,
    path: Path,
    profile: str,
    *extra: str,
    element: str = "Ca",
    standard: str = STD,
    as_json: bool = True,
) -> Result:
    return invoke(
        "session",
        "import",
        str(path),
        "--profile",
        profile,
        "--name",
        f"test {path.stem}",
        "--instrument",
        "MC-ICP-MS (invented)",
        "--element",
        element,
        "--standard",
        standard,
        "--started",
        # an hour ago: within any operator's backdating window whenever the suite runs
        (datetime.now(UTC) - timedelta(hours=1)).isoformat(timespec="seconds"),
        *extra,
        db=db,
        actor=TECH,
        as_json=as_json,
    )


def reduce(db: Path, session: str, *, as_json: bool = True) -> Result:
    return invoke("session", "reduce", session, db=db, actor=TECH, as_json=as_json)


def reduced(result: Result) -> dict[str, Any]:
    """The reduction inside a write command's answer ({item, event_seq, event_hash})."""
    document = ok_json(result)
    assert document["event_seq"] > 0 and len(document["event_hash"]) == 64
    item: dict[str, Any] = document["item"]
    return item


def refused(result: Result, exit_code: int, field_name: str) -> str:
    """Exit code, empty stdout and one stderr line "error: <field>: …" (the CLI's refusal).

    A place in a file ("row 3, column u", "key columns.ratios") comes after the file's
    name, which must be there: "error: curve.csv, row 3, column u: …".
    """
    assert result.exit_code == exit_code, (result.exit_code, result.stdout, result.stderr)
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    in_file = field_name.startswith(("row ", "key "))
    prefix = r"error: [^:,]+\.[a-z]+, " if in_file else "error: "
    assert re.match(prefix + re.escape(f"{field_name}: "), lines[0]), lines[0]
    return lines[0]


def by_target(reduction: dict[str, Any]) -> dict[tuple[str, str], dict[str, Any]]:
    return {(line["target"], line["ratio"]): line for line in reduction["results"]}


# ---------------------------------------------------------------- 1. done-when on the demo


def test_a_saved_profile_imports_and_reduces_a_session_on_the_demo(
    demo: Path, tmp_path: Path
) -> None:
    cuts = demo_cuts(demo, CA_BATCH)
    assert len(cuts) == 6  # scenario.toml: six sample columns in "Ca 2026-11 A"
    a, b, c = cuts[:3]
    (sr_cut, *_) = demo_cuts(demo, SR_BATCH)
    mistyped = a[:6] + a[7] + a[6] + a[8:]  # two digits swapped, check character kept
    assert mistyped != a and len(mistyped) == len(a)

    saved = ok_json(save_profile(demo, tmp_path, "halvard-ca", profile_text()))["item"]
    assert saved["name"] == "halvard-ca"
    listed = ok_json(invoke("profile", "list", db=demo, as_json=True))
    assert "halvard-ca" in [p["name"] for p in listed]

    targets = [
        ("SRM 915b", 0.75, 0.36),
        (a, -0.30, -0.15),
        (b, -0.52, -0.25),
        (c, 0.20, 0.10),
        ("Seawater in-house", 1.64, 0.88),
        ("acid rinse 2% HNO3", 0.01, 0.0),
        (a, -0.36, -0.19),
        (b, -0.47, -0.22),
        (c, 0.26, 0.12),
        ("SRM 915b", 0.79, 0.38),
        ("Seawater in-house", 1.68, 0.90),
        (sr_cut, 0.0, 0.0),
        (mistyped, 0.1, 0.05),
    ]
    export = bench_export(targets)
    path = tmp_path / "halvard-run.csv"
    path.write_bytes(export.csv_bytes())
    lines: dict[str, list[tuple[int, int]]] = {c["Vial label"]: [] for _, c in export.data()}
    for number, cells in export.data():
        lines[cells["Vial label"]].append((number, int(cells["Seq#"])))

    before = counts(demo)
    imported = ok_json(import_file(demo, path, "halvard-ca"))
    validate(imported, "session-import.schema.json")
    item = imported["item"]
    n_standards = len(targets) + 1
    assert (item["standards"], item["samples"], item["references"], item["blanks"]) == (
        n_standards,
        6,
        4,
        0,
    )
    assert item["measurements"] == len(export.data()) == 2 * len(targets) + 1
    # unmatched rows are listed with their line in the file and their run number …
    unmatched = {u["sample_name"]: u for u in item["unmatched"]}
    assert set(unmatched) == {"acid rinse 2% HNO3", sr_cut, mistyped}
    for name, u in unmatched.items():
        assert [(u["row"], u["run_order"])] == lines[name]
    assert "Sr batch" in unmatched[sr_cut]["reason"]
    assert "check character" in unmatched[mistyped]["reason"]
    # … and kept: every row of the file became a measurement
    after = counts(demo)
    assert after["measurement"] - before["measurement"] == item["measurements"]
    assert after["instrument_session"] - before["instrument_session"] == 1

    answer = reduce(demo, item["id"])
    validate(ok_json(answer), "reduction.schema.json")
    reduction = reduced(answer)
    assert reduction["unmatched"] == 3 and reduction["scale"] == STD
    lines_by = by_target(reduction)
    for ratio, column in (("44/40", R4440), ("44/42", R4442)):
        deltas = hand_deltas(export, column)
        for cut in (a, b, c):
            line = lines_by[(cut, ratio)]
            values = deltas[cut]
            assert line["kind"] == "sample" and line["n"] == len(values) == 2
            # statistics.fmean / statistics.stdev (n − 1), Python 3.11 standard library
            assert line["value"] == pytest.approx(statistics.fmean(values), abs=1e-9)
            assert line["two_sd"] == pytest.approx(2 * statistics.stdev(values), abs=1e-9)
            assert line["two_se"] == pytest.approx(
                2 * statistics.stdev(values) / math.sqrt(2), abs=1e-9
            )
        references = {x["label"]: x for x in reduction["results"] if x["kind"] == "reference"}
        for name in ("SRM 915b", "Seawater in-house"):
            line = next(
                x for x in reduction["results"] if (x["label"], x["ratio"]) == (name, ratio)
            )
            accepted, tolerance = ACCEPTED[(name, ratio)]
            mean = statistics.fmean(deltas[name])
            assert line["value"] == pytest.approx(mean, abs=1e-9)
            assert (line["accepted"], line["accepted_two_sd"]) == (accepted, tolerance)
            assert line["passed"] is (abs(mean - accepted) <= tolerance)  # worked by hand
        assert set(references) == {"SRM 915b", "Seawater in-house"}
    # by hand: seawater 44/40 ≈ +1.66 ‰ vs 1.88 ± 0.12 fails; SRM 915b ≈ +0.77 vs 0.72 passes
    checks = {(x["label"], x["ratio"]): x["passed"] for x in reduction["results"]}
    assert checks[("Seawater in-house", "44/40")] is False
    assert checks[("SRM 915b", "44/40")] is True
    assert reduction["flags"] == ["reference material failed: Seawater in-house 44/40"]

    human = reduce(demo, item["id"], as_json=False)
    assert human.exit_code == 0, human.stderr
    assert "FAIL" in human.stdout and "pass" in human.stdout
    assert "3 unmatched rows" in human.stdout
    # reducing again replaces the session's results, it does not add to them
    assert counts(demo)["result"] - before["result"] == len(reduction["results"])


def test_the_import_lists_unmatched_rows_for_people_too(demo: Path, tmp_path: Path) -> None:
    ok_json(save_profile(demo, tmp_path, "halvard-ca", profile_text()))
    (cut, *_) = demo_cuts(demo, CA_BATCH)
    export = bench_export([(cut, 0.1, 0.05), ("rinse blank", 0.0, 0.0)], blank_after=99)
    path = tmp_path / "people.csv"
    path.write_bytes(export.csv_bytes())
    result = invoke(
        "session",
        "import",
        str(path),
        "--profile",
        "halvard-ca",
        "--name",
        "people",
        "--instrument",
        "rig",
        "--element",
        "Ca",
        "--standard",
        STD,
        db=demo,
        actor=TECH,
    )
    assert result.exit_code == 0, result.stderr
    # bench_export: 2 preamble lines, header on line 3, then std, cut, std, rinse blank
    assert "1 unmatched" in result.stdout
    assert "unmatched row 7 (run 104) 'rinse blank'" in result.stdout


# ---------------------------------------------------------------- 2. bracketing by hand

HAND_PROFILE = """\
format = "csv"
[columns]
run_order = "Seq#"
sample_name = "Vial label"
[columns.ratios]
"44/42" = "R 44/42 (bc)"
"""


def _hand_session(db: Path, tmp: Path, rows: list[tuple[int, str, str]]) -> dict[str, Any]:
    ok_json(save_profile(db, tmp, "hand", HAND_PROFILE))
    path = tmp / "hand.csv"
    text = "Seq#,Vial label,R 44/42 (bc)\n" + "".join(f"{r},{n},{v}\n" for r, n, v in rows)
    path.write_text(text, encoding="utf-8")
    item = ok_json(import_file(db, path, "hand"))["item"]
    return dict(reduced(reduce(db, item["id"])))


def test_one_bracketed_sample_matches_the_hand_calculation(demo: Path, tmp_path: Path) -> None:
    (cut, *_) = demo_cuts(demo, CA_BATCH)
    rows = [(1, STD, "3.20700"), (2, cut, "3.21000"), (3, STD, "3.20740")]
    reduction = _hand_session(demo, tmp_path, rows)
    (line,) = reduction["results"]
    # IUPAC (Coplen 2011): δ = R/Rstd − 1, ‰; Rstd = mean of the two bracketing standards
    expected = (3.21000 / ((3.20700 + 3.20740) / 2) - 1) * 1000
    assert expected == pytest.approx(0.87304, abs=5e-6)  # check-values.md worked example
    assert line["target"] == cut and line["ratio"] == "44/42"
    assert line["value"] == pytest.approx(expected, abs=1e-9)
    assert line["n"] == 1 and line["sd"] is None and line["two_sd"] is None
    assert "single run" in line["flags"]


def test_replicate_statistics_of_three_bracketed_runs(demo: Path, tmp_path: Path) -> None:
    (cut, *_) = demo_cuts(demo, CA_BATCH)
    ratios = ["3.20700", "3.21000", "3.20740", "3.20985", "3.20720", "3.21031", "3.20760"]
    rows = [(i + 1, STD if i % 2 == 0 else cut, r) for i, r in enumerate(ratios)]
    (line,) = _hand_session(demo, tmp_path, rows)["results"]
    values = [float(r) for r in ratios]
    deltas = [  # worked by hand: each run against the mean of its two neighbours
        (values[i] / ((values[i - 1] + values[i + 1]) / 2) - 1) * 1000 for i in (1, 3, 5)
    ]
    mean, sd = statistics.fmean(deltas), statistics.stdev(deltas)  # stdlib, n − 1
    np_sd = float(np.std(deltas, ddof=1))  # numpy 2.x std(ddof=1)
    assert sd == pytest.approx(np_sd, rel=1e-12)
    assert float(np.mean(deltas)) == pytest.approx(mean, rel=1e-12)
    assert line["n"] == 3
    assert line["value"] == pytest.approx(mean, abs=1e-9)
    assert line["sd"] == pytest.approx(np_sd, abs=1e-9)
    assert line["two_sd"] == pytest.approx(2 * np_sd, abs=1e-9)
    assert line["two_se"] == pytest.approx(2 * np_sd / math.sqrt(3), abs=1e-9)  # 2SE = 2SD/√n
