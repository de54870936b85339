"""Top-level bench commands: receiving and returning specimens, moves, drilling,
dissolving, concentrations, aliquots, disposal."""

from typing import Annotated

import typer

from tracker.cli.state import emit, perform
from tracker.domain.models import AliquotPurpose
from tracker.present import text as words
from tracker.present.text import done
from tracker.services.bench import custody, drilling, solutions
from tracker.services.loans import specimens

Opt = typer.Option
At = Annotated[str | None, Opt("--at", help="When it happened, ISO 8601 with zone; default now.")]
To = Annotated[str | None, Opt("--to", help="Location ID where the new vial goes.")]

app = typer.Typer()  # its commands join the top level (see tracker/cli/__init__.py)


CHECKIN_EPILOG = "Example: tracker checkin SP-00001-W --condition 'complete' --to LC-00005-D"


@app.command("checkin", epilog=CHECKIN_EPILOG)
def checkin(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID (typed or scanned).")],
    condition: Annotated[str, Opt("--condition", help="Condition on receipt.")],
    location: Annotated[str | None, Opt("--to", help="Location ID where it is put.")] = None,
    received_at: Annotated[
        str | None, Opt("--at", help="When it arrived, ISO 8601 with zone.")
    ] = None,
) -> None:
    """Receive a listed specimen: note its condition and where it goes."""
    request = {
        "specimen": specimen,
        "condition": condition,
        "location": location,
        "received_at": received_at,
    }
    answer = perform(ctx, specimens.check_in, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} checked in"))


RETURN_EPILOG = "Example: tracker return SP-00001-W --condition 'as received, drill pit at tip'"


@app.command("return", epilog=RETURN_EPILOG)
def return_specimen(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID.")],
    condition: Annotated[str, Opt("--condition", help="Condition at return.")],
    note: Annotated[str | None, Opt("--note", help="Any note.")] = None,
    shipment: Annotated[
        str | None, Opt("--shipment", help="Outgoing shipment ID (SH-...).")
    ] = None,
) -> None:
    """Send a specimen back to its lender, recording its condition."""
    request = {"specimen": specimen, "condition": condition, "note": note, "shipment": shipment}
    answer = perform(ctx, specimens.return_specimen, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} returned"))


MOVE_EPILOG = "Example: tracker move PW-00001-5 --to LC-00007-9"


@app.command("move", epilog=MOVE_EPILOG)
def move(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Specimen or vial ID (typed or scanned).")],
    to: Annotated[str, Opt("--to", help="Destination location ID.")],
    note: Annotated[str | None, Opt("--note", help="Why.")] = None,
) -> None:
    """Move a specimen or vial to another location."""
    answer = perform(ctx, custody.move, {"item": item, "to": to, "note": note})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} → {answer.item.location}"))


SAFETY = (
    "Drilling makes fine dust and digestion uses concentrated acids: follow your "
    "institution's safety rules (extraction, eye protection, acid-resistant gloves)."
)


DRILL_EPILOG = (
    "Example: tracker --as tomas drill SP-00001-W --tissue enameloid "
    "--tare '1234.567 mg' --gross '1236.717 mg' --site 'crown tip'. " + SAFETY
)


@app.command("drill", epilog=DRILL_EPILOG)
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
    override_reason: Annotated[
        str | None, Opt("--override", help="Manager only: the written reason to exceed a limit.")
    ] = None,
    drilled_at: At = None,
    location: To = None,
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
        "override_reason": override_reason,
        "drilled_at": drilled_at,
        "location": location,
    }
    answer = perform(ctx, drilling.drill, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.drilled(item)))


DISSOLVE_EPILOG = (
    "Example: tracker dissolve PW-00001-5 --acid '2 M HNO3' --vial-tare '5.1234 g' "
    "--vial-gross '6.1234 g'. " + SAFETY
)


@app.command("dissolve", epilog=DISSOLVE_EPILOG)
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
    dissolved_at: At = None,
    location: To = None,
) -> None:
    """Dissolve all or part of a powder; the solution mass is weighed by difference."""
    request = {
        "powder": powder,
        "acid": acid,
        "vial_tare": vial_tare,
        "vial_gross": vial_gross,
        "readability": readability,
        "powder_taken": powder_taken,
        "dissolved_at": dissolved_at,
        "location": location,
    }
    answer = perform(ctx, solutions.dissolve, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.dissolved(item)))


ConfirmImplausible = Annotated[
    bool,
    Opt(
        "--confirm-implausible",
        help="Record a value the dissolved powder cannot hold, after checking it (a typo "
        "otherwise); the ledger says it was confirmed.",
    ),
]
CONCENTRATION_EPILOG = (
    "Example: tracker concentration SO-00001-M --element Ca "
    "--value '812 ug/g' --rel-u 2 --method ICP-OES"
)


@app.command("concentration", epilog=CONCENTRATION_EPILOG)
def concentration(
    ctx: typer.Context,
    solution: Annotated[str, typer.Argument(help="Solution ID.")],
    element: Annotated[str, Opt("--element", help="Element symbol, e.g. Ca.")],
    value: Annotated[str, Opt("--value", help="Mass fraction with unit, e.g. '812 ug/g'.")],
    uncertainty: Annotated[str | None, Opt("--u", help="Standard uncertainty with unit.")] = None,
    relative_uncertainty_percent: Annotated[
        float | None, Opt("--rel-u", help="Or relative uncertainty, %.")
    ] = None,
    method: Annotated[str | None, Opt("--method", help="e.g. ICP-OES.")] = None,
    measured_at: At = None,
    confirm_implausible: ConfirmImplausible = False,
) -> None:
    """Record an element concentration measured in a solution."""
    request = {
        "solution": solution,
        "element": element,
        "value": value,
        "uncertainty": uncertainty,
        "relative_uncertainty_percent": relative_uncertainty_percent,
        "method": method,
        "measured_at": measured_at,
        "confirm_implausible": confirm_implausible,
    }
    answer = perform(ctx, solutions.record_concentration, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.concentration_recorded(item)))


ALIQUOT_EPILOG = "Example: tracker aliquot SO-00001-M --tare '2.0000 g' --gross '2.1000 g'"


@app.command("aliquot", epilog=ALIQUOT_EPILOG)
def aliquot(
    ctx: typer.Context,
    solution: Annotated[str, typer.Argument(help="Solution ID.")],
    tare: Annotated[str, Opt("--tare", help="Empty vial, with unit.")],
    gross: Annotated[str, Opt("--gross", help="Vial with aliquot, with unit.")],
    readability: Annotated[str, Opt("--readability", help="Balance readability.")] = "0.1 mg",
    purpose: Annotated[
        AliquotPurpose, Opt("--purpose", help="What it is for.")
    ] = AliquotPurpose.ISOTOPES,
    taken_at: At = None,
    location: To = None,
) -> None:
    """Weigh out an aliquot of a solution."""
    request = {
        "solution": solution,
        "tare": tare,
        "gross": gross,
        "readability": readability,
        "purpose": purpose,
        "taken_at": taken_at,
        "location": location,
    }
    answer = perform(ctx, solutions.take_aliquot, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.aliquot_taken(item)))


DISPOSE_EPILOG = (
    "Example: tracker dispose PW-00003-1 --outcome returned "
    "--reason 'unused powder returned with the specimen' "
    "--residual-tare '512.004 mg' --residual-gross '513.022 mg'"
)


@app.command("dispose", epilog=DISPOSE_EPILOG)
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
