"""The performance page (docs/performance.md), written whole by one benchmark run.

Built from the same report the terminal table shows (``Report.as_dict()``), so the page says
exactly what a run printed: every figure, its floor and ratio, the targets, the growth across
scales, the machine, the command and the commit whose code it measured. The prose around the
tables is ``page_intro.md`` beside this module and holds no figures. The run's figures are
also kept, as data, in a comment at the end of the page: the next run reads them and lists
every figure that got slower, with its old and new values and the reason a person gave in
``reasons.toml``.
"""

from __future__ import annotations

import json
import subprocess
import tomllib
from pathlib import Path
from typing import Any

MET = {True: "✓ met", False: "✗ missed", None: "report only"}
HERE = Path(__file__).resolve().parent
DATA_BEGIN = "<!-- figures of this run, read by the next one: "
DATA_END = " -->"
SLOWER = 1.10  # a figure 10 % or more worse than the previous page's counts as slower


def page(
    report: dict[str, Any], command: str, previous: str | None, measured_on: str | None = None
) -> str:
    """The whole page: prose, this run's tables, what got slower since ``previous`` (the
    page it replaces, if any), and this run's figures as data for the next run. The code
    measured is the checkout's, unless ``measured_on`` names it (a page written again from
    a run's saved report)."""
    intro = (HERE / "page_intro.md").read_text(encoding="utf-8").rstrip()
    code = measured_on or commit()
    measured = f"Measured by `{command}` on the code of {code}."
    before = figures_of(previous)
    kept = {"commit": code, "figures": _kept(report["figures"]), "before": before}
    parts = [
        intro,
        measured,
        _figures(report),
        _side_by_side(report["figures"]),
        _growth(report),
        _machine(report),
        _missed(report["figures"], reasons("missed.toml")),
        _slower(before, report["figures"], reasons()),
        DATA_BEGIN + json.dumps(kept, sort_keys=True) + DATA_END,
    ]
    return "\n\n".join(p for p in parts if p) + "\n"


def commit() -> str:
    """The checkout's commit, saying so when its files had changes."""
    git = ["git", "-C", str(HERE)]
    head = subprocess.run([*git, "rev-parse", "--short", "HEAD"], capture_output=True, text=True)
    if head.returncode != 0:
        return "a tree outside git"
    changes = subprocess.run(
        [*git, "status", "--porcelain", "--", "tracker", "benchmarks"],
        capture_output=True,
        text=True,
    )
    dirty = " with uncommitted changes" if changes.stdout.strip() else ""
    return f"commit {head.stdout.strip()}{dirty}"


def written_by_us(text: str) -> bool:
    """Whether a page holds a run's figures (so a new run may replace it)."""
    return DATA_BEGIN in text


def figures_of(text: str | None) -> dict[str, Any] | None:
    """The figures a previous run kept in its page, or None."""
    if not text or DATA_BEGIN not in text:
        return None
    data = text.rsplit(DATA_BEGIN, 1)[1].split(DATA_END, 1)[0]
    kept: dict[str, Any] = json.loads(data)
    return kept


def rewritten(text: str, report: dict[str, Any], previous: str | None) -> str:
    """``text`` (a page a run wrote) written again from that run's saved ``report``, with
    the reasons recorded since: the figures, the command and the commit stay the run's. The
    page it replaced is the one it kept (or ``previous``, for pages from before that)."""
    kept = figures_of(text)
    if kept is None:
        raise ValueError("was not written by a benchmark run")
    if _kept(report["figures"]) != kept["figures"]:
        raise ValueError("holds other figures than the report: it was written by another run")
    line = text.split("Measured by `", 1)[1].split("\n", 1)[0]
    command, code = line.split("` on the code of ", 1)
    before = kept.get("before")
    earlier = DATA_BEGIN + json.dumps(before) + DATA_END if before else previous
    return page(report, command, earlier, measured_on=code.removesuffix("."))


def reasons(name: str = "reasons.toml") -> dict[str, str]:
    """The reasons a person wrote, per figure key: why a figure got slower
    (``reasons.toml``), or why the plain design misses its target (``missed.toml``)."""
    with (HERE / name).open("rb") as file:
        return {key: entry["reason"] for key, entry in tomllib.load(file).items()}


def _kept(figures: list[dict[str, Any]]) -> dict[str, Any]:
    return {
        _slot(f): {
            "title": f["title"],
            "unit": f["unit"],
            "measured": f["measured"],
            "ratio": f["ratio"],
            "higher_is_better": f["higher_is_better"],
        }
        for f in figures
    }


def _slot(figure: dict[str, Any]) -> str:
    return f"{figure['key']}@{figure['scale']:g}"


def _value(value: float, unit: str) -> str:
    return f"{value:.3f} {unit}" if unit in ("s", "ms") else f"{value:,.1f} {unit}"


def _figures(report: dict[str, Any]) -> str:
    """One table per backend, SQLite's first: a PostgreSQL figure's key starts ``pg_`` (a
    skipped PostgreSQL step's with ``pg``), and its title says so too."""
    tables = []
    for heading, on_postgresql in (("", False), ("On PostgreSQL:", True)):
        figures = [f for f in report["figures"] if _postgresql(f) == on_postgresql]
        skipped = [s for s in report["skipped"] if _postgresql(s) == on_postgresql]
        if figures or skipped:
            tables.append("\n\n".join(filter(None, (heading, _table(figures, skipped)))))
    return "\n\n".join(tables)


def _postgresql(figure: dict[str, Any]) -> bool:
    return str(figure["key"]).startswith("pg")


def _table(figures: list[dict[str, Any]], skipped: list[dict[str, Any]]) -> str:
    rows = [
        "| figure | scale | measured | floor | ratio | target | met | answer checked |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for f in figures:
        problems = "".join(f"; ✗ {p}" for p in f["problems"])
        rows.append(
            f"| {f['title']} (floor: {f['floor_title']}) | {f['scale']:g} | "
            f"{_value(f['measured'], f['unit'])} | {_value(f['floor'], f['unit'])} | "
            f"{f['ratio']:.2f} | {f['target']} | {MET[f['met']]}{problems} | "
            f"{f.get('compared') or 'not said'} |"
        )
    for s in skipped:
        rows.append(f"| {s['key']}: skipped, {s['reason']} | {s['scale']:g} | | | | | skipped | |")
    notes = [f"- {f['title']}: {n}" for f in figures for n in f["notes"]]
    return "\n".join(rows) + ("\n\n" + "\n".join(notes) if notes else "")


def _growth(report: dict[str, Any]) -> str:
    if not report["growth"]:
        return ""
    scales = sorted({float(k) for g in report["growth"] for k in g["values"]})
    head = " | ".join(f"scale {s:g}" for s in scales)
    rows = [f"| growth of | {head} | exponent | verdict |", "|---" * (len(scales) + 3) + "|"]
    for g in report["growth"]:
        cells = " | ".join(
            _value(g["values"][f"{s:g}"], g["unit"]) if f"{s:g}" in g["values"] else ""
            for s in scales
        )
        rows.append(f"| {g['title']} | {cells} | {g['exponent']:.2f} | {g['verdict']} |")
    return "\n".join(rows)


def _machine(report: dict[str, Any]) -> str:
    m = report["machine"]
    return (
        f"Measured on {m['cores']} cores ({m['cpu']}), {m['ram_gb']} GB RAM, {m['system']}, "
        f"Python {m['python']}, SQLite {m['sqlite']}; load average at the start "
        f"{m['load']}, at the end {m.get('load_end')}. Each figure is the best of its runs; "
        f"ratio = measured / floor (for rates, floor / measured)."
    )


def _slower(
    previous: dict[str, Any] | None, figures: list[dict[str, Any]], why: dict[str, str]
) -> str:
    """Every figure worse than on the page before, with both values and the reason."""
    if previous is None:
        return ""
    rows = []
    for f in figures:
        old = previous["figures"].get(_slot(f))
        if old is None or not _worse(old["measured"], f["measured"], f["higher_is_better"]):
            continue
        reason = why.get(f["key"], "no reason recorded yet (benchmarks/reasons.toml)")
        rows.append(
            f"| {f['title']} | {f['scale']:g} | {_with_ratio(old['measured'], old['ratio'], f)} "
            f"| {_with_ratio(f['measured'], f['ratio'], f)} | {reason} |"
        )
    head = f"Figures slower than on the page before (the run of {previous['commit']})"
    if not rows:
        return f"{head}: none."
    table = ["| figure | scale | before | now | why |", "|---|---|---|---|---|", *rows]
    return f"{head}, each with the reason:\n\n" + "\n".join(table)


# The same job timed two ways: a warm service call in a running process, and the whole command
# a person types (a fresh interpreter that imports, opens the database, answers and exits).
WARM_AND_COLD = (
    ("lookup", "cold_lookup", "scanned-ID lookup"),
    ("lineage", "cold_show", "a specimen with 50 descendants: lineage / `tracker show`"),
    ("reconcile", "cold_reconcile", "every loan reconciled / `tracker reconcile` as text"),
)


def _side_by_side(figures: list[dict[str, Any]]) -> str:
    """Warm and cold figures of the same jobs next to each other, at each scale measured."""
    found = {(f["key"], f["scale"]): f for f in figures}
    rows = [
        f"| {job} | {scale:g} | {_value(warm['measured'], warm['unit'])} "
        f"| {_value(cold['measured'], cold['unit'])} |"
        for warm_key, cold_key, job in WARM_AND_COLD
        for (key, scale), warm in found.items()
        if key == warm_key and (cold := found.get((cold_key, scale))) is not None
    ]
    if not rows:
        return ""
    head = "| job | scale | warm: in a running process | cold: the whole command |"
    return "The same jobs warm and cold:\n\n" + "\n".join([head, "|---|---|---|---|", *rows])


def _missed(figures: list[dict[str, Any]], why: dict[str, str]) -> str:
    """Every target this run missed, with the design reason a person gave for it."""
    rows = [
        f"| {f['title']} | {f['scale']:g} | {_value(f['measured'], f['unit'])} | {f['target']} "
        f"| {_reason(why, f['key'])} |"
        for f in figures
        if f["met"] is False
    ]
    if not rows:
        return "Targets missed: none."
    table = ["| figure | scale | measured | target | why the plain design misses it |"]
    return "Targets missed, each with its reason:\n\n" + "\n".join(
        [*table, "|---|---|---|---|---|", *rows]
    )


def _reason(why: dict[str, str], key: str) -> str:
    """The reason for ``key``; a PostgreSQL figure (``pg_…``) without its own shares its
    SQLite twin's, the same command on the other backend."""
    found = why.get(key) or why.get(key.removeprefix("pg_"))
    return found or "no reason recorded yet (benchmarks/missed.toml)"


def _with_ratio(measured: float, ratio: float | None, figure: dict[str, Any]) -> str:
    value = _value(measured, figure["unit"])
    return value if ratio is None else f"{value} (ratio {ratio:.2f})"


def _worse(old: float, new: float, higher_is_better: bool) -> bool:
    return new * SLOWER <= old if higher_is_better else new >= old * SLOWER
