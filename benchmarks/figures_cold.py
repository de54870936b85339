"""Everyday commands timed as a person meets them: whole processes, from a cold start.

Each figure starts ``tracker`` afresh (the installed command, a new interpreter, nothing
warmed) on the scale's database and times it to exit, next to a *whole-process floor*: a
fresh interpreter doing the same job with the standard library on the same database
(``cold_floor``). Runs alternate, tracker then floor, and the best of each is kept; CPU time
and peak memory are the command's own (``process``). Every figure holds tracker's printed
answer against the floor's (the IDs, references and counts both must show), or says why it
cannot. Commands that write (a return report, a session's reduction) run on a copy.

One table of commands serves both backends: the database is a SQLite file or a PostgreSQL
URL (``tracker --db URL``; the floor then uses psycopg), and the caller makes the copy
(:func:`sqlite_copy`, or ``figures_pg``'s copy on the server). ``--version`` and ``--help``
open no database, so they are timed with the SQLite table only.
"""

from __future__ import annotations

import random
import sqlite3
import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from benchmarks import children
from benchmarks.figures_read import raw_rows, showcase_specimen
from benchmarks.measure import Figure, Target, alternated
from benchmarks.plan import FOUNDER, PROFILE, STANDARD, TECHNICIANS, bench_keyring, bench_signer
from benchmarks.plan_session import Target as SessionTarget
from benchmarks.plan_session import session_csv
from benchmarks.process import ProcessRun, run_process
from tracker import __version__
from tracker.db.database import Database, open_database
from tracker.domain.ids import Kind, format_id, parse_id

PASSPHRASE = "synthetic benchmark passphrase"  # invented; the keys prove nothing
PRINT_FILE = "import sys; sys.stdout.write(open(sys.argv[1]).read())"
SESSION_ROWS = (1000, 2000, 4000)
FLOORS = {
    "sqlite": "a fresh interpreter, standard library",
    "postgresql": "a fresh interpreter, psycopg",
}
Check = Callable[[ProcessRun, dict[str, Any]], list[str]]


@dataclass
class Cold:
    """One everyday command and its floor."""

    key: str
    title: str
    tracker: list[str]  # what follows ``tracker``
    floor: list[str]  # the floor's whole command line
    target: Target
    check: Check
    compared: str  # what the check holds against the floor, or why it cannot


def cold_figures(db: Database, target: str, copy: str, work: Path, repeat: int) -> list[Figure]:
    """Every everyday command's whole-process figure on ``target`` (``db``'s SQLite file or
    PostgreSQL URL); the commands that write run on ``copy``, the caller's copy of it."""
    _compiled()
    env = _environment(work)
    trouble = [_settled(target, env, AUDITED), _settled(copy, env, VERIFIED)]
    commands = _starts(work) if db.backend == "sqlite" else []
    commands += _commands(db, target, copy, work)
    figures = [_measure(cold, env, repeat) for cold in commands]
    figures.append(_reduce_figure(copy, env, repeat))
    for figure in figures:
        figure.floor_title = FLOORS[db.backend]
        figure.problems.extend(problem for problem in trouble if problem)
    return figures


def _compiled() -> None:
    """Compile the checkout's modules to bytecode, untimed, as an installation does.

    A person's second command reads the bytecode its first one wrote. Where bytecode is
    never written (``PYTHONDONTWRITEBYTECODE`` set, as on some build machines), each timed
    run would compile every module from source again: a cost no installed program pays.
    """
    import compileall

    for package in ("tracker", "benchmarks"):
        compileall.compile_dir(str(children.CHECKOUT / package), quiet=1)


# Untimed, before the runs, what a workstation in use has done before: a verification of the
# ledger (its checkpoint), and on the database reconcile reads, a whole-lab audit (its mark),
# so that reconcile audits only what changed since, as it does day to day.
VERIFIED = (("ledger", "verify"),)
AUDITED = (*VERIFIED, ("reconcile",))


def _settled(database: str, env: dict[str, str], steps: tuple[tuple[str, ...], ...]) -> str:
    """Run ``steps`` on ``database`` untimed; what went wrong, if anything."""
    for step in steps:
        run = run_process([*_tracker(), "--db", database, *step], env)
        if run.code != 0:
            last = (run.stderr.strip().splitlines() or ["no answer"])[-1]
            return f"the untimed {' '.join(step)} before the runs failed: {last}"
    return ""


def _environment(work: Path) -> dict[str, str]:
    """A config folder holding the synthetic manager's and a technician's key files."""
    import os

    from tracker.db import keyfiles

    config = work / "config"
    os.environ["TRACKER_CONFIG_DIR"], kept = str(config), os.environ.get("TRACKER_CONFIG_DIR")
    try:
        for code in (FOUNDER["code"], TECHNICIANS[0]):
            keyfiles.write_key(code, bench_signer(code), PASSPHRASE)
    finally:
        if kept is None:
            del os.environ["TRACKER_CONFIG_DIR"]
        else:
            os.environ["TRACKER_CONFIG_DIR"] = kept
    env = children.environment(
        TRACKER_CONFIG_DIR=str(config),
        TRACKER_PASSPHRASE=PASSPHRASE,
        TRACKER_CHECKPOINT_DIR=str(work / "checkpoints"),
        COLUMNS="120",
    )
    for name in ("TRACKER_DB", "TRACKER_OPERATOR", "TRACKER_PASSPHRASE_FILE"):
        env.pop(name, None)
    return env


def sqlite_copy(source: str, copy: Path) -> str:
    """A copy of the SQLite file ``source`` for the commands that write; its path."""
    with sqlite3.connect(source) as original, sqlite3.connect(copy) as target:
        original.backup(target)
    return str(copy)


def _tracker() -> list[str]:
    """The installed ``tracker`` command beside this interpreter, else ``python -m tracker``."""
    script = Path(sys.executable).with_name("tracker")
    return [str(script)] if script.exists() else [sys.executable, "-m", "tracker"]


def _floor(*args: str) -> list[str]:
    return children.command("cold_floor", *args)


def _starts(work: Path) -> list[Cold]:
    """The commands that open no database: the interpreter's and the command line's start."""
    return [
        Cold(
            "cold_version",
            "tracker --version",
            ["--version"],
            [sys.executable, "-c", f"print('tracker {__version__}')"],
            Target(most=0.15),
            _same_output,
            "the same text",
        ),
        Cold(
            "cold_help",
            "tracker --help",
            ["--help"],
            [sys.executable, "-c", PRINT_FILE, str(_help_text(work))],
            Target(most=0.15),
            lambda run, answer: [] if run.stdout.strip() else ["no help printed"],
            "not compared: the floor prints tracker's own help text",
        ),
    ]


def _commands(db: Database, target: str, copy: str, work: Path) -> list[Cold]:
    picks = _picks(db)
    specimen, descendants = showcase_specimen(db)
    on = ["--db", target]
    manager = ["--db", copy, "--as", FOUNDER["code"]]
    report = str(work / "report.pdf")
    return [
        Cold(
            "cold_lookup",
            f"tracker lookup of a scanned aliquot ({format_id(Kind.ALIQUOT, picks['aliquot'])})",
            [*on, "lookup", format_id(Kind.ALIQUOT, picks["aliquot"])],
            _floor("lookup", target, "aliquot", str(picks["aliquot"])),
            Target(most=0.4),
            _tokens,
            "the specimen's catalogue number and the loan",
        ),
        Cold(
            "cold_show",
            f"tracker show of a specimen with {descendants} descendants",
            [*on, "show", specimen],
            _floor("show", target, str(parse_id(specimen).number), specimen),
            Target(most=0.4),
            _descendant_ids,
            "every powder, solution and aliquot ID",
        ),
        Cold(
            "cold_overview",
            "tracker overview (the open loans)",
            [*on, "overview"],
            _floor("reconcile", target, "", "open"),
            Target(most=0.4),
            lambda run, answer: _missing(run, [str(t) for t in answer.get("tokens", [])]),
            "every open loan's reference (a lab may have none open)",
        ),
        Cold(
            "cold_reconcile_loan",
            f"tracker reconcile --loan {picks['open_loan']}",
            [*on, "reconcile", "--loan", picks["open_loan"]],
            _floor("reconcile", target, picks["open_loan"]),
            Target(most=0.4),
            _specimen_ids,
            "every specimen ID of the loan",
        ),
        Cold(
            "cold_reconcile",
            f"tracker reconcile of all {picks['loans']} loans, as text",
            [*on, "reconcile"],
            _floor("reconcile", target),
            Target(most=1.5),
            _tokens,
            "every loan's reference",
        ),
        Cold(
            "cold_report",
            f"tracker report return (PDF) of a loan of {picks['report_specimens']} specimens",
            [*manager, "report", "return", picks["report_loan"], "--out", report, "--force"],
            _floor("report", copy, picks["report_loan"], str(work / "floor-report.txt")),
            Target(most=1.5),
            lambda run, answer: _pdf_written(report),
            "not compared: a PDF against the floor's text; the PDF is checked to be written",
        ),
    ]


def _picks(db: Database) -> dict[str, Any]:
    """The items the figures ask about: an aliquot in the middle, the loan nearest 100
    specimens (for the report), an open loan (any loan when none is open)."""
    ((aliquots,),) = raw_rows(db, "SELECT COUNT(*) FROM aliquot")
    ((aliquot,),) = raw_rows(
        db, "SELECT id FROM aliquot ORDER BY id LIMIT 1 OFFSET ?", (aliquots // 2,)
    )
    ((report_loan, count),) = raw_rows(
        db,
        "SELECT l.reference, COUNT(*) AS n FROM specimen s JOIN loan l ON l.id = s.loan_id "
        "GROUP BY l.id ORDER BY ABS(COUNT(*) - 100), l.id LIMIT 1",
    )
    ((open_loan,),) = raw_rows(
        db, "SELECT reference FROM loan ORDER BY status <> 'open', id LIMIT 1"
    )
    ((loans,),) = raw_rows(db, "SELECT COUNT(*) FROM loan")
    return {
        "aliquot": aliquot,
        "report_loan": report_loan,
        "report_specimens": count,
        "open_loan": open_loan,
        "loans": loans,
    }


def _help_text(work: Path) -> Path:
    """tracker's own help, for the floor to print (written once, untimed)."""
    from typer.testing import CliRunner

    from tracker.cli import app

    path = work / "help.txt"
    path.write_text(CliRunner().invoke(app, ["--help"]).stdout, encoding="utf-8")
    return path


def _measure(cold: Cold, env: dict[str, str], repeat: int) -> Figure:
    runs, floors = alternated(
        repeat,
        lambda: run_process([*_tracker(), *cold.tracker], env),
        lambda: run_process(cold.floor, env),
        lambda run: run.wall,
    )
    return _figure(cold, runs, floors)


def _figure(cold: Cold, runs: list[ProcessRun], floors: list[ProcessRun]) -> Figure:
    best = min(runs, key=lambda r: r.wall if r.answered else float("inf"))
    bare = min(floors, key=lambda r: r.wall if r.answered else float("inf"))
    figure = Figure(cold.key, cold.title, "s", best.wall, bare.wall, "")  # floor: see FLOORS
    figure.target = cold.target
    figure.notes.append(
        f"CPU {best.cpu:.2f} s (floor {bare.cpu:.2f} s); peak memory {best.peak_mb:.0f} MB "
        f"(floor {bare.peak_mb:.0f} MB)"
    )
    figure.compared = cold.compared
    for run in (best, bare):
        if not run.answered:
            figure.problems.append("no answer: the process ran past its timeout and was killed")
        elif run.code:
            last = (run.stderr.strip().splitlines() or ["(nothing on stderr)"])[-1]
            figure.problems.append(f"exit code {run.code}: {last}")
    if not figure.problems:
        figure.problems.extend(cold.check(best, _answer(bare)))
    return figure


def _answer(run: ProcessRun) -> dict[str, Any]:
    import json

    lines = run.stdout.strip().splitlines()
    if not lines or not lines[-1].startswith("{"):
        return {}
    answer: dict[str, Any] = json.loads(lines[-1])
    return answer


def _same_output(run: ProcessRun, answer: dict[str, Any]) -> list[str]:
    return [] if run.stdout.strip() == f"tracker {__version__}" else ["another version printed"]


def _missing(run: ProcessRun, wanted: list[str]) -> list[str]:
    absent = [w for w in wanted if w not in run.stdout]
    return (
        [f"tracker's output lacks {len(absent)} of {len(wanted)}: {absent[:3]}"] if absent else []
    )


def _tokens(run: ProcessRun, answer: dict[str, Any]) -> list[str]:
    return _missing(run, [str(t) for t in answer.get("tokens", [])]) or _empty(answer, "tokens")


def _descendant_ids(run: ProcessRun, answer: dict[str, Any]) -> list[str]:
    kinds = {"powder": Kind.POWDER, "solution": Kind.SOLUTION, "aliquot": Kind.ALIQUOT}
    wanted = [
        format_id(kinds[name], number)
        for name, numbers in answer.get("ids", {}).items()
        for number in numbers
    ]
    return _missing(run, wanted) or _empty({"ids": wanted}, "ids")


def _specimen_ids(run: ProcessRun, answer: dict[str, Any]) -> list[str]:
    wanted = [format_id(Kind.SPECIMEN, n) for n in answer.get("specimens", [])]
    return _missing(run, wanted) or _empty({"specimens": wanted}, "specimens")


def _empty(answer: dict[str, Any], key: str) -> list[str]:
    return [] if answer.get(key) else [f"the floor found no {key} to compare"]


def _pdf_written(path: str) -> list[str]:
    written = Path(path)
    ok = written.exists() and written.read_bytes()[:5] == b"%PDF-"
    return [] if ok else ["no PDF written"]


def _reduce_figure(copy: str, env: dict[str, str], repeat: int) -> Figure:
    """``session reduce`` of sessions of 1,000, 2,000 and 4,000 runs: the figure is the
    largest, and the notes say how the time grows with the rows."""
    sessions = _import_sessions(copy)
    figures = []
    for rows, session in zip(SESSION_ROWS, sessions, strict=True):
        cold = Cold(
            "cold_reduce",
            f"tracker session reduce of {rows:,} runs",
            ["--db", copy, "--as", TECHNICIANS[0], "session", "reduce", session],
            _floor("reduce", copy, str(parse_id(session).number)),
            Target(most=1.0),
            _reduced_cuts,
            "every cut the floor reduced",
        )
        figures.append(_measure(cold, env, repeat))
    largest = figures[-1]
    pairs = zip(SESSION_ROWS, figures, strict=True)
    grown = ", ".join(f"{rows:,}: {figure.measured:.2f} s" for rows, figure in pairs)
    largest.notes.append(f"{grown} (linear doubles per step)")
    for figure in figures[:-1]:
        largest.problems.extend(f"at fewer rows: {p}" for p in figure.problems)
    return largest


def _reduced_cuts(run: ProcessRun, answer: dict[str, Any]) -> list[str]:
    wanted = [format_id(Kind.CUT, n) for n in answer.get("cuts", [])]
    return _missing(run, wanted) or _empty({"cuts": wanted}, "cuts")


def _import_sessions(copy: str) -> list[str]:
    """Sessions of 1,000, 2,000 and 4,000 runs over the copy's Ca sample cuts (untimed)."""
    from benchmarks.shape import END
    from tracker.demo import StepClock
    from tracker.services.instrument import sessions

    db = open_database(copy, clock=StepClock(END), upgrade=False)
    db.keyring = bench_keyring()
    made = []
    try:
        cuts = [
            format_id(Kind.CUT, row[0])
            for row in raw_rows(
                db,
                "SELECT c.id FROM cut c JOIN batch_position p ON p.id = c.position_id "
                "JOIN column_batch b ON b.id = p.batch_id WHERE b.element = 'Ca' "
                "AND p.kind = 'sample' AND c.name = 'Ca' ORDER BY c.id LIMIT 1000",
            )
        ]
        for rows in SESSION_ROWS:
            targets = max(1, min(len(cuts), (rows - 2) // 4))
            picked = [SessionTarget(cut, "sample") for cut in cuts[:targets]]
            duplicates = targets - 1
            extra = max(0, rows - (1 + 2 * targets + 2 * duplicates))
            content = session_csv(picked, duplicates, extra, random.Random(rows))
            request = {
                "profile": PROFILE,
                "filename": f"cold-{rows}.csv",
                "content": content,
                "name": f"Synthetic cold session of {rows} runs",
                "instrument": "Synthetic MC-ICP-MS",
                "element": "Ca",
                "bracketing_standard": STANDARD,
            }
            made.append(sessions.import_session(db, TECHNICIANS[0], request).item.id)
    finally:
        db.close()
    return made
