"""Label commands: the print queue, printing and reprinting on a stock, previews, scanning.

Rendering lives in ``tracker.output`` and is imported inside the commands, so
``tracker --help`` does not load reportlab, qrcode or Pillow.
"""

from pathlib import Path
from typing import Annotated, Any

import typer
from rich.text import Text

from tracker.cli.out_options import Force, kept_note
from tracker.cli.state import database, emit, perform, state, writing
from tracker.domain.text_rules import visible
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table
from tracker.services.labels import handling

Opt = typer.Option
Arg = typer.Argument

app = typer.Typer(
    epilog="Example: tracker labels print --stock a4-65 --out labels.pdf",
    help="Labels: the print queue, printing on label stocks (PDF), previews (PNG).",
    no_args_is_help=True,
)

Items = Annotated[list[str], Arg(help="IDs, typed or scanned.", show_default=False)]
StockOpt = Annotated[str, Opt("--stock", help="Label stock; see `tracker labels stocks`.")]
Start = Annotated[
    int, Opt("--start", help="First free position on the first sheet (1 = top left, by rows).")
]
OutPdf = Annotated[
    Path | None, Opt("--out", help="New PDF to write; default labels-<job>-event-<n>.pdf here.")
]
Printer = Annotated[
    str | None, Opt("--printer", help="Also send the PDF to this print queue with `lp -d`.")
]
StocksFile = Annotated[
    Path | None,
    Opt("--stocks", envvar="TRACKER_LABEL_STOCKS", help="The lab's own stocks (TOML)."),
]


@app.command("queue", epilog="Example: tracker labels queue PW-00001-5 SO-00002-K")
def queue(
    ctx: typer.Context,
    items: Items,
    copies: Annotated[int, Opt("--copies", help="Labels per item.")] = 1,
) -> None:
    """Queue labels by hand (drills, dissolutions, aliquots, check-ins queue their own)."""
    answer = perform(ctx, handling.queue_labels, {"items": items, "copies": copies})
    count = len(answer.item.items)
    emit(ctx, answer, lambda: done(answer, f"{count} label(s) queued"))


@app.command(
    "cancel", epilog="Example: tracker labels cancel SP-00003-S --reason 'returned unopened'"
)
def cancel(
    ctx: typer.Context,
    items: Items,
    reason: Annotated[str, Opt("--reason", help="Why these labels are not wanted.")],
) -> None:
    """Take items' queued labels off the queue."""
    answer = perform(ctx, handling.cancel_labels, {"items": items, "reason": reason})
    count = len(answer.item.items)
    emit(ctx, answer, lambda: done(answer, f"{count} queued label(s) cancelled"))


@app.command("list", epilog="Example: tracker labels list --all --limit 50")
def list_command(
    ctx: typer.Context,
    everything: Annotated[
        bool, Opt("--all", help="Also printed and cancelled labels, newest first.")
    ] = False,
    limit: Annotated[int, Opt("--limit", min=1, help="At most this many.")] = 1000,
) -> None:
    """List the queued labels (what `tracker labels print` would print), in queue order."""
    with database(ctx) as db:
        rows = handling.list_labels(db, everything, limit)

    def table() -> AlignedTable | Text:
        if not rows:
            return Text("No labels are queued." if not everything else "No labels yet.")
        headers = ["item", "label text", "queued", "event"]
        t = plain_table(*headers, *(["status", "job"] if everything else []))
        for r in rows:
            cells = [r.item, " / ".join(r.lines), f"{r.queued_at:%Y-%m-%d}", f"#{r.queued_event}"]
            t.add_row(*cells, *([r.status, r.job or ""] if everything else []))
        return t

    emit(ctx, rows, table)


@app.command("print", epilog="Example: tracker labels print --stock a4-65 --start 14")
def print_command(
    ctx: typer.Context,
    stock: StockOpt,
    start: Start = 1,
    out: OutPdf = None,
    printer: Printer = None,
    stocks: StocksFile = None,
    force: Force = False,
    items: Annotated[
        list[str] | None,
        Opt("--item", help="Only this item's queued label (repeat for more); default: all."),
    ] = None,
) -> None:
    """Print queued labels to a vector PDF and record the job (one ledger event)."""
    from tracker.output import jobs

    with writing(ctx) as db:
        outcome = jobs.print_queue(
            db,
            state(ctx).actor,
            stock=stock,
            start=start,
            out=out,
            printer=printer,
            stocks_file=stocks,
            force=force,
            items=items or None,
        )
    emit(ctx, outcome, lambda: _job_text(outcome))


@app.command(
    "reprint",
    epilog="Example: tracker labels reprint PW-00001-5 --reason 'label smudged by acid' "
    "--stock cryovial-wrap",
)
def reprint_command(
    ctx: typer.Context,
    items: Items,
    reason: Annotated[str, Opt("--reason", help="Why a label is printed again.")],
    stock: StockOpt,
    start: Start = 1,
    out: OutPdf = None,
    printer: Printer = None,
    stocks: StocksFile = None,
    force: Force = False,
) -> None:
    """Print named items' labels again, with a reason (one ledger event); the queue stays."""
    from tracker.output import jobs

    with writing(ctx) as db:
        outcome = jobs.reprint(
            db,
            state(ctx).actor,
            items=items,
            reason=reason,
            stock=stock,
            start=start,
            out=out,
            printer=printer,
            stocks_file=stocks,
            force=force,
        )
    emit(ctx, outcome, lambda: _job_text(outcome))


def _job_text(outcome: Any) -> Text:
    job = outcome.job
    text = Text.assemble(
        ("recorded ", "green"),
        (f"{job.kind} job {job.id}", "bold"),
        f": {job.labels} label(s) on {job.stock}, {job.pages} page(s) → {outcome.out}"
        f"  (ledger event #{outcome.event_seq}){_kept(outcome.replaced_kept_as)}"
        f"\nSHA-256 {job.sha256}",
    )
    if outcome.printer is not None:
        style = "green" if outcome.printer.sent else "yellow"
        text.append(f"\nprinter {outcome.printer.printer}: ")
        text.append(visible(outcome.printer.message), style=style)
    return text


@app.command("preview", epilog="Example: tracker labels preview --stock a4-65 --out sheet.png")
def preview(
    ctx: typer.Context,
    stock: StockOpt,
    out: Annotated[Path, Opt("--out", help="New PNG to write.")],
    items: Annotated[
        list[str] | None, Arg(help="IDs to preview; default the queue.", show_default=False)
    ] = None,
    start: Start = 1,
    page: Annotated[int, Opt("--page", help="Which sheet of the job.")] = 1,
    dpi: Annotated[int, Opt("--dpi", help="Resolution of the PNG.")] = 300,
    stocks: StocksFile = None,
    force: Force = False,
) -> None:
    """Draw one sheet of labels as a PNG, with the label outlines; nothing is recorded."""
    from tracker.output import jobs

    with database(ctx) as db:
        outcome = jobs.preview(
            db,
            stock=stock,
            out=out,
            items=items or None,
            start=start,
            page=page,
            dpi=dpi,
            stocks_file=stocks,
            force=force,
        )
    emit(
        ctx,
        outcome,
        lambda: (
            f"wrote {outcome.out}: page {outcome.page} of {outcome.pages}, "
            f"{len(outcome.items)} label(s) on {outcome.stock} (preview only, nothing recorded)"
            + _kept(outcome.replaced_kept_as)
        ),
    )


def _kept(replaced: str | None) -> str:
    return kept_note(None if replaced is None else Path(replaced))


@app.command("stocks", epilog="Example: tracker labels stocks --stocks lab-stocks.toml")
def stocks_command(ctx: typer.Context, stocks: StocksFile = None) -> None:
    """List the label stocks: presets and the lab's own, each checked."""
    from tracker.domain.errors import InputError
    from tracker.output.stocks import entries, validate

    rows: list[dict[str, Any]] = []
    for name, entry in sorted(entries(stocks).items()):
        try:
            stock = validate(entry)
        except InputError as problem:
            rows.append(
                {"name": name, "source": entry.source, "ok": False, "problem": problem.reason}
            )
            continue
        rows.append(
            {
                "name": name,
                "source": entry.source,
                "ok": True,
                "problem": None,
                "label_mm": [stock.label_width_mm, stock.label_height_mm],
                "grid": [stock.columns, stock.rows],
                "page_mm": [stock.page_width_mm, stock.page_height_mm],
                "description": stock.description,
            }
        )

    def table() -> AlignedTable:
        t = plain_table("stock", "label", "per page", "page", "for")
        for r in rows:
            origin = "" if r["source"] == "preset" else f" (from {r['source']})"
            if not r["ok"]:
                t.add_row(r["name"], "", "", "", f"NOT USABLE: {r['problem']}")
                continue
            t.add_row(
                r["name"],
                "{:g} × {:g} mm".format(*r["label_mm"]),
                "{} × {}".format(*r["grid"]),
                "{:g} × {:g} mm".format(*r["page_mm"]),
                r["description"] + origin,
            )
        return t

    emit(ctx, rows, table)


@app.command("uri-prefix", epilog="Example: tracker labels uri-prefix HTTPS://LAB.EXAMPLE/T/")
def uri_prefix_command(
    ctx: typer.Context,
    uri_prefix: Annotated[
        str | None, Arg(help="Put in front of every ID in the QR codes.", show_default=False)
    ] = None,
    clear: Annotated[bool, Opt("--clear", help="QR codes carry the bare ID again.")] = False,
) -> None:
    """Show or set (managers) the link prefix printed in front of IDs in QR codes."""
    if uri_prefix is None and not clear:
        with database(ctx) as db:
            settings = handling.label_settings(db)
        shown = settings.uri_prefix or "none: QR codes carry the bare ID"
        emit(ctx, settings, lambda: f"label URI prefix: {shown}")
        return
    answer = perform(ctx, handling.set_uri_prefix, {"uri_prefix": None if clear else uri_prefix})
    value = answer.item.uri_prefix or "none"
    emit(ctx, answer, lambda: done(answer, f"label URI prefix: {value}"))
