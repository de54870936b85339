"""``tracker session``: instrument sessions imported, reduced and plotted."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.fields import Fills
from tracker.cli.out_options import Force, kept_as, kept_note
from tracker.cli.state import database, emit, perform, read_upload
from tracker.db import outputs
from tracker.domain.errors import InputError
from tracker.present.lab import matched_line, names_matched_lines, reduction_table
from tracker.services.instrument import reduction, run_matching, sessions

Opt = typer.Option

app = typer.Typer(
    help="Instrument sessions: import, match rows, reduce, plot.",
    no_args_is_help=True,
    epilog="Example: tracker session reduce IS-00001-A",
)


def _pairs(values: list[str]) -> dict[str, float]:
    parsed = {}
    for item in values:
        ratio, _, number = item.partition("=")
        try:
            parsed[ratio.strip()] = float(number)
        except ValueError:
            raise InputError(
                "standard_values", item, "write RATIO=VALUE, e.g. 87/86=0.710248"
            ) from None
    return parsed


@app.command(
    "import",
    epilog="Example: tracker session import run.csv --profile mc-ca "
    "--name 'Ca 2026-11-24' --instrument 'MC-ICP-MS 2' --element Ca "
    "--standard 'SRM 915a'",
)
def session_import(
    ctx: typer.Context,
    file: Annotated[
        Path,
        typer.Argument(help="The instrument's export (CSV, TSV or XLSX)."),
        Fills("content", "filename"),
    ],
    profile: Annotated[str, Opt("--profile", help="Saved mapping profile.")],
    name: Annotated[str, Opt("--name", help="Session name.")],
    instrument: Annotated[str, Opt("--instrument", help="Which instrument.")],
    element: Annotated[str, Opt("--element", help="Element measured.")],
    bracketing_standard: Annotated[
        str, Opt("--standard", help="Bracketing standard as named in the file.")
    ],
    mode: Annotated[str, Opt("--mode", help="delta (‰) or ratio (normalised ratios).")] = "delta",
    standard_values: Annotated[
        list[str] | None,
        Opt("--standard-value", help="Ratio mode: RATIO=VALUE accepted for the standard."),
    ] = None,
    started_at: Annotated[str | None, Opt("--started", help="Start, ISO 8601 with zone.")] = None,
) -> None:
    """Import an instrument export through a saved profile; unmatched rows are listed."""
    upload = read_upload(file, "FILE") or {}
    request = {
        "profile": profile,
        "filename": upload.get("filename"),
        "content": upload.get("content"),
        "name": name,
        "instrument": instrument,
        "element": element,
        "bracketing_standard": bracketing_standard,
        "mode": mode,
        "standard_values": _pairs(standard_values or []),
        "started_at": started_at,
    }
    answer = perform(ctx, sessions.import_session, request)
    item = answer.item

    def human() -> str:
        lines = [
            f"session {item.id}: {item.measurements} rows — {item.standards} standards, "
            f"{item.samples} samples, {item.references} reference materials, "
            f"{item.blanks} blanks, {len(item.unmatched)} unmatched"
        ]
        lines += [
            f"  unmatched row {u.row} (run {u.run_order}) {u.sample_name!r}: {u.reason}"
            for u in item.unmatched
        ]
        return "\n".join(lines)

    emit(ctx, answer, human)


@app.command("reduce", epilog="Example: tracker --json session reduce IS-00001-A")
def session_reduce(
    ctx: typer.Context,
    session: Annotated[str, typer.Argument(help="Session ID (IS-...).")],
) -> None:
    """Bracket, average and check a session: δ with 2SD and n, reference materials pass/fail."""
    answer = perform(ctx, reduction.reduce_session, {"session": session})
    emit(ctx, answer, lambda: reduction_table(answer.item))


@app.command(
    "match",
    epilog="Example: tracker --as priya session match IS-00003-6 6 CU-00004-F",
)
def session_match(
    ctx: typer.Context,
    session: Annotated[str, typer.Argument(help="Session ID (IS-...).")],
    run_order: Annotated[
        int, typer.Argument(metavar="RUN", help="The unmatched row's run number.")
    ],
    target: Annotated[
        str,
        typer.Argument(
            help="What the row measured: a cut ID, or a specimen's catalogue number or ID "
            "(powder, solution, aliquot) with one cut of the session's element, a column, "
            "a reference material, or the bracketing standard's name."
        ),
    ],
) -> None:
    """Say what one unmatched row of a session measured; then reduce the session again."""
    answer = perform(
        ctx,
        run_matching.match_row,
        {"session": session, "run_order": run_order, "target": target},
    )
    item = answer.item

    def human() -> str:
        return (
            f"{matched_line(item.matched)}\n"
            f"reduce the session again: tracker session reduce {item.session}"
        )

    emit(ctx, answer, human)


@app.command(
    "match-names",
    epilog="Example: tracker --as priya session match-names IS-00003-6",
)
def session_match_names(
    ctx: typer.Context,
    session: Annotated[str, typer.Argument(help="Session ID (IS-...).")],
) -> None:
    """Match the unmatched rows named by a specimen's catalogue number; list the rest."""
    answer = perform(ctx, run_matching.match_by_name, {"session": session})
    item = answer.item

    def human() -> str:
        lines = names_matched_lines(item)
        lines.append(f"reduce the session again: tracker session reduce {item.session}")
        return "\n".join(lines)

    emit(ctx, answer, human)


@app.command("plot", epilog="Example: tracker session plot IS-00001-A --out drift.png")
def session_plot(
    ctx: typer.Context,
    session: Annotated[str, typer.Argument(help="Session ID.")],
    out: Annotated[Path, Opt("--out", help="New PNG file to write.")],
    force: Force = False,
) -> None:
    """Plot the bracketing standard's drift over the session (PNG)."""
    from tracker.output.plots import drift_png

    with database(ctx) as db:
        outputs.check_target(out, "--out", force=force, database=db.path)
        series = sessions.standard_drift(db, session)
        written = outputs.write_new(
            out, drift_png(series), "--out", force=force, database=db.path, clock=db.clock
        )
    emit(
        ctx,
        {
            "out": str(out),
            "standards": len(series.runs),
            "replaced_kept_as": kept_as(written.replaced),
        },
        lambda: f"wrote {out}" + kept_note(written.replaced),
    )
