"""``tracker reference``: reference materials and their accepted values."""

from typing import Annotated

import typer

from tracker.cli.state import emit, perform
from tracker.present.text import done
from tracker.services.bench import chemistry
from tracker.services.instrument import results

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
