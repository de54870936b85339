"""Bench commands: drill, dissolve, concentration, aliquot, move, dispose, columns."""

from datetime import datetime
from typing import Annotated

import typer

from tracker.cli.state import emit, perform
from tracker.domain.models import AliquotPurpose, PositionKind
from tracker.present import text as words
from tracker.present.text import done
from tracker.services.bench import chemistry, custody, drilling, solutions

Opt = typer.Option
At = Annotated[str | None, Opt("--at", help="When it happened, ISO 8601 with zone; default now.")]
To = Annotated[str | None, Opt("--to", help="Location ID where the new vial goes.")]

reference_app = typer.Typer(
    epilog="Example: tracker reference add 'SRM 915b' --element Ca",
    help="Reference materials and bracketing standards.",
    no_args_is_help=True,
)
batch_app = typer.Typer(
    epilog="Example: tracker batch add CB-00001-G --blank",
    help="Ion-exchange column batches.",
    no_args_is_help=True,
)

SAFETY = (
    "Drilling makes fine dust and digestion uses concentrated acids: follow your "
    "institution's safety rules (extraction, eye protection, acid-resistant gloves)."
)


def drill(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID (typed or scanned).")],
    tissue: Annotated[str, Opt("--tissue", help="Tissue drilled, e.g. enamel, enameloid, shell.")],
    tare: Annotated[str, Opt("--tare", help="Empty vial or boat, with unit, e.g. '1234.567 mg'.")],
    gross: Annotated[str, Opt("--gross", help="Vial with powder, with unit.")],
    readability: Annotated[str, Opt("--readability", help="Balance readability.")] = "0.001 mg",
    site: Annotated[str | None, Opt("--site", help="Where on the specimen.")] = None,
    material: Annotated[
        str | None, Opt("--material", help="e.g. calcite; default follows the tissue.")
    ] = None,
    override: Annotated[
        str | None, Opt("--override", help="Manager only: the written reason to exceed a limit.")
    ] = None,
    at: At = None,
    to: To = None,
) -> None:
    """Drill powder from a specimen within the loan's terms; mass by difference with its u."""
    request = {
        "specimen": specimen,
        "tissue": tissue,
        "tare": tare,
        "gross": gross,
        "readability": readability,
        "site": site,
        "material": material,
        "override_reason": override,
        "drilled_at": at,
        "location": to,
    }
    answer = perform(ctx, drilling.drill, request)
    item = answer.item
    emit(
        ctx,
        answer,
        lambda: done(answer, words.drilled(item)),
    )


DRILL_EPILOG = (
    "Example: tracker --as tomas drill SP-00001-W --tissue enameloid "
    "--tare '1234.567 mg' --gross '1236.717 mg' --site 'crown tip'. " + SAFETY
)


def dissolve(
    ctx: typer.Context,
    powder: Annotated[str, typer.Argument(help="Powder ID.")],
    acid: Annotated[str, Opt("--acid", help="Acid used, e.g. '2 M HNO3'.")],
    vial_tare: Annotated[str, Opt("--vial-tare", help="Empty vial, with unit.")],
    vial_gross: Annotated[str, Opt("--vial-gross", help="Vial with solution, with unit.")],
    readability: Annotated[str, Opt("--readability", help="Balance readability.")] = "0.1 mg",
    powder_taken: Annotated[
        str | None, Opt("--powder-taken", help="Weighed portion; default all that remains.")
    ] = None,
    at: At = None,
    to: To = None,
) -> None:
    """Dissolve all or part of a powder; the solution mass is weighed by difference."""
    request = {
        "powder": powder,
        "acid": acid,
        "vial_tare": vial_tare,
        "vial_gross": vial_gross,
        "readability": readability,
        "powder_taken": powder_taken,
        "dissolved_at": at,
        "location": to,
    }
    answer = perform(ctx, solutions.dissolve, request)
    item = answer.item
    emit(
        ctx,
        answer,
        lambda: done(answer, words.dissolved(item)),
    )


DISSOLVE_EPILOG = (
    "Example: tracker dissolve PW-00001-5 --acid '2 M HNO3' --vial-tare '5.1234 g' "
    "--vial-gross '6.1234 g'. " + SAFETY
)


def concentration(
    ctx: typer.Context,
    solution: Annotated[str, typer.Argument(help="Solution ID.")],
    element: Annotated[str, Opt("--element", help="Element symbol, e.g. Ca.")],
    value: Annotated[str, Opt("--value", help="Mass fraction with unit, e.g. '812 ug/g'.")],
    u: Annotated[str | None, Opt("--u", help="Standard uncertainty with unit.")] = None,
    rel_u: Annotated[float | None, Opt("--rel-u", help="Or relative uncertainty, %.")] = None,
    method: Annotated[str | None, Opt("--method", help="e.g. ICP-OES.")] = None,
    at: At = None,
) -> None:
    """Record an element concentration measured in a solution."""
    request = {
        "solution": solution,
        "element": element,
        "value": value,
        "uncertainty": u,
        "relative_uncertainty_percent": rel_u,
        "method": method,
        "measured_at": at,
    }
    answer = perform(ctx, solutions.record_concentration, request)
    item = answer.item
    emit(
        ctx,
        answer,
        lambda: done(answer, words.concentration_recorded(item)),
    )


CONCENTRATION_EPILOG = (
    "Example: tracker concentration SO-00001-M --element Ca "
    "--value '812 ug/g' --rel-u 2 --method ICP-OES"
)


def aliquot(
    ctx: typer.Context,
    solution: Annotated[str, typer.Argument(help="Solution ID.")],
    tare: Annotated[str, Opt("--tare", help="Empty vial, with unit.")],
    gross: Annotated[str, Opt("--gross", help="Vial with aliquot, with unit.")],
    readability: Annotated[str, Opt("--readability", help="Balance readability.")] = "0.1 mg",
    purpose: Annotated[
        AliquotPurpose, Opt("--purpose", help="What it is for.")
    ] = AliquotPurpose.ISOTOPES,
    at: At = None,
    to: To = None,
) -> None:
    """Weigh out an aliquot of a solution."""
    request = {
        "solution": solution,
        "tare": tare,
        "gross": gross,
        "readability": readability,
        "purpose": purpose,
        "taken_at": at,
        "location": to,
    }
    answer = perform(ctx, solutions.take_aliquot, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.aliquot_taken(item)))


ALIQUOT_EPILOG = "Example: tracker aliquot SO-00001-M --tare '2.0000 g' --gross '2.1000 g'"


def move(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Specimen or vial ID (typed or scanned).")],
    to: Annotated[str, Opt("--to", help="Destination location ID.")],
    note: Annotated[str | None, Opt("--note", help="Why.")] = None,
) -> None:
    """Move a specimen or vial to another location."""
    answer = perform(ctx, custody.move, {"item": item, "to": to, "note": note})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} → {answer.item.location}"))


MOVE_EPILOG = "Example: tracker move PW-00001-5 --to LC-00007-3"


def dispose(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Powder, solution, aliquot or cut ID.")],
    outcome: Annotated[str, Opt("--outcome", help="returned, destroyed, retained or consumed.")],
    reason: Annotated[str, Opt("--reason", help="Why; appears in the return report.")],
    permission: Annotated[
        str | None, Opt("--permission", help="Lender's written permission (for retained).")
    ] = None,
    residual_tare: Annotated[
        str | None, Opt("--residual-tare", help="Weigh what leaves: the empty vial's tare.")
    ] = None,
    residual_gross: Annotated[
        str | None, Opt("--residual-gross", help="The vial with what is left in it.")
    ] = None,
    readability: Annotated[
        str | None, Opt("--readability", help="Balance readability for those readings.")
    ] = None,
    shipment: Annotated[
        str | None, Opt("--shipment", help="Returned powder: the outgoing shipment ID.")
    ] = None,
) -> None:
    """End a vial's life in the lab, weighing what is left in it as it goes."""
    request = {
        "shipment": shipment,
        "item": item,
        "outcome": outcome,
        "reason": reason,
        "permission": permission,
        "residual_tare": residual_tare,
        "residual_gross": residual_gross,
        "readability": readability,
    }
    answer = perform(ctx, custody.dispose, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {answer.item.status}"))


DISPOSE_EPILOG = (
    "Example: tracker dispose PW-00003-1 --outcome returned "
    "--reason 'unused powder returned with the specimen' "
    "--residual-tare '512.004 mg' --residual-gross '513.022 mg'"
)


@reference_app.command(
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


@batch_app.command(
    "create",
    epilog="Example: tracker batch create --name 'Ca 2026-11 A' "
    "--date 2026-11-20 --element Ca --resin 'DGA, 100-150 um' "
    "--scheme 'load 3 M HNO3; matrix off; Ca in 0.05 M HNO3' --cuts matrix,Ca",
)
def batch_create(
    ctx: typer.Context,
    name: Annotated[str, Opt("--name", help="Batch name.")],
    date: Annotated[datetime, Opt("--date", formats=["%Y-%m-%d"], help="Day of the run.")],
    element: Annotated[str, Opt("--element", help="Element separated.")],
    resin: Annotated[str, Opt("--resin", help="Resin and mesh.")],
    scheme: Annotated[str, Opt("--scheme", help="Elution scheme, free text.")],
    cuts: Annotated[str, Opt("--cuts", help="Named cuts, comma-separated.")],
) -> None:
    """Open a column batch."""
    request = {
        "name": name,
        "performed_on": date.date(),
        "element": element,
        "resin": resin,
        "elution_scheme": scheme,
        "cut_names": cuts,
    }
    answer = perform(ctx, chemistry.create_batch, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {name}"))


@batch_app.command("add", epilog="Example: tracker batch add CB-00001-G --sample AQ-00001-F")
def batch_add(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID.")],
    sample: Annotated[str | None, Opt("--sample", help="Aliquot ID to load.")] = None,
    blank: Annotated[bool, Opt("--blank", help="Add a procedural blank.")] = False,
    reference: Annotated[
        str | None, Opt("--reference", help="Reference material name or ID.")
    ] = None,
    loaded: Annotated[
        float | None, Opt("--loaded-ug", help="Element loaded (reference), µg.")
    ] = None,
) -> None:
    """Add the next column: a sample aliquot, a procedural blank or a reference material."""
    kind = (
        PositionKind.SAMPLE
        if sample
        else PositionKind.REFERENCE
        if reference
        else PositionKind.BLANK
        if blank
        else None
    )
    if kind is None:
        raise typer.BadParameter("give one of --sample, --blank or --reference")
    request = {
        "batch": batch,
        "kind": kind,
        "aliquot": sample,
        "reference_material": reference,
        "loaded_ug": loaded,
    }
    answer = perform(ctx, chemistry.add_position, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} column {answer.item.slot}"))
