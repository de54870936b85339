"""``tracker curve``: strontium reference curves for age screening."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.fields import Fills
from tracker.cli.state import emit, perform, read_upload
from tracker.present.text import done
from tracker.services.instrument import screening

Opt = typer.Option

app = typer.Typer(
    help="Strontium reference curves for age screening.",
    no_args_is_help=True,
    epilog="Example: tracker curve add --help",
)


@app.command("add", epilog="Example: tracker curve add devonian-demo curve.csv")
def curve_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name of the curve.")],
    file: Annotated[
        Path,
        typer.Argument(help="CSV: age_ma, 87sr/86sr, u; sorted by age."),
        Fills("content", "filename"),
    ],
    note: Annotated[str | None, Opt("--note", help="Where the curve comes from.")] = None,
) -> None:
    """Store a ⁸⁷Sr/⁸⁶Sr reference curve for age screening."""
    upload = read_upload(file, "FILE") or {}
    answer = perform(
        ctx,
        screening.add_curve,
        {
            "name": name,
            "content": upload.get("content"),
            "filename": upload.get("filename"),
            "note": note,
        },
    )
    emit(ctx, answer, lambda: done(answer, f"curve {name} ({answer.item.points} points)"))
