"""``tracker material``: materials and their element mass fractions."""

from typing import Annotated, Any

import typer

from tracker.cli.state import database, emit, perform
from tracker.present.text import done, plain_table
from tracker.services.admin import materials

Opt = typer.Option

app = typer.Typer(
    help="Materials and their element mass fractions.",
    no_args_is_help=True,
    epilog="Example: tracker material list",
)


@app.command("list", epilog="Example: tracker material list --element Ca")
def material_list(
    ctx: typer.Context,
    element: Annotated[str, Opt("--element", help="Element whose mass fraction to show.")] = "Ca",
) -> None:
    """List preset and lab-defined materials with the element's mass fraction."""
    with database(ctx) as db:
        rows = materials.list_materials(db, element)

    def table() -> Any:
        t = plain_table("material", f"{element} mass fraction", "from", "note")
        for m in rows:
            span = (
                "—"
                if m.fraction_low is None
                else f"{m.fraction_low:.4f}"
                if m.fraction_low == m.fraction_high
                else f"{m.fraction_low:.4f}–{m.fraction_high:.4f}"
            )
            t.add_row(m.name, span, m.formula or "measured range", m.note)
        return t

    emit(ctx, rows, table)


@app.command(
    "add",
    epilog="Example: tracker material add 'shark enameloid (lab)' "
    "--element Ca --low 0.352 --high 0.371",
)
def material_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name of the material.")],
    formula: Annotated[str | None, Opt("--formula", help="Chemical formula, e.g. CaCO3.")] = None,
    element: Annotated[str | None, Opt("--element", help="Element of a measured range.")] = None,
    fraction_low: Annotated[
        float | None, Opt("--low", help="Lowest measured mass fraction.")
    ] = None,
    fraction_high: Annotated[
        float | None, Opt("--high", help="Highest measured mass fraction.")
    ] = None,
) -> None:
    """Define a material by its formula, or by a measured mass-fraction range of one element."""
    request = {
        "name": name,
        "formula": formula,
        "element": element,
        "fraction_low": fraction_low,
        "fraction_high": fraction_high,
    }
    answer = perform(ctx, materials.add_material, request)
    emit(ctx, answer, lambda: done(answer, f"material {name}"))
