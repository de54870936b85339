"""Instrument sessions through the CLI: refusals of bad exports and profiles, XLSX exports.

Each refusal exits 2 with one stderr line naming the row and column of the file (or the
option) and leaves the database exactly as it was: no half session, no ledger event. The
exports are invented and built by tests/cli/test_instrument_cli.py's helpers.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from tests.cli.conftest import counts, invoke, ok_json
from tests.cli.test_instrument_cli import (
    CA_BATCH,
    E4442,
    PREAMBLE,
    PROFILE_TOML,
    R4440,
    R4442,
    TECH,
    Export,
    bench_export,
    by_target,
    demo_cuts,
    import_file,
    profile_text,
    reduce,
    reduced,
    refused,
    save_profile,
)

# ---------------------------------------------------------------- 3. bad input, nothing written


def small_export(cut: str) -> Export:
    """Data lines after the header (line L): std, cut, std, cut, std, SRM 915b, std."""
    return bench_export([(cut, 0.1, 0.05), (cut, 0.2, 0.1), ("SRM 915b", 0.7, 0.35)])


def _set(export: Export, line: int, column: str, text: str) -> Export:
    header = export.lines[PREAMBLE_LINES]
    export.lines[line - 1][header.index(column)] = text
    return export


def _drop_column(export: Export, column: str) -> Export:
    index = export.lines[PREAMBLE_LINES].index(column)
    for cells in export.lines[PREAMBLE_LINES:]:
        del cells[index]
    return export


def _drop_line(export: Export, line: int) -> Export:
    del export.lines[line - 1]
    return export


PREAMBLE_LINES = len(PREAMBLE)
L = PREAMBLE_LINES + 1  # the header's line; data start on L + 1
BAD_FILES = [  # (id, change, field the refusal names, words of its reason)
    ("zero", lambda e: _set(e, L + 2, R4440, "0"), f"row {L + 2}, column {R4440}", "positive"),
    (
        "negative",
        lambda e: _set(e, L + 2, R4442, "-3.2154"),
        f"row {L + 2}, column {R4442}",
        "positive",
    ),
    ("nan", lambda e: _set(e, L + 4, R4440, "NaN"), f"row {L + 4}, column {R4440}", "finite"),
    (
        "text",
        lambda e: _set(e, L + 4, R4442, "over range"),
        f"row {L + 4}, column {R4442}",
        "not a number",
    ),
    ("empty", lambda e: _set(e, L + 6, R4440, ""), f"row {L + 6}, column {R4440}", "empty"),
    (
        "duplicate run",
        lambda e: _set(e, L + 5, "Seq#", "104"),
        f"row {L + 5}, column Seq#",
        f"repeats row {L + 4}",
    ),
    (
        "huge run",
        lambda e: _set(e, L + 5, "Seq#", "9.223372036854776e+18"),  # hypothesis found
        f"row {L + 5}, column Seq#",
        "beyond 999,999,999 runs",
    ),
    ("missing column", lambda e: _drop_column(e, E4442), "--profile", "the file has: "),
    (
        "no standard after",
        lambda e: _drop_line(e, L + 7),
        f"row {L + 6}, column Vial label",
        "no bracketing standard measured after",
    ),
    (
        "no standard before",
        lambda e: _drop_line(e, L + 1),
        f"row {L + 1}, column Vial label",
        "no bracketing standard measured before",
    ),
]


@pytest.mark.parametrize(
    ("change", "field_name", "reason"),
    [case[1:] for case in BAD_FILES],
    ids=[case[0] for case in BAD_FILES],
)
def test_a_bad_export_is_refused_whole_naming_row_and_column(
    demo: Path, tmp_path: Path, change: Any, field_name: str, reason: str
) -> None:
    ok_json(save_profile(demo, tmp_path, "halvard-ca", profile_text()))
    (cut, *_) = demo_cuts(demo, CA_BATCH)
    path = tmp_path / "bad.csv"
    path.write_bytes(change(small_export(cut)).csv_bytes())
    before = counts(demo)
    line = refused(import_file(demo, path, "halvard-ca", as_json=False), 2, field_name)
    assert reason in line
    assert counts(demo) == before  # no half session, no ledger event


def test_the_control_export_of_the_bad_cases_imports(demo: Path, tmp_path: Path) -> None:
    """The unchanged small export is accepted, so each refusal above is due to its change."""
    ok_json(save_profile(demo, tmp_path, "halvard-ca", profile_text()))
    (cut, *_) = demo_cuts(demo, CA_BATCH)
    path = tmp_path / "good.csv"
    path.write_bytes(small_export(cut).csv_bytes())
    item = ok_json(import_file(demo, path, "halvard-ca"))["item"]
    assert (item["samples"], item["references"], item["unmatched"]) == (2, 1, [])


def test_an_unknown_profile_is_refused_and_json_mode_explains(demo: Path, tmp_path: Path) -> None:
    path = tmp_path / "any.csv"
    path.write_bytes(small_export("CU-00002-J").csv_bytes())
    before = counts(demo)
    refused(import_file(demo, path, "no-such-rig", as_json=False), 2, "--profile")
    answer = import_file(demo, path, "no-such-rig")
    assert answer.exit_code == 2
    shown = json.loads(answer.stdout)
    assert (shown["field"], shown["value"], shown["exit_code"]) == ("--profile", "no-such-rig", 2)
    assert counts(demo) == before


BAD_PROFILES = [
    (
        "no ratios table",
        PROFILE_TOML.split("[columns.ratios]")[0],
        "key columns.ratios",
        "required",
    ),
    (
        "dash in a ratio name",
        PROFILE_TOML.replace('"44/40" = "R', '"44-40" = "R'),
        "key columns.ratios",
        "'44-40'",
    ),
    (
        "empty ratios table",
        PROFILE_TOML.split("[columns.ratios]")[0] + "[columns.ratios]\n",
        "key columns.ratios",
        "at least 1",
    ),
    ("not TOML", "format = 'csv'\n[columns\n", "row 2, column 9", "not valid TOML"),
]


@pytest.mark.parametrize(
    ("text", "field_name", "reason"),
    [case[1:] for case in BAD_PROFILES],
    ids=[case[0] for case in BAD_PROFILES],
)
def test_a_malformed_profile_file_is_refused(
    demo: Path, tmp_path: Path, text: str, field_name: str, reason: str
) -> None:
    before = counts(demo)
    path = tmp_path / "bad-profile.toml"
    path.write_text(text, encoding="utf-8")
    result = invoke("profile", "save", "broken", str(path), db=demo, actor=TECH)
    assert reason in refused(result, 2, field_name)
    assert counts(demo) == before


def test_a_malformed_ratio_name_among_the_error_columns_is_refused(
    demo: Path, tmp_path: Path
) -> None:
    before = counts(demo)
    text = PROFILE_TOML.replace('"44/42" = "2s.e.', '"44-42" = "2s.e.')
    assert '"44-42"' in text
    refused(save_profile(demo, tmp_path, "broken", text, as_json=False), 2, "key columns.errors")
    assert counts(demo) == before


# ---------------------------------------------------------------- XLSX exports


def _results(db: Path, session: str) -> dict[tuple[str, str], float]:
    return {key: line["value"] for key, line in by_target(reduced(reduce(db, session))).items()}


def test_an_xlsx_export_imports_the_same_as_its_csv_twin(demo: Path, tmp_path: Path) -> None:
    ok_json(save_profile(demo, tmp_path, "halvard-ca", profile_text()))
    ok_json(save_profile(demo, tmp_path, "halvard-xlsx", profile_text("xlsx", "Bench run")))
    a, b, *_ = demo_cuts(demo, CA_BATCH)
    export = bench_export(
        [
            (a, -0.3, -0.15),
            ("SRM 915b", 0.75, 0.36),
            (b, 0.5, 0.24),
            ("wash", 0.0, 0.0),
            (a, -0.35, -0.17),
            (b, 0.45, 0.21),
            ("SRM 915b", 0.70, 0.33),
        ],
        blank_after=2,
    )
    (tmp_path / "twin.csv").write_bytes(export.csv_bytes())
    (tmp_path / "twin.xlsx").write_bytes(export.xlsx_bytes("Bench run"))
    from_csv = ok_json(import_file(demo, tmp_path / "twin.csv", "halvard-ca"))["item"]
    from_xlsx = ok_json(import_file(demo, tmp_path / "twin.xlsx", "halvard-xlsx"))["item"]
    # the same rows, the same unmatched row numbers (sheet rows = CSV lines, blanks kept)
    assert {k: v for k, v in from_xlsx.items() if k not in ("id", "name")} == {
        k: v for k, v in from_csv.items() if k not in ("id", "name")
    }
    assert [u["row"] for u in from_xlsx["unmatched"]] == [L + 9]
    csv_values, xlsx_values = _results(demo, from_csv["id"]), _results(demo, from_xlsx["id"])
    assert csv_values.keys() == xlsx_values.keys() and len(csv_values) == 6
    for key, value in csv_values.items():
        assert xlsx_values[key] == pytest.approx(value, abs=1e-12)


def test_an_xlsx_error_names_the_sheet_row(demo: Path, tmp_path: Path) -> None:
    ok_json(save_profile(demo, tmp_path, "halvard-xlsx", profile_text("xlsx", "Bench run")))
    export = _set(small_export("CU-00002-J"), L + 4, R4440, "saturated")
    (tmp_path / "bad.xlsx").write_bytes(export.xlsx_bytes("Bench run"))
    before = counts(demo)
    result = import_file(demo, tmp_path / "bad.xlsx", "halvard-xlsx", as_json=False)
    assert "'saturated': is not a number" in refused(result, 2, f"row {L + 4}, column {R4440}")
    assert counts(demo) == before


def test_an_xlsx_profile_naming_a_missing_sheet_is_refused(demo: Path, tmp_path: Path) -> None:
    ok_json(save_profile(demo, tmp_path, "wrong-sheet", profile_text("xlsx", "Run 2")))
    (tmp_path / "one.xlsx").write_bytes(small_export("CU-00002-J").xlsx_bytes("Bench run"))
    before = counts(demo)
    result = import_file(demo, tmp_path / "one.xlsx", "wrong-sheet", as_json=False)
    assert result.exit_code == 2, (result.stdout, result.stderr)
    (line,) = result.stderr.splitlines()
    assert line.startswith("error: ") and "'Run 2'" in line and "Bench run" in line
    assert counts(demo) == before


def test_a_csv_file_given_to_an_xlsx_profile_is_refused(demo: Path, tmp_path: Path) -> None:
    ok_json(save_profile(demo, tmp_path, "halvard-xlsx", profile_text("xlsx", "Bench run")))
    path = tmp_path / "really-a.csv"
    path.write_bytes(small_export("CU-00002-J").csv_bytes())
    before = counts(demo)
    assert (
        "xlsx" in refused(import_file(demo, path, "halvard-xlsx", as_json=False), 2, "FILE").lower()
    )
    assert counts(demo) == before
