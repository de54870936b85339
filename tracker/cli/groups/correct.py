"""Corrections: a wrong weighing, concentration or recovery is superseded, never edited."""

from typing import Annotated, Any

import typer

from tracker.cli.groups.bench import ConfirmImplausible
from tracker.cli.state import database, emit, perform
from tracker.present.aligned import AlignedTable
from tracker.present.text import corrected, done, plain_table
from tracker.services.corrections import correcting, measured_values, weighings

Opt = typer.Option
Reason = Annotated[str, Opt("--reason", help="Why the recorded value is wrong (kept forever).")]

app = typer.Typer(
    help="Correct a recorded value: the original stays in the history, the correction rules.",
    epilog="Example: tracker correct weighing PW-00001-5 --tare '1234.567 mg' "
    "--gross '1236.771 mg' --reason 'gross read off the wrong line of the balance log'",
    no_args_is_help=True,
)


def _answer(ctx: typer.Context, answer: Any) -> None:
    emit(ctx, answer, lambda: done(answer, corrected(answer.item)))


@app.command(
    "weighing",
    epilog="Example: tracker correct weighing AQ-00003-B --tare '2.0000 g' "
    "--gross '2.1012 g' --reason 'tare of the wrong vial'",
)
def weighing(
    ctx: typer.Context,
    item: Annotated[str, typer.Argument(help="Powder, solution or aliquot ID.")],
    tare: Annotated[str, Opt("--tare", help="The right tare, with unit.")],
    gross: Annotated[str, Opt("--gross", help="The right gross reading, with unit.")],
    reason: Reason,
    readability: Annotated[
        str | None, Opt("--readability", help="Balance readability; default as recorded.")
    ] = None,
) -> None:
    """Correct the tare/gross weighing of a powder, a solution vial or an aliquot."""
    request = {
        "item": item,
        "tare": tare,
        "gross": gross,
        "readability": readability,
        "reason": reason,
    }
    _answer(ctx, perform(ctx, weighings.correct_weighing, request))


@app.command(
    "powder-taken",
    epilog="Example: tracker correct powder-taken SO-00001-M --mass '1.502 mg' "
    "--reason 'transcribed 1.205 for 1.502'",
)
def powder_taken(
    ctx: typer.Context,
    solution: Annotated[str, typer.Argument(help="Solution ID.")],
    powder_taken: Annotated[str, Opt("--mass", help="Powder that went into it, with unit.")],
    reason: Reason,
    readability: Annotated[str, Opt("--readability", help="Balance readability.")] = "0.001 mg",
) -> None:
    """Correct how much powder went into a solution."""
    request = {
        "solution": solution,
        "powder_taken": powder_taken,
        "readability": readability,
        "reason": reason,
    }
    _answer(ctx, perform(ctx, weighings.correct_powder_taken, request))


@app.command(
    "concentration",
    epilog="Example: tracker correct concentration SO-00001-M --element Ca "
    "--value '821 ug/g' --rel-u 2 --reason 'dilution factor 10 was applied twice'",
)
def concentration(
    ctx: typer.Context,
    solution: Annotated[str, typer.Argument(help="Solution ID.")],
    element: Annotated[str, Opt("--element", help="Element whose value is wrong.")],
    value: Annotated[str, Opt("--value", help="The right mass fraction, with unit.")],
    reason: Reason,
    uncertainty: Annotated[str | None, Opt("--u", help="Standard uncertainty with unit.")] = None,
    relative_uncertainty_percent: Annotated[
        float | None, Opt("--rel-u", help="Or relative uncertainty, %.")
    ] = None,
    method: Annotated[str | None, Opt("--method", help="Default: as recorded.")] = None,
    confirm_implausible: ConfirmImplausible = False,
) -> None:
    """Correct the concentration in force; aliquot loads and reduced results follow."""
    request = {
        "solution": solution,
        "element": element,
        "value": value,
        "uncertainty": uncertainty,
        "relative_uncertainty_percent": relative_uncertainty_percent,
        "method": method,
        "reason": reason,
        "confirm_implausible": confirm_implausible,
    }
    _answer(ctx, perform(ctx, measured_values.correct_concentration, request))


@app.command(
    "recovery",
    epilog="Example: tracker correct recovery CU-00004-F --recovered '9.91 ug' --rel-u 1.5 "
    "--reason 'ICP-OES sequence row swapped with the blank'",
)
def recovery(
    ctx: typer.Context,
    cut: Annotated[str, typer.Argument(help="Cut ID.")],
    recovered: Annotated[str, Opt("--recovered", help="Element recovered, with unit.")],
    reason: Reason,
    uncertainty: Annotated[str | None, Opt("--u", help="Standard uncertainty with unit.")] = None,
    relative_uncertainty_percent: Annotated[
        float | None, Opt("--rel-u", help="Or relative uncertainty, %.")
    ] = None,
) -> None:
    """Correct a cut's recovered element; yields, blank shares and results follow."""
    request = {
        "cut": cut,
        "recovered": recovered,
        "uncertainty": uncertainty,
        "relative_uncertainty_percent": relative_uncertainty_percent,
        "reason": reason,
    }
    _answer(ctx, perform(ctx, measured_values.correct_recovery, request))


@app.command("list", epilog="Example: tracker correct list PW-00001-5")
def correct_list(
    ctx: typer.Context,
    item: Annotated[str | None, typer.Argument(help="Only this item's corrections.")] = None,
) -> None:
    """List corrections, oldest first: what each replaced, the new value, why and who."""
    with database(ctx) as db:
        rows = correcting.list_corrections(db, item)

    def table() -> AlignedTable:
        t = plain_table("event", "item", "quantity", "was → now", "by", "entry by", "why")
        for r in rows:
            t.add_row(
                f"#{r.event_seq}",
                r.item,
                r.quantity,
                _change(r.replaced, r.value),
                r.recorded_by,
                r.entry_by,
                r.reason,
            )
        return t

    emit(ctx, rows, table)


# The one number a person compares in each kind of correction, and its unit.
_MAIN = (
    ("mass_mg", "mg"),
    ("mass_g", "g"),
    ("powder_mass_mg", "mg"),
    ("value_ug_per_g", "µg/g"),
    ("recovered_ug", "µg"),
)


def _change(replaced: dict[str, Any], value: dict[str, Any]) -> str:
    for key, unit in _MAIN:
        if key in value:
            return f"{_number(replaced.get(key))} → {_number(value[key])} {unit}"
    return "see --json"


def _number(value: Any) -> str:
    return f"{value:.6g}" if isinstance(value, float) else str(value)
