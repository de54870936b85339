"""``tracker reference``: reference materials and their accepted values."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.out_options import Force, write_picture
from tracker.cli.state import database, emit, perform
from tracker.db import outputs
from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.present.control import control_table
from tracker.present.text import done
from tracker.services.bench import chemistry
from tracker.services.instrument import reproducibility, results
from tracker.services.instrument.reproducibility import ControlChart

Opt = typer.Option

app = typer.Typer(
    epilog="Example: tracker reference add 'SRM 915b' --element Ca",
    help="Reference materials and bracketing standards.",
    no_args_is_help=True,
)


@app.command(
    "add",
    epilog="Example: tracker reference add 'SRM 915b' --element Ca --matrix 'calcium carbonate'",
)
def reference_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name as the lab writes it.")],
    element: Annotated[str, Opt("--element", help="Element symbol.")],
    matrix: Annotated[str | None, Opt("--matrix", help="Matrix, e.g. carbonate.")] = None,
) -> None:
    """Register a reference material or bracketing standard."""
    request = {"name": name, "element": element, "matrix": matrix}
    answer = perform(ctx, chemistry.add_reference_material, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {name}"))


REFERENCE_VALUE_EPILOG = (
    "Example: tracker reference value 'SRM 915b' --ratio 44/40 --scale "
    "'SRM 915a' --value 0.72 --two-sd 0.10 --source 'lab long-term record'"
)


@app.command("value", epilog=REFERENCE_VALUE_EPILOG)
def reference_value(
    ctx: typer.Context,
    reference: Annotated[
        str, typer.Argument(help="Reference material name or ID.", metavar="name")
    ],
    ratio: Annotated[str, Opt("--ratio", help="e.g. 44/40.")],
    scale: Annotated[str, Opt("--scale", help="Scale the value is on, e.g. 'SRM 915a'.")],
    value: Annotated[float, Opt("--value", help="Accepted δ (‰) or ratio.")],
    two_sd: Annotated[float, Opt("--two-sd", help="Tolerance: 2SD of the lab's record.")],
    source: Annotated[str, Opt("--source", help="Where the value comes from.")],
    kind: Annotated[str, Opt("--kind", help="delta or ratio.")] = "delta",
) -> None:
    """Record an accepted value for a reference material (managers only)."""
    request = {
        "reference": reference,
        "ratio": ratio,
        "scale": scale,
        "value": value,
        "two_sd": two_sd,
        "source": source,
        "kind": kind,
    }
    answer = perform(ctx, results.set_reference_value, request)
    emit(ctx, answer, lambda: done(answer, f"{reference} δ{ratio} = {value} ± {two_sd} on {scale}"))


CHART_EPILOG = "Example: tracker reference chart 'SRM 915b' --ratio 44/40 --png srm915b.png"


@app.command("chart", epilog=CHART_EPILOG)
def reference_chart(
    ctx: typer.Context,
    reference: Annotated[
        str, typer.Argument(help="Reference material name or ID.", metavar="name")
    ],
    ratio: Annotated[str, Opt("--ratio", help="e.g. 44/40 or 87/86.")],
    scale: Annotated[
        str | None, Opt("--scale", help="Scale, when the material was measured on several.")
    ] = None,
    png: Annotated[Path | None, Opt("--png", help="Also draw the chart to a new PNG file.")] = None,
    force: Force = False,
) -> None:
    """A reference material's session means against the lab's long-term limits."""
    with database(ctx) as db:
        if png is not None:
            outputs.check_target(png, "--png", force=force, database=db.path)
        chart = reproducibility.control_chart(db, reference, ratio, scale)
        if png is not None:
            _write_chart(db, chart, png, force)
    emit(ctx, chart, lambda: control_table(chart))


def _write_chart(db: Database, chart: ControlChart, png: Path, force: bool) -> None:
    from tracker.output.plots import control_chart_png

    if not chart.points:
        raise InputError("ratio", chart.ratio, f"{chart.reference} has no results to draw")
    write_picture(db, png, control_chart_png(chart), "--png", force)
