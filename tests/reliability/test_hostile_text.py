"""Hostile text, end to end: every class of control, bidi and invisible character arriving
through a file or a typed option is refused in one line that names the place and shows the
character, with nothing written; text an older release stored anyway is shown visibly by
every printer (``show``, ``reconcile``, exports, the interface) and exported to XLSX.

Which class a character belongs to is Unicode's word, read from ``unicodedata`` (general
categories, The Unicode Standard ch. 4); nothing here compares with tracker's own output.
"""

from __future__ import annotations

import csv
import html
import io
import json
import sqlite3
import unicodedata
from pathlib import Path

import pytest
from openpyxl import load_workbook
from typer.testing import Result

from tests.cli.conftest import counts, invoke
from tests.reliability import hostile_files as h
from tests.reliability.bench import Bench, session_import
from tests.reliability.report import record
from tracker.cli import state

pytestmark = pytest.mark.slow

# One character of each class, and the general categories unicodedata must give it.
CLASSES: dict[str, tuple[str, set[str]]] = {
    "C0 control (ESC)": ("\x1b", {"Cc"}),
    "C1 control (CSI)": ("\x9b", {"Cc"}),
    "DEL": ("\x7f", {"Cc"}),
    "bidi control (RLO)": ("\u202e", {"Cf"}),
    "bidi isolate (FSI)": ("\u2068", {"Cf"}),
    "zero-width space": ("\u200b", {"Cf"}),
    "other format character (soft hyphen)": ("\u00ad", {"Cf"}),
    "byte order mark inside text": ("\ufeff", {"Cf"}),
    "line separator": ("\u2028", {"Zl"}),
    "private use": ("\ue000", {"Co"}),
    "unassigned code point": ("\u0378", {"Cn"}),
    "variation selector in a one-line field": ("\ufe0f", {"Mn"}),
    "tab in a one-line field": ("\t", {"Cc"}),
}
# XML 1.0 cannot hold these C0 controls at all (XML 1.0 §2.2 Char, from memory): a
# workbook cannot carry them, so the XLSX paths are checked with the other classes.
NOT_IN_XML = {"\x1b", "\t"}


def entry_paths(char: str, folder: Path, loan: str) -> dict[str, tuple[list[str], tuple[str, ...]]]:
    """Each way text gets in: the command line, and the words its one line must hold."""
    manifest = [["catalogNumber", "locality"], ["INV 1", "Pit"], [f"INV {char}2", "Pit"]]
    export = [["Run", "Name", "r4440"], ["1", "STD-X", "2.1"], ["2", f"vial{char}9", "2.2"]]
    export.append(["3", "STD-X", "2.1"])
    paths: dict[str, tuple[list[str], tuple[str, ...]]] = {}
    text = "\n".join(",".join(r) for r in manifest) + "\n"
    (folder / "list.csv").write_text(text, encoding="utf-8")
    paths["manifest (CSV)"] = (
        ["manifest", "import", loan, str(folder / "list.csv")],
        ("list.csv, row 3", "column catalogNumber"),
    )
    (folder / "run.csv").write_text("\n".join(",".join(r) for r in export) + "\n", "utf-8")
    paths["instrument export (CSV)"] = (
        session_import(folder / "run.csv", "csv"),
        ("run.csv, row 3, column Name",),
    )
    if char not in NOT_IN_XML:
        (folder / "list.xlsx").write_bytes(h.workbook(manifest))
        paths["manifest (XLSX)"] = (
            ["manifest", "import", loan, str(folder / "list.xlsx")],
            ("list.xlsx, row 3", "column catalogNumber"),
        )
        (folder / "run.xlsx").write_bytes(h.workbook(export))
        paths["instrument export (XLSX)"] = (
            session_import(folder / "run.xlsx", "xlsx"),
            ("run.xlsx, row 3, column Name",),
        )
    paths["typed option"] = (
        ["specimen", "add", "--loan", loan, "--catalog", f"INV {char}3"],
        ("--catalog: 'INV <U+",),
    )
    return paths


def one_line(result: Result) -> str:
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    return lines[0]


@pytest.mark.parametrize("name", list(CLASSES))
def test_each_class_is_refused_on_every_way_in_with_nothing_written(
    bench: Bench, tmp_path: Path, name: str
) -> None:
    char, categories = CLASSES[name]
    assert unicodedata.category(char) in categories  # the class, as Unicode files it
    before = counts(bench.path)
    paths = entry_paths(char, tmp_path, bench.lab.loan)
    for way, (args, words) in paths.items():
        result = invoke(*args, db=bench.path, actor="bram")
        line = one_line(result)
        assert result.exit_code == 2, (way, line)
        for word in (*words, f"U+{ord(char):04X}"):
            assert word in line, (way, word, line)
        assert char not in line and "\x1b" not in result.stderr + result.stdout
    assert counts(bench.path) == before
    record(
        f"invisible/control character: {name}",
        f"{len(paths)} ways in ({', '.join(paths)})",
        "each refused in one line naming the file, row and column (or the option) and "
        "showing the character; nothing written",
    )


# Text an older release could store: an OSC title, a screen clear, a BEL, rich markup and
# a link, an emoji code, a bidi override and a C1 CSI.
HOSTILE = (
    "Z\x1b]0;owned\x07\x1b[2J[red]x[/red][link=https://example.invalid]y[/link]"
    ":warning:\u202eAB\x9b31m"
)
MARKUP = "[red]x[/red][link=https://example.invalid]y[/link]:warning:"


@pytest.fixture
def stored(bench: Bench, monkeypatch: pytest.MonkeyPatch) -> Bench:
    """The lab with hostile names written straight into the file, as an older release could.

    The console is made wide, so no line is wrapped inside the text looked for.
    """
    monkeypatch.setattr(state.console, "width", 1000)
    connection = sqlite3.connect(bench.path)
    with connection:
        connection.execute(
            "UPDATE specimen SET catalog_number = ?, locality = ? WHERE catalog_number = ?",
            (HOSTILE, "Pit " + HOSTILE, "FNHC Z-1"),
        )
        connection.execute("UPDATE lender SET name = ?", ("Fernhollow " + HOSTILE,))
        connection.execute(
            "UPDATE loan SET title = ?, reference = ?", ("Teeth " + HOSTILE, "FH " + HOSTILE)
        )
    connection.close()
    return bench


def strings(value: object) -> list[str]:
    """Every string in a decoded JSON document."""
    if isinstance(value, str):
        return [value]
    if isinstance(value, dict):
        return [s for item in value.values() for s in strings(item)]
    if isinstance(value, list):
        return [s for item in value for s in strings(item)]
    return []


def assert_shown_not_obeyed(output: str) -> None:
    for char in ("\x1b", "\x07", "\x9b", "\u202e"):
        assert char not in output, (hex(ord(char)), output)
    assert MARKUP in output  # markup printed as written: no colour, no link, no emoji
    assert "<U+001B>" in output and "<U+202E>" in output and "<U+009B>" in output


# The text was put in the tables behind the ledger's back, so the commands that vouch for
# the books refuse them (quoting the stored text escaped, as the audit's refusal below
# shows) unless told to write them despite the discrepancies.
DESPITE = "--despite-discrepancies"


def test_stored_hostile_text_is_shown_visibly_by_every_printer(stored: Bench) -> None:
    lab = stored.lab
    audited = invoke("reconcile", db=stored.path, actor="bram")
    assert audited.exit_code == 1 and "DIFFER from the ledger" in audited.stderr
    for char in ("\x1b", "\x07", "\x9b", "\u202e"):
        assert char not in audited.stderr, hex(ord(char))
    for args in (
        ("show", lab.on_hand),
        ("show", lab.loan),
        ("reconcile", DESPITE),
        ("overview",),
        ("lookup", lab.on_hand),
    ):
        result = invoke(*args, db=stored.path, actor="bram")
        assert result.exit_code == 0, (args, result.stderr)
        assert_shown_not_obeyed(result.stdout)
    # a refusal quoting the stored text is escaped too
    refused = invoke("specimen", "add", "--loan", lab.loan, "--catalog", HOSTILE, db=stored.path)
    assert refused.exit_code == 2 and "\x1b" not in refused.stderr
    # --json keeps the exact text (escaped the JSON way), and prints no raw control
    shown = invoke("show", lab.on_hand, db=stored.path, as_json=True)
    for char in ("\x1b", "\x9b", "\u202e"):
        assert char not in shown.stdout
    assert any(HOSTILE in text for text in strings(json.loads(shown.stdout)))
    record(
        "invisible/control character: stored by an older release, printed",
        "show (item, loan), reconcile, overview, lookup, --json, a refusal",
        "no ESC, BEL, C1 or bidi control reaches the terminal; markup printed as written",
    )


def test_stored_hostile_text_exports_to_xlsx_visibly_and_to_csv_exactly(
    stored: Bench, tmp_path: Path
) -> None:
    lab = stored.lab
    for suffix in ("xlsx", "csv"):
        out = tmp_path / f"specimens.{suffix}"
        result = invoke(
            "export", "specimens", "--loan", lab.loan, "--out", str(out), DESPITE, db=stored.path
        )
        assert result.exit_code == 0, result.stderr
        assert "\x1b" not in result.stdout + result.stderr
    cells = [c for row in load_workbook(tmp_path / "specimens.xlsx").active.values for c in row]
    assert "Z<U+001B>]0;owned<U+0007><U+001B>[2J" + HOSTILE.split("[2J", 1)[1] in cells
    text = (tmp_path / "specimens.csv").read_bytes().decode("utf-8-sig")
    assert HOSTILE in [c for row in csv.reader(io.StringIO(text)) for c in row]
    report = tmp_path / "return.xlsx"
    result = invoke(
        "report",
        "return",
        lab.loan,
        "--format",
        "xlsx",
        "--out",
        str(report),
        DESPITE,
        db=stored.path,
        actor="ysolde",
    )
    assert result.exit_code == 0, result.stderr
    assert load_workbook(report).active.max_row > 1
    record(
        "invisible/control character: stored by an older release, exported",
        "specimens as XLSX and CSV, the return report as XLSX",
        "XLSX written with the characters XML cannot hold made visible; CSV exact",
    )


async def test_the_interface_shows_stored_hostile_text_visibly(
    stored: Bench, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Every screen a stored name reaches, as the terminal would get it (the SVG screenshot
    holds the characters of every cell drawn): nothing obeyed, everything visible."""
    from tests.ui.conftest import clock, settle
    from tracker.ui.app import TrackerApp

    monkeypatch.setenv("TRACKER_CONFIG_DIR", str(tmp_path / "config"))
    app = TrackerApp(str(stored.path), "bram", clock=clock, out_dir=tmp_path)
    screens: dict[str, str] = {}
    async with app.run_test(size=(240, 50)) as pilot:
        await settle(pilot)
        screens["overview"] = app.export_screenshot()
        for item in (stored.lab.loan, stored.lab.on_hand):
            app.open_id(item)
            await settle(pilot)
            screens[item] = app.export_screenshot()
    for name, svg in screens.items():
        drawn = html.unescape(svg).replace("\u00a0", " ")
        for char in ("\x1b", "\x07", "\x9b", "\u202e"):
            assert char not in drawn, (name, hex(ord(char)))
        if name == "overview":
            continue  # its narrow cells show the reference's start only
        assert "[red]x[/red]" in drawn, name  # markup drawn as written
        assert "<U+001B>" in drawn and "<U+202E>" in drawn, name
    record(
        "invisible/control character: stored by an older release, in the interface",
        "overview, loan and specimen screens",
        "no ESC, BEL, C1 or bidi control drawn; markup drawn as written",
    )
