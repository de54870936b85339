"""``tracker batch``: ion-exchange column batches, their columns, cuts and blanks."""

from datetime import datetime
from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.fields import Fills
from tracker.cli.state import database, emit, perform, read_upload
from tracker.domain.models import PositionKind
from tracker.present import text as words
from tracker.present.lab import batch_table, position_removed
from tracker.present.text import done
from tracker.services.bench import batch_sheet as batch_sheet_service
from tracker.services.bench import chemistry, columns

Opt = typer.Option

app = typer.Typer(
    epilog="Example: tracker batch add CB-00001-G --blank",
    help="Ion-exchange column batches.",
    no_args_is_help=True,
)


@app.command(
    "create",
    epilog="Example: tracker batch create --name 'Ca 2026-11 A' "
    "--date 2026-11-20 --element Ca --resin 'DGA, 100-150 um' "
    "--scheme 'load 3 M HNO3; matrix off; Ca in 0.05 M HNO3' --cuts matrix,Ca",
)
def batch_create(
    ctx: typer.Context,
    name: Annotated[str, Opt("--name", help="Batch name.")],
    performed_on: Annotated[datetime, Opt("--date", formats=["%Y-%m-%d"], help="Day of the run.")],
    element: Annotated[str, Opt("--element", help="Element separated.")],
    resin: Annotated[str, Opt("--resin", help="Resin and mesh.")],
    elution_scheme: Annotated[str, Opt("--scheme", help="Elution scheme, free text.")],
    cut_names: Annotated[str, Opt("--cuts", help="Named cuts, comma-separated.")],
) -> None:
    """Open a column batch."""
    request = {
        "name": name,
        "performed_on": performed_on.date(),
        "element": element,
        "resin": resin,
        "elution_scheme": elution_scheme,
        "cut_names": cut_names,
    }
    answer = perform(ctx, chemistry.create_batch, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {name}"))


@app.command("add", epilog="Example: tracker batch add CB-00001-G --sample AQ-00001-F")
def batch_add(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID.")],
    aliquot: Annotated[str | None, Opt("--sample", help="Aliquot ID to load.")] = None,
    blank: Annotated[bool, Opt("--blank", help="Add a procedural blank."), Fills("kind")] = False,
    reference_material: Annotated[
        str | None, Opt("--reference", help="Reference material name or ID.")
    ] = None,
    loaded_ug: Annotated[
        float | None, Opt("--loaded-ug", help="Element loaded (reference), µg.")
    ] = None,
) -> None:
    """Add the next column: a sample aliquot, a procedural blank or a reference material."""
    kind = (
        PositionKind.SAMPLE
        if aliquot
        else PositionKind.REFERENCE
        if reference_material
        else PositionKind.BLANK
        if blank
        else None
    )
    if kind is None:
        raise typer.BadParameter("give one of --sample, --blank or --reference")
    request = {
        "batch": batch,
        "kind": kind,
        "aliquot": aliquot,
        "reference_material": reference_material,
        "loaded_ug": loaded_ug,
    }
    answer = perform(ctx, chemistry.add_position, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} column {answer.item.slot}"))


BATCH_CUT_EPILOG = "Example: tracker batch cut CP-00002-6 --cut Ca --recovered '10.2 ug' --rel-u 1"


@app.command("cut", epilog=BATCH_CUT_EPILOG)
def batch_cut(
    ctx: typer.Context,
    position: Annotated[str, typer.Argument(help="Column position ID (CP-...).")],
    cut: Annotated[str, Opt("--cut", help="Cut name, one of the batch's cuts.")],
    recovered: Annotated[
        str | None, Opt("--recovered", help="Element recovered, e.g. '9.87 ug'.")
    ] = None,
    uncertainty: Annotated[
        str | None, Opt("--u", help="Its standard uncertainty, with unit.")
    ] = None,
    relative_uncertainty_percent: Annotated[
        float | None, Opt("--rel-u", help="Or relative uncertainty, %.")
    ] = None,
    location: Annotated[str | None, Opt("--to", help="Location of the cut's vial.")] = None,
) -> None:
    """Record a collected cut of a column and what element it recovered."""
    request = {
        "position": position,
        "cut": cut,
        "recovered": recovered,
        "uncertainty": uncertainty,
        "relative_uncertainty_percent": relative_uncertainty_percent,
        "location": location,
    }
    answer = perform(ctx, columns.record_cut, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.cut_recorded(item)))


BATCH_REMOVE_EPILOG = (
    "Example: tracker batch remove CP-00002-6 --reason 'scanned the neighbouring tube by mistake'"
)


@app.command("remove", epilog=BATCH_REMOVE_EPILOG)
def batch_remove(
    ctx: typer.Context,
    position: Annotated[str, typer.Argument(help="Column position ID (CP-...).")],
    reason: Annotated[str, Opt("--reason", help="Why the column comes off (kept forever).")],
) -> None:
    """Take a column scanned by mistake off its batch, before any cut is collected.

    The column stays on record as removed, with the reason; its slot takes the next column
    added, and its aliquot is available again.
    """
    answer = perform(ctx, chemistry.remove_position, {"position": position, "reason": reason})
    emit(ctx, answer, lambda: done(answer, position_removed(answer.item)))


@app.command("show", epilog="Example: tracker batch show CB-00001-G")
def batch_show(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID (CB-...).")],
) -> None:
    """Yields and blank fractions of every column of a batch, flagged against its limits."""
    with database(ctx) as db:
        summary = columns.summarize_batch(db, batch)
    emit(ctx, summary, lambda: batch_table(summary))


BATCH_SHEET_EPILOG = "Example: tracker batch sheet CB-00001-G columns-2026-11-20.csv"


@app.command("sheet", epilog=BATCH_SHEET_EPILOG)
def batch_sheet(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID (CB-...).")],
    file: Annotated[
        Path,
        typer.Argument(help="Sheet: CSV, TSV or XLSX, one row per column."),
        Fills("content", "filename"),
    ],
) -> None:
    """Enter a batch's columns and cuts from a sheet, all at once; safe to repeat.

    Columns: slot, kind (sample, blank, reference), item (aliquot ID or reference
    material), loaded (reference materials, with unit), and per cut of the batch a
    column named like the cut with the element recovered (with unit) and optionally
    '<cut> u' with its standard uncertainty. Rows already entered are passed over.
    """
    upload = read_upload(file, "FILE") or {}
    answer = perform(ctx, batch_sheet_service.enter_sheet, {"batch": batch, **upload})
    item = answer.item
    emit(
        ctx,
        answer,
        lambda: done(
            answer,
            f"{len(item.positions_added)} column(s) and {len(item.cuts_added)} cut(s) added "
            f"to {item.batch}; {item.already_entered} already entered",
        ),
    )


@app.command(
    "blank-delta", epilog="Example: tracker batch blank-delta CB-00001-G --ratio 44/40 --delta -0.8"
)
def batch_blank_delta(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID.")],
    ratio: Annotated[str, Opt("--ratio", help="e.g. 44/40.")],
    delta_permil: Annotated[float, Opt("--delta", help="The blank's δ, ‰, on the session scale.")],
) -> None:
    """Record the procedural blank's δ so results get the blank mixing correction."""
    answer = perform(
        ctx, columns.set_blank_delta, {"batch": batch, "ratio": ratio, "delta_permil": delta_permil}
    )
    emit(ctx, answer, lambda: done(answer, words.blank_delta_set(ratio, delta_permil, batch)))
