"""Top-level commands that account for a loan: plans, reconciliation, results, screening."""

from pathlib import Path
from typing import Annotated, Any

import typer
from rich.console import Group
from rich.text import Text

from tracker.cli.out_options import Despite, Force, write_picture
from tracker.cli.progress import progress_bar
from tracker.cli.state import database, emit, errors, state
from tracker.db import outputs
from tracker.domain.errors import InputError
from tracker.present.lab import results_table, screening_text
from tracker.present.loans import plan_table, reconcile_summary, reconcile_tables
from tracker.services.instrument import results, screening
from tracker.services.ledger.audit import AuditReport
from tracker.services.ledger.loan_audit import audit_changes, audit_loan
from tracker.services.loans import planning
from tracker.services.read import reconcile

Opt = typer.Option

app = typer.Typer()  # its commands join the top level (see tracker/cli/__init__.py)


PLAN_EPILOG = "Example: tracker plan KF-2026-014 --ug 2 --replicates 4 --yield 0.95"


def _default(field: str) -> str:
    """An option's default as the plan request states it (one place for both front ends)."""
    return f"Default: {planning.default_of(field)}."


@app.command("plan", epilog=PLAN_EPILOG)
def plan(
    ctx: typer.Context,
    target: Annotated[str, typer.Argument(help="Specimen ID, or loan ID or reference.")],
    ug_per_analysis: Annotated[float, Opt("--ug", help="Element per analysis, µg.")],
    replicates: Annotated[
        int | None, Opt("--replicates", help=f"Analyses per specimen. {_default('replicates')}")
    ] = None,
    element: Annotated[
        str | None, Opt("--element", help=f"Element analysed. {_default('element')}")
    ] = None,
    expected_yield: Annotated[
        float | None,
        Opt("--yield", help=f"Expected column yield, 0-1. {_default('expected_yield')}"),
    ] = None,
    material: Annotated[str | None, Opt("--material", help="Default: from the tissue.")] = None,
    tissue: Annotated[str | None, Opt("--tissue", help="Default: the loan's first tissue.")] = None,
    margin_percent: Annotated[
        float | None, Opt("--margin", help=f"Safety margin, %. {_default('margin_percent')}")
    ] = None,
    aliquot_share: Annotated[
        float | None,
        Opt(
            "--aliquot-share",
            help="Share of each solution for concentration and archive, 0-1. "
            f"{_default('aliquot_share')}",
        ),
    ] = None,
    min_powder_mg: Annotated[
        float | None,
        Opt(
            "--min-powder", help=f"Smallest powder worth drilling, mg. {_default('min_powder_mg')}"
        ),
    ] = None,
) -> None:
    """How much powder to drill for the planned analyses, checked against the loan's terms."""
    request = planning.one_analysis(
        target,
        {
            "element": element,
            "ug_per_analysis": ug_per_analysis,
            "replicates": replicates,
            "expected_yield": expected_yield,
            "material": material,
            "tissue": tissue,
            "margin_percent": margin_percent,
            "aliquot_share": aliquot_share,
            "min_powder_mg": min_powder_mg,
        },
    )
    with database(ctx) as db:
        answer = planning.plan(db, request)
    emit(ctx, answer, lambda: plan_table(answer))


RECONCILE_EPILOG = "Example: tracker reconcile --loan MDGC/LN/0457"


@app.command("reconcile", epilog=RECONCILE_EPILOG)
def reconcile_command(
    ctx: typer.Context,
    loan: Annotated[str | None, Opt("--loan", help="Only this loan (ID or reference).")] = None,
    specimens: Annotated[
        bool,
        Opt("--specimens", help="Every loan's specimens too, a row each (long for a whole lab)."),
    ] = False,
    despite: Despite = False,
) -> None:
    """Each loan's books: permitted, drilled, dissolved, powder left, returned, flags.

    With --loan or --specimens, a row per specimen as well; --json always holds them all.

    The books are audited against the ledger first (the loan's rows with --loan; else the
    loans changed since this computer's last whole-lab audit, or the whole lab when there is
    none) and the verdict printed beside the chain's; books that differ are refused unless
    --despite-discrepancies.
    """
    with database(ctx) as db, progress_bar(ctx, "auditing the books") as progress:
        checked = audit_loan(db, loan) if loan else audit_changes(db, progress)
        where = ("loan", loan) if loan else ("database", db.url)
        found = checked.vouch(*where, despite=despite)
        lines = reconcile.reconcile(db, loan)
    said = [_verdicts(checked), *(f"  {d.said}" for d in found)]
    if state(ctx).as_json:  # the document stays the lines alone; the verdicts go to stderr
        errors.print("\n".join(said), soft_wrap=True)
    shown = reconcile_tables if loan or specimens else reconcile_summary
    emit(ctx, lines, lambda: Group(shown(lines), Text("\n".join(said))))


def _verdicts(checked: AuditReport) -> str:
    """The chain's verdict beside the books': "intact" only when both hold."""
    chain = checked.chain
    if not chain.ok:
        return f"ledger BROKEN at event #{chain.broken_seq}: {chain.reason}"
    head = f"head #{chain.head_seq:,}, {chain.events:,} events verified now"
    if checked.discrepancies:
        return f"ledger hashes unbroken ({head}), but {checked.verdict()}"
    return f"ledger intact: {head}; {checked.verdict()}"


RESULTS_EPILOG = "Example: tracker results --loan KF-2026-014 --ratio 44/40 --law exponential"
PLOTTED_RATIO = "44/40"  # what --plot draws when no --ratio is given


@app.command("results", epilog=RESULTS_EPILOG)
def results_command(
    ctx: typer.Context,
    loan: Annotated[str | None, Opt("--loan", help="Only this loan.")] = None,
    scale: Annotated[
        str | None,
        Opt(
            "--scale",
            help="Report on this reference's scale (a δ it has no value for stays as measured).",
        ),
    ] = None,
    plot: Annotated[
        Path | None, Opt("--plot", help="Also write δ against age to a new PNG file.")
    ] = None,
    ratio: Annotated[
        str | None,
        Opt("--ratio", help="Show every δ on this ratio (others converted by --law); plot it."),
    ] = None,
    law: Annotated[
        str, Opt("--law", help="Mass-dependent law for --ratio: exponential or equilibrium.")
    ] = "exponential",
    force: Force = False,
) -> None:
    """Results per specimen (δ with 2SD and n), optionally on another reference scale."""
    with database(ctx) as db:
        if plot is not None:
            outputs.check_target(plot, "--plot", force=force, database=db.path)
        rows = results.results(db, loan, scale, ratio, law)
        if plot is not None:
            _write_plot(db, rows, ratio or PLOTTED_RATIO, plot, force)
    emit(ctx, rows, lambda: results_table(rows))


def _write_plot(db: Any, rows: Any, ratio: str, plot: Path, force: bool) -> None:
    from tracker.output.plots import delta_vs_age_png

    try:
        picture = delta_vs_age_png(rows, ratio)
    except ValueError as error:
        raise InputError("ratio", ratio, str(error)) from None
    write_picture(db, plot, picture, "--plot", force)


SCREEN_EPILOG = "Example: tracker screen MDGC/LN/0457"


@app.command("screen", epilog=SCREEN_EPILOG)
def screen_command(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
) -> None:
    """Ages each specimen's ⁸⁷Sr/⁸⁶Sr allows on the loan's curve, and whether they fit."""
    with database(ctx) as db:
        lines = screening.screen(db, loan)
    emit(ctx, lines, lambda: screening_text(lines))
