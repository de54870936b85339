"""PostgreSQL figures: reconcile at the scale's size, drills per second with 8 clients, and
the everyday commands as whole processes (``figures_cold``'s table, on the server).

The database is built by the bulk executor into a fresh database on the server ``--pg-url``
names, or, only when asked (``--pg-cluster``), on a throwaway cluster started with the test
suite's own helper (``tests/pg.py``: ``initdb`` in a temporary folder, as the ``postgres`` user
when run as root). Without either, the PostgreSQL figures are skipped with the reason.
"""

from __future__ import annotations

import itertools
import json
import multiprocessing
import tempfile
from collections import defaultdict
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from sqlalchemy import create_engine, inspect, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError

from benchmarks.figures_read import raw_rows, reconcile_figure
from benchmarks.generate import Built, Progress, build, ledger_head
from benchmarks.measure import Figure, Target
from benchmarks.pg_clients import drills, floor
from benchmarks.plan import bench_keyring
from benchmarks.shape import END
from tracker.db.database import Database, open_database
from tracker.demo import StepClock
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ids import Kind, format_id

CLIENTS = 8
DRILLS_PER_CLIENT = 40
NO_SERVER = "needs a server: give --pg-url, or --pg-cluster to start a throwaway one"
SERVER_SETTINGS = ("shared_buffers=256MB", "work_mem=32MB", "max_connections=50")


@contextmanager
def server(url: str | None, cluster: bool) -> Iterator[str]:
    """The server to use: the one ``url`` names, else a throwaway cluster if asked for one."""
    if url:
        yield url
        return
    if not cluster:
        raise InputError("--backend", "postgresql", NO_SERVER)
    from tests.pg import private_cluster, server_binaries  # run from a checkout, as is this

    binaries = server_binaries()
    if binaries is None:
        raise InputError(
            "--backend",
            "postgresql",
            "no PostgreSQL server binaries here; install it or give --pg-url",
        )
    with private_cluster(binaries, *SERVER_SETTINGS) as started:
        yield started


def fresh_database(server_url: str, name: str, template: str | None = None) -> str:
    """An empty database ``name`` on the server (dropped first if it exists), or with
    ``template`` a copy of that database."""
    copied = f' TEMPLATE "{template}"' if template else ""
    _as_admin(
        server_url,
        f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)',
        f'CREATE DATABASE "{name}"{copied}',
    )
    return make_url(server_url).set(database=name).render_as_string(hide_password=False)


def drop_database(url: str) -> None:
    _as_admin(url, f'DROP DATABASE IF EXISTS "{make_url(url).database}" WITH (FORCE)')


def _as_admin(server_url: str, *statements: str) -> None:
    """Run ``statements`` from the server's maintenance database, outside a transaction."""
    admin = create_engine(
        make_url(server_url).set(database="postgres"), isolation_level="AUTOCOMMIT"
    )
    try:
        with admin.connect() as connection:
            for statement in statements:
                connection.execute(text(statement))
    finally:
        admin.dispose()


def built_database(
    server_url: str, scale: float, given: bool, progress: Progress | None
) -> tuple[str, Built | None]:
    """The scale's database on the server: reused when a URL names one already built."""
    if given:
        engine = create_engine(server_url)
        try:
            filled = inspect(engine).has_table("custody_event")
        finally:
            engine.dispose()
        if filled:
            return server_url, None
        return server_url, build(server_url, scale, "bulk", progress=progress)
    url = fresh_database(server_url, f"tracker_bench_{str(scale).replace('.', '_')}")
    return url, build(url, scale, "bulk", progress=progress)


def postgresql_figures(url: str, scale: float, repeat: int) -> list[Figure]:
    db = open_database(url, clock=StepClock(END), upgrade=False)
    db.keyring = bench_keyring()  # the synthetic operators sign
    try:
        figure = on_postgresql(reconcile_figure(db, repeat))
        figure.scale = scale
        rate = drills_figure(db, url)
    finally:
        db.close()
    return [figure, rate]


def on_postgresql(figure: Figure) -> Figure:
    """A figure measured on PostgreSQL, told apart from its SQLite twin by key and title."""
    figure.key, figure.title = f"pg_{figure.key}", f"PostgreSQL: {figure.title}"
    return figure


def cold_figures(url: str, scale: float, repeat: int) -> list[Figure]:
    """The everyday commands as whole processes on the server (``figures_cold``'s table).

    The commands that write run on a copy made by ``CREATE DATABASE ... TEMPLATE`` of the
    built database: the server copies its files, so the copy holds the same rows and the
    same ledger in seconds, where building a second database would take as long as the
    first build (most of a scale-1 run) for the same content. The server copies a template
    only while no other session is connected to it, so the copy is made before this
    function opens the database; it is dropped afterwards.
    """
    from benchmarks.figures_cold import cold_figures as commands

    copy = _writable_copy(url)
    db = open_database(url, clock=StepClock(END), upgrade=False)
    db.keyring = bench_keyring()  # the synthetic operators sign
    try:
        with tempfile.TemporaryDirectory(prefix="tracker-bench-pg-cold-") as work:
            figures = commands(db, url, copy, Path(work), repeat)
    finally:
        db.close()
        drop_database(copy)
    for figure in figures:
        on_postgresql(figure).scale = scale
    return figures


def _writable_copy(url: str) -> str:
    built = make_url(url).database or "postgres"
    try:
        return fresh_database(url, f"{built}_writes", template=built)
    except DBAPIError as error:  # another session on it, or no right to create databases
        said = str(error.orig).strip().splitlines()[0] if error.orig else type(error).__name__
        raise RuleViolation(
            "PostgreSQL", None, f"no copy of the database for the commands that write: {said}"
        ) from None


def _work(db: Database) -> list[tuple[str, str]]:
    """Specimens on hand in open loans, already sampled, far from their limits — one drill
    each, taken from the loans in turn so that consecutive drills charge different loans."""
    rows = raw_rows(
        db,
        """
        SELECT s.loan_id, s.id, t.permitted_tissues FROM specimen s
        JOIN loan l ON l.id = s.loan_id AND l.status = 'open'
        JOIN loan_terms t ON t.loan_id = l.id AND t.version = 1
        WHERE s.status = 'on_hand'
          AND (SELECT SUM(p.mass_mg) FROM powder p WHERE p.specimen_id = s.id) < 25
        ORDER BY s.loan_id, s.id""",
    )
    by_loan: dict[int, list[tuple[str, str]]] = defaultdict(list)
    for loan_id, specimen, tissues in rows:
        permitted = tissues if isinstance(tissues, list) else json.loads(tissues)
        by_loan[loan_id].append((format_id(Kind.SPECIMEN, specimen), permitted[0]))
    rounds = itertools.zip_longest(*by_loan.values())
    return [pair for turn in rounds for pair in turn if pair is not None]


def _rate(target: Any, jobs: list[tuple[Any, ...]]) -> float:
    context = multiprocessing.get_context("spawn")
    start = context.Barrier(len(jobs))
    out = context.Queue()
    workers = [context.Process(target=target, args=(*job, start, out)) for job in jobs]
    for worker in workers:
        worker.start()
    results = [out.get(timeout=600) for _ in workers]
    for worker in workers:
        worker.join()
    failed = [r[1] for r in results if r[0] == "failed"]
    if failed:
        raise RuntimeError(f"a benchmark client failed: {failed[0]}")
    began, ended = min(r[0] for r in results), max(r[1] for r in results)
    return float(sum(r[2] for r in results) / (ended - began))


def drills_figure(db: Database, url: str) -> Figure:
    work = _work(db)
    each = min(DRILLS_PER_CLIENT, len(work) // CLIENTS)  # small scales have fewer specimens
    if each < 1:
        raise RuntimeError(f"only {len(work)} specimens can take a benchmark drill")
    need = CLIENTS * each
    before = ledger_head(db)[0]
    shares = [work[n::CLIENTS][:each] for n in range(CLIENTS)]
    measured = _rate(drills, [(url, share, n) for n, share in enumerate(shares)])
    bare = _rate(floor, [(url, each) for _ in range(CLIENTS)])
    figure = Figure(
        "pg_drills",
        f"PostgreSQL: drills per second, {CLIENTS} clients",
        "drills/s",
        measured,
        bare,
        "writer lock + ledger head per transaction",
        Target(),
        higher_is_better=True,
    )
    written = ledger_head(db)[0] - before
    if written != need:
        figure.problems.append(f"{written} events written for {need} drills")
    figure.notes.append(f"{need} drills, one ledger event each")
    figure.compared = "one ledger event written per drill"
    return figure
