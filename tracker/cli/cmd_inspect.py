"""Read-only commands: overview, show, and the custody ledger."""

import sys
from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.render import history_table, item_detail, overview_table
from tracker.cli.state import database, emit, errors, state
from tracker.services import ledger, lineage, reconcile

ledger_app = typer.Typer(
    epilog="Example: tracker ledger verify",
    help="The hash-chained custody ledger.",
    no_args_is_help=True,
)


def show_overview(ctx: typer.Context) -> None:
    """Open loans, allowance used, due dates and flags, most urgent first."""
    with database(ctx) as db:
        lines = reconcile.reconcile(db, specimens=False)
    emit(ctx, lines, lambda: overview_table(lines))


def interactive(ctx: typer.Context) -> bool:
    """A person at a terminal (not a pipe, not a script asking for --json)."""
    return not state(ctx).as_json and sys.stdin.isatty() and sys.stdout.isatty()


def open_or_overview(ctx: typer.Context) -> None:
    """The terminal interface for a person at a terminal; the printed overview otherwise."""
    if not interactive(ctx):
        show_overview(ctx)
        return
    from tracker.ui import run_tui

    code = run_tui(state(ctx).target, state(ctx).actor)
    if code:
        raise typer.Exit(code)


OVERVIEW_EPILOG = "Example: tracker --db tracker-demo.sqlite overview"


def show(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Any ID: specimen, powder, solution, loan, ...")],
) -> None:
    """Show an item, the lineage of everything made from it, and its custody history."""
    with database(ctx) as db:
        detail = lineage.show_item(db, item)
    emit(ctx, detail, lambda: item_detail(detail))


SHOW_EPILOG = "Example: tracker --json show SP-00001-W"


@ledger_app.command("verify", epilog="Example: tracker ledger verify")
def ledger_verify(ctx: typer.Context) -> None:
    """Re-hash every event; print the head hash (exit 0) or the first broken event (exit 1)."""
    with database(ctx) as db:
        report = ledger.verify(db)
    emit(
        ctx,
        report.__dict__,
        lambda: (
            f"ledger intact: {report.events} events, head #{report.head_seq} {report.head_hash}"
            if report.ok
            else f"ledger BROKEN at event #{report.broken_seq}: {report.reason} "
            f"({report.events} events verified before it)"
        ),
    )
    if not report.ok:
        raise typer.Exit(1)


@ledger_app.command("list", epilog="Example: tracker ledger list --limit 20 --action powder")
def ledger_list(
    ctx: typer.Context,
    limit: Annotated[int, typer.Option("--limit", min=1, help="How many, newest first.")] = 30,
    action: Annotated[
        str | None, typer.Option("--action", help="Actions starting with this.")
    ] = None,
) -> None:
    """List recent custody events."""
    with database(ctx) as db:
        events = ledger.recent_events(db, limit, action)
    emit(ctx, events, lambda: history_table(events))


@ledger_app.command("export", epilog="Example: tracker ledger export --out ledger.jsonl")
def ledger_export(
    ctx: typer.Context,
    out: Annotated[
        Path | None, typer.Option("--out", help="File to write; default stdout.")
    ] = None,
) -> None:
    """Write the ledger as JSON Lines, each field exactly as hashed (see README)."""
    with database(ctx) as db:
        if out is None:  # the JSON Lines themselves are the output
            count = ledger.export_jsonl(db, sys.stdout)
            errors.print(f"exported {count} events")
            return
        with out.open("w", encoding="utf-8") as handle:
            count = ledger.export_jsonl(db, handle)
    emit(ctx, {"events": count, "out": str(out)}, lambda: f"exported {count} events to {out}")
