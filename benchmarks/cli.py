"""``python -m benchmarks``: build the synthetic lab of a given scale, and measure tracker on it.

Thin commands: options are checked here and handed to the benchmark's modules, imported only
when a command runs. Refusals take tracker's own shape (one line naming the option and the
value, exit 2): the app is a :class:`tracker.cli.state.TrackerGroup`.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.table import Table

from tracker.cli.out_options import Force
from tracker.cli.state import State, TrackerGroup, emit, errors
from tracker.db import outputs
from tracker.domain.errors import InputError

app = typer.Typer(
    cls=TrackerGroup,
    help="Performance: a synthetic lab's decade, and every figure measured next to its floor. "
    "Run from a checkout of tracker; the benchmark is not installed with it.",
    epilog="Example: python -m benchmarks run --scale 1",
    no_args_is_help=True,
    add_completion=False,
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
)
Opt = typer.Option


@app.callback()
def root(
    ctx: typer.Context,
    as_json: Annotated[
        bool, Opt("--json", help="Print exactly one JSON document on stdout.")
    ] = False,
) -> None:
    """Global options."""
    ctx.obj = State(db=None, actor=None, as_json=as_json)


def _cache(given: Path | None) -> Path:
    if given is not None:
        return given
    if os.environ.get("TRACKER_BENCH_CACHE"):
        return Path(os.environ["TRACKER_BENCH_CACHE"])
    from platformdirs import user_cache_dir

    return Path(user_cache_dir("tracker", appauthor=False)) / "bench"


def _scale(text: str, option: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(option, text, "is not a number; scale 1 is a busy lab's decade") from None
    if not 0 < value <= 64:
        raise InputError(option, text, "must be above 0 and at most 64")
    return value


def _say(message: str) -> None:
    errors.print(message, markup=False, highlight=False)


@app.command(epilog="Example: python -m benchmarks generate --scale 0.25")
def generate(
    ctx: typer.Context,
    scale: Annotated[str, Opt("--scale", help="1 = 300 loans, 1,000,000+ events.")] = "1",
    cache: Annotated[Path | None, Opt("--cache", help="Folder of cached databases.")] = None,
    out: Annotated[Path | None, Opt("--out", help="Write a new SQLite file here instead.")] = None,
    executor: Annotated[
        str, Opt("--executor", help="bulk (batched) or services (one call per action, slow).")
    ] = "bulk",
    pg_url: Annotated[
        str | None, Opt("--pg-url", help="Write into this empty PostgreSQL database instead.")
    ] = None,
    rebuild: Annotated[bool, Opt("--rebuild", help="Build again even if cached.")] = False,
) -> None:
    """Build the synthetic database of a scale (deterministic; the cached copy is reused)."""
    from benchmarks import generate as gen

    value = _scale(scale, "--scale")
    if executor not in ("bulk", "services"):
        raise InputError("--executor", executor, "is neither bulk nor services")
    if out is not None:
        outputs.check_target(out, "--out", forceable=False)
    progress = lambda n: _say(f"{n:,} steps written")  # noqa: E731
    if pg_url is not None or out is not None:
        target = pg_url or str(out)
        built = gen.build(
            target, value, "services" if executor == "services" else "bulk", progress=progress
        )
    elif executor != "bulk":
        raise InputError("--executor", executor, "the cache is built in bulk; give --out FILE")
    else:
        built = gen.cached(_cache(cache), value, rebuild=rebuild, progress=progress)
    said = "reused" if built.reused else "built"
    emit(
        ctx,
        built.__dict__,
        lambda: (
            f"{said} {built.target}: scale {built.scale:g}, {built.events:,} events, "
            f"head {built.head_hash[:16]}… ({built.seconds:.0f} s)"
        ),
    )


@app.command(epilog="Example: python -m benchmarks run --scales 0.25,1,4 --backend sqlite")
def run(
    ctx: typer.Context,
    scale: Annotated[str, Opt("--scale", help="One scale (1 = a busy lab's decade).")] = "1",
    scales: Annotated[
        str | None, Opt("--scales", help="Several scales for the growth table, e.g. 0.25,1,4.")
    ] = None,
    backend: Annotated[str, Opt("--backend", help="sqlite, postgresql or both.")] = "both",
    pg_url: Annotated[
        str | None, Opt("--pg-url", help="PostgreSQL server for the PostgreSQL figures.")
    ] = None,
    pg_cluster: Annotated[
        bool,
        Opt(
            "--pg-cluster",
            help="Start a throwaway PostgreSQL cluster for them instead (initdb in a temporary "
            "folder, as the postgres user when run as root; deleted afterwards).",
        ),
    ] = False,
    repeat: Annotated[int, Opt("--repeat", min=1, max=20, help="Runs per figure (best kept).")] = 3,
    cache: Annotated[Path | None, Opt("--cache", help="Folder of cached databases.")] = None,
    only: Annotated[
        str | None, Opt("--only", help="Some figures: reconcile,verify,manifest,lookup,...")
    ] = None,
    page: Annotated[
        Path | None,
        Opt(
            "--page",
            help="Also write the whole performance page (docs/performance.md): a page an earlier "
            "run wrote is replaced, and its figures are compared with this run's.",
        ),
    ] = None,
    force: Force = False,
) -> None:
    """Measure every figure next to its floor; exit 1 if a target is missed."""
    from benchmarks import run as bench

    chosen = [_scale(s, "--scales") for s in scales.split(",")] if scales else []
    if backend not in ("sqlite", "postgresql", "both"):
        raise InputError("--backend", backend, "is not sqlite, postgresql or both")
    if pg_url and pg_cluster:
        raise InputError("--pg-url", pg_url, "give --pg-url or --pg-cluster, not both")
    if backend == "postgresql" and not (pg_url or pg_cluster):
        from benchmarks.figures_pg import NO_SERVER

        raise InputError("--backend", backend, NO_SERVER)
    keys = _only(only, backend)
    options = bench.Options(
        scales=chosen or [_scale(scale, "--scale")],
        backend=backend,  # type: ignore[arg-type]
        pg_url=pg_url,
        pg_cluster=pg_cluster,
        repeat=repeat,
        cache=_cache(cache),
        only=keys,
        say=_say,
    )
    previous = _page_to_replace(page, force)
    report = bench.run(options)
    if page is not None:
        from benchmarks.page import page as whole_page

        scales_text = ",".join(f"{s:g}" for s in options.scales)
        command = (
            f"python -m benchmarks run --scales {scales_text} --backend {backend} --repeat {repeat}"
        )
        command += " --pg-cluster" if pg_cluster else " --pg-url URL" if pg_url else ""
        command += f" --only {only}" if only else ""
        command += f" --page {page}"
        text = whole_page(report.as_dict(), command, previous)
        written = outputs.write_new(page, text.encode(), "--page", force=True)
        if written.replaced is not None:  # the page replaced is in git's history
            written.replaced.unlink()
    emit(ctx, report.as_dict(), lambda: _tables(report))
    if not report.all_met:
        raise typer.Exit(1)


@app.command(
    "page",
    epilog="Example: python -m benchmarks page docs/performance.md --report report.json",
)
def rewrite_page(
    ctx: typer.Context,
    page: Annotated[Path, typer.Argument(help="The page a run wrote (docs/performance.md).")],
    report: Annotated[
        Path, Opt("--report", help="That run's report: `python -m benchmarks --json run …`.")
    ],
    previous: Annotated[
        Path | None,
        Opt("--previous", help="The page that run replaced, for a page that does not keep it."),
    ] = None,
) -> None:
    """Write a performance page again from its run's saved report, with the reasons for
    slower or missed figures recorded since; the figures, command and commit stay the run's."""
    import json

    from benchmarks.page import rewritten

    text = _read(page, "page")
    try:
        data = json.loads(_read(report, "--report"))
    except json.JSONDecodeError:
        raise InputError("--report", str(report), "is not a run's JSON report") from None
    try:
        new = rewritten(text, data, _read(previous, "--previous") if previous else None)
    except (KeyError, TypeError, IndexError):
        raise InputError("--report", str(report), "is not a run's JSON report") from None
    except ValueError as error:
        raise InputError("page", str(page), str(error)) from None
    written = outputs.write_new(page, new.encode(), "page", force=True)
    if written.replaced is not None:  # the page replaced is in git's history
        written.replaced.unlink()
    emit(ctx, {"page": str(page)}, lambda: f"wrote {page} again, with today's reasons")


def _read(path: Path, field: str) -> str:
    """A file's text, read by tracker's one reader of files handed over (same refusals)."""
    from tracker.db.uploads import read_file

    return bytes(read_file(path, field)["content"]).decode("utf-8", errors="replace")


def _only(only: str | None, backend: str) -> tuple[str, ...]:
    """The figures ``--only`` names (all when none): each a figure, one at least measured on
    the backend chosen ("cold" is measured on both)."""
    from benchmarks.run import PG_FIGURES, SQLITE_FIGURES

    keys = tuple(k.strip() for k in only.split(",")) if only else ()
    known = list(dict.fromkeys((*SQLITE_FIGURES, *PG_FIGURES)))
    unknown = [k for k in keys if k not in known]
    if unknown:
        raise InputError(
            "--only", unknown[0], f"is not a figure; the figures are {', '.join(known)}"
        )
    measured = {"sqlite": SQLITE_FIGURES, "postgresql": PG_FIGURES}.get(backend, known)
    if keys and not set(keys) & set(measured):
        raise InputError(
            "--only",
            only,
            f"names no figure measured on {backend}: those are {', '.join(measured)}",
        )
    return keys


def _page_to_replace(page: Path | None, force: bool) -> str | None:
    """The page a run will replace (checked before running): a page an earlier run wrote, or
    any file with --force; its text, so the new page can say what got slower."""
    if page is None:
        return None
    from benchmarks.page import written_by_us

    outputs.check_target(page, "--page", force=True)  # a folder, a database: refused anyway
    if not page.is_file():
        return None
    text = page.read_bytes().decode("utf-8", errors="replace")
    if not written_by_us(text):
        outputs.check_target(page, "--page", force=force)
    return text


def _tables(report: Any) -> Table:
    table = Table(title="tracker benchmark", title_justify="left", show_lines=False)
    for heading in ("Figure", "Scale", "Measured", "Floor", "Ratio", "Target", "Met"):
        table.add_column(heading, justify="left" if heading in ("Figure", "Target") else "right")
    for f in report.figures:
        met = {True: "✓ met", False: "✗ missed", None: "– report only"}[f.met]
        table.add_row(
            f"{f.title}\n  floor: {f.floor_title}"
            + "".join(f"\n  {n}" for n in f.notes)
            + "".join(f"\n  ✗ {p}" for p in f.problems),
            f"{f.scale:g}",
            _value(f.measured, f.unit),
            _value(f.floor, f.unit),
            f"{f.ratio:.2f}",
            f.target.text(f.unit),
            met,
        )
    for s in report.skipped:
        table.add_row(f"{s.key}: skipped — {s.reason}", f"{s.scale:g}", "", "", "", "", "? skipped")
    growth = report.growth()
    if growth:
        table.add_section()
        for g in growth:
            values = ", ".join(f"{v:.3g} {g.unit} at {k:g}" for k, v in sorted(g.values.items()))
            table.add_row(
                f"growth: {g.title}",
                "",
                values,
                "",
                f"^{g.exponent:.2f}",
                "≤ ^1.15",
                "✓ " + g.verdict if g.exponent <= 1.15 else "✗ " + g.verdict,
            )
    m = report.machine
    table.caption = (
        f"{m['cores']} cores, {m['cpu']}, {m['ram_gb']} GB RAM, Python {m['python']}, "
        f"SQLite {m['sqlite']}, load {m['load']} at the start, {m.get('load_end')} at the end; "
        "best of the runs, ratio = measured / floor"
    )
    return table


def _value(value: float, unit: str) -> str:
    return f"{value:.3f} {unit}" if unit in ("s", "ms") else f"{value:,.1f} {unit}"
