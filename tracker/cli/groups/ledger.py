"""The custody ledger: verify (against an anchor too), anchor, list, export."""

import sys
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Any

import typer

from tracker.cli.fields import Fills
from tracker.cli.out_options import Force, kept_as, kept_note
from tracker.cli.progress import progress_bar
from tracker.cli.state import database, emit, errors, state, writing
from tracker.domain.anchors import AnchorCheck
from tracker.domain.ledger import VerifyReport
from tracker.present.items import history_table
from tracker.services.ledger import audit, chain, checkpoints
from tracker.services.ledger.audit import AuditReport

app = typer.Typer(
    epilog="Example: tracker ledger verify --anchor head-2026-11-30.json",
    help="The hash-chained custody ledger.",
    no_args_is_help=True,
)


def _verify_text(report: VerifyReport, check: AnchorCheck | None) -> str:
    if not report.ok:
        return (
            f"ledger BROKEN at event #{report.broken_seq}: {report.reason} "
            f"({report.events} events verified before it)"
        )
    text = (
        f"ledger intact: {report.events} events, head #{report.head_seq} {report.head_hash}\n"
        f"signatures: {_signatures(report)}"
    )
    if check is None:
        return text
    if check.ok:
        return f"{text}\nanchor holds: event #{check.anchor_seq} is still {check.anchor_hash}"
    return f"{text}\nanchor FAILED: {check.problem}"


def _signatures(report: VerifyReport) -> str:
    signed = f"{report.signed} signed by a key valid at the time, every one verified"
    if not report.unsigned:
        return signed
    before = f"{report.unsigned} unsigned (recorded before signing)"
    return f"{signed}; {before}" if report.signed else before


@contextmanager
def _progress(ctx: typer.Context) -> Iterator[chain.Progress | None]:
    """A progress bar on stderr when it is a terminal (never with --json): hashes and
    signatures of a decade's ledger take a while."""
    if state(ctx).as_json or not errors.is_terminal:
        yield None
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeRemainingColumn

    columns = ("verifying", BarColumn(), MofNCompleteColumn(), TimeRemainingColumn())
    with Progress(*columns, console=errors, transient=True) as bar:
        task = bar.add_task("verify", total=None)
        yield lambda done, total: bar.update(task, completed=done, total=total)


@app.command(
    "verify",
    epilog="Example: tracker ledger verify --anchor head.json",
)
def ledger_verify(
    ctx: typer.Context,
    anchor: Annotated[
        Path | None,
        typer.Option("--anchor", help="Also require the head kept in this anchor file."),
        Fills("anchor file"),
    ] = None,
) -> None:
    """Re-hash every event and check every signature; print the head (exit 0) or the first
    broken event (exit 1).

    Each signature is checked against the keys the ledger held at that event (registration
    and revocation are events), and a manager's action must carry a manager's signature.
    Events recorded before signing began are counted as unsigned, never as signed. With
    --anchor, the ledger must also still hold the event the anchor file names, and the
    anchor must be signed by a manager's key: a ledger whose newest events were deleted,
    an old copy put back, or an anchor forged for a rewritten ledger fails.
    """
    kept = chain.read_anchor(anchor) if anchor is not None else None
    with database(ctx) as db, _progress(ctx) as progress:
        if kept is None:
            report, check = checkpoints.verify_and_keep(db, progress), None
        else:
            both = chain.verify_against(db, kept, progress)
            report, check = both.chain, both.anchor
    answer: dict[str, Any] = dict(report.__dict__)
    answer["anchor"] = None if check is None else dict(check.__dict__)
    emit(ctx, answer, lambda: _verify_text(report, check))
    if not report.ok or (check is not None and not check.ok):
        raise typer.Exit(1)


@app.command("audit", epilog="Example: tracker ledger audit --json > audit.json")
def ledger_audit(ctx: typer.Context) -> None:
    """Replay the ledger and hold every row against it (exit 1 on any difference).

    Names each value changed without an event, each row no event made and each row an
    event made that is gone: table, ID, field, the ledger's value and the stored value.
    For events recorded before events stated their rows' facts, says what could not be
    checked and from which event on everything is.
    """
    with database(ctx) as db, progress_bar(ctx, "auditing the books") as progress:
        report = audit.audit(db, progress)
    emit(ctx, report.as_dict(), lambda: _audit_text(report))
    if not report.ok:
        raise typer.Exit(1)


def _audit_text(report: AuditReport) -> str:
    found = report.discrepancies
    if found:
        lines = [f"books DIFFER from the ledger in {len(found):,} place(s):"]
        lines += [f"  {d.one_line()}" for d in found]
    else:
        lines = [report.verdict()]
    statement = report.coverage.statement()
    if statement is not None:
        lines.append(f"not checked: {statement}")
    return "\n".join(lines)


@app.command("anchor", epilog="Example: tracker ledger anchor --out anchors/head-2026-11-30.json")
def ledger_anchor(
    ctx: typer.Context,
    out: Annotated[
        Path | None, typer.Option("--out", help="New file to write; default stdout.")
    ] = None,
    force: Force = False,
) -> None:
    """Write the ledger's head (event number and hash) to keep outside the database.

    Keep anchors where the database's users cannot change them (send one with each
    return report); `tracker ledger verify --anchor FILE` later proves that no newer
    events than the anchor's were cut off the ledger. An anchor is signed with your key:
    a manager's.
    """
    actor = state(ctx).actor
    with writing(ctx) as db:
        if out is None:
            typer.echo(chain.current_anchor(db, actor).to_text(), nl=False)
            return
        written = chain.write_anchor(db, actor, out, force=force)
    kept = written.anchor
    emit(
        ctx,
        {
            "out": str(out),
            "seq": kept.seq,
            "hash": kept.hash,
            "taken_at": kept.taken_at,
            "replaced_kept_as": kept_as(written.file.replaced),
        },
        lambda: (
            f"anchored event #{kept.seq} {kept.hash} in {out}" + kept_note(written.file.replaced)
        ),
    )


@app.command("list", epilog="Example: tracker ledger list --limit 20 --action powder")
def ledger_list(
    ctx: typer.Context,
    limit: Annotated[int, typer.Option("--limit", min=1, help="How many, newest first.")] = 30,
    action: Annotated[
        str | None, typer.Option("--action", help="Actions starting with this.")
    ] = None,
) -> None:
    """List recent custody events."""
    with database(ctx) as db:
        events = chain.recent_events(db, limit, action)
    emit(ctx, events, lambda: history_table(events))


@app.command("export", epilog="Example: tracker ledger export --out ledger.jsonl")
def ledger_export(
    ctx: typer.Context,
    out: Annotated[
        Path | None, typer.Option("--out", help="New file to write; default stdout.")
    ] = None,
    force: Force = False,
) -> None:
    """Write the ledger as JSON Lines, each field exactly as hashed (see docs/ledger.md)."""
    with database(ctx) as db:
        if out is None:  # the JSON Lines themselves are the output
            count = chain.export_jsonl(db, sys.stdout)
            errors.print(f"exported {count} events")
            return
        count, written = chain.export_file(db, out, force=force)
    emit(
        ctx,
        {"events": count, "out": str(out), "replaced_kept_as": kept_as(written.replaced)},
        lambda: f"exported {count} events to {out}" + kept_note(written.replaced),
    )
