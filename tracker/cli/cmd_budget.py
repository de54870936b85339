"""Commands about what a loan allows: amendments, documents, materials, plans, reconciliation."""

from datetime import datetime
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.console import Group
from rich.text import Text

from tracker.cli.out_options import Despite
from tracker.cli.progress import progress_bar
from tracker.cli.state import database, emit, errors, perform, read_upload, state
from tracker.domain.models import Disposition, TermsKind
from tracker.present.loans import plan_table, reconcile_tables
from tracker.present.text import done, plain_table
from tracker.services.admin import materials
from tracker.services.ledger import audit
from tracker.services.ledger.audit import AuditReport
from tracker.services.ledger.loan_audit import audit_loan
from tracker.services.loans import amendments, planning
from tracker.services.read import reconcile

Opt = typer.Option

material_app = typer.Typer(
    help="Materials and their element mass fractions.",
    no_args_is_help=True,
    epilog="Example: tracker material list",
)


def amend(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    kind: Annotated[TermsKind, Opt("--kind", help="extension, allowance, specimens or other.")],
    effective: Annotated[
        datetime, Opt("--effective", formats=["%Y-%m-%d"], help="Day the new terms take effect.")
    ],
    reason: Annotated[str, Opt("--reason", help="What the lender agreed and why.")],
    document: Annotated[
        Path | None, Opt("--document", help="The letter or e-mail, kept by SHA-256.")
    ] = None,
    due: Annotated[
        datetime | None, Opt("--due", formats=["%Y-%m-%d"], help="New due date.")
    ] = None,
    tissues: Annotated[str | None, Opt("--tissues", help="New permitted tissues.")] = None,
    max_per_specimen: Annotated[
        str | None, Opt("--max-per-specimen", help="New per-specimen limit, e.g. '4 mg'.")
    ] = None,
    max_total: Annotated[str | None, Opt("--max-total", help="New loan total.")] = None,
    max_specimens: Annotated[int | None, Opt("--max-specimens", help="New specimen count.")] = None,
    powder: Annotated[Disposition | None, Opt("--powder", help="Unused powder.")] = None,
    solutions: Annotated[Disposition | None, Opt("--solutions", help="Residual solutions.")] = None,
) -> None:
    """Record an amendment to a loan's terms (managers only); it applies from --effective on."""
    request = {
        "loan": loan,
        "kind": kind,
        "effective_from": effective.date(),
        "reason": reason,
        "document": read_upload(document, "--document"),
        "due_on": due.date() if due else None,
        "permitted_tissues": tissues,
        "max_mass_per_specimen": max_per_specimen,
        "max_total_mass": max_total,
        "max_specimens_sampled": max_specimens,
        "powder_disposition": powder,
        "solution_disposition": solutions,
    }
    answer = perform(ctx, amendments.amend_loan, request)
    emit(
        ctx,
        answer,
        lambda: done(answer, f"{answer.item.reference} terms version {answer.item.terms.version}"),
    )


AMEND_EPILOG = (
    "Example: tracker loan amend KF-2026-014 --kind extension --effective 2027-03-01 "
    "--due 2027-09-30 --reason 'extension granted by letter' --document letter.pdf"
)


def attach(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    file: Annotated[Path, typer.Argument(help="The file to keep.")],
    role: Annotated[
        str, Opt("--role", help="agreement, amendment, correspondence, photo, other.")
    ] = "agreement",
) -> None:
    """Keep a loan document (agreement, letter, photo), identified by its SHA-256."""
    request = {"loan": loan, "role": role, "document": read_upload(file, "FILE")}
    answer = perform(ctx, amendments.attach_document, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.filename} sha256 {answer.item.sha256}"))


ATTACH_EPILOG = "Example: tracker loan attach KF-2026-014 agreement.pdf --role agreement"


@material_app.command("list", epilog="Example: tracker material list --element Ca")
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


@material_app.command(
    "add",
    epilog="Example: tracker material add 'shark enameloid (lab)' "
    "--element Ca --low 0.352 --high 0.371",
)
def material_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name of the material.")],
    formula: Annotated[str | None, Opt("--formula", help="Chemical formula, e.g. CaCO3.")] = None,
    element: Annotated[str | None, Opt("--element", help="Element of a measured range.")] = None,
    low: Annotated[float | None, Opt("--low", help="Lowest measured mass fraction.")] = None,
    high: Annotated[float | None, Opt("--high", help="Highest measured mass fraction.")] = None,
) -> None:
    """Define a material by its formula, or by a measured mass-fraction range of one element."""
    request = {
        "name": name,
        "formula": formula,
        "element": element,
        "fraction_low": low,
        "fraction_high": high,
    }
    answer = perform(ctx, materials.add_material, request)
    emit(ctx, answer, lambda: done(answer, f"material {name}"))


def plan(
    ctx: typer.Context,
    target: Annotated[str, typer.Argument(help="Specimen ID, or loan ID or reference.")],
    ug: Annotated[float, Opt("--ug", help="Element per analysis, µg.")],
    replicates: Annotated[int, Opt("--replicates", help="Analyses per specimen.")] = 1,
    element: Annotated[str, Opt("--element", help="Element analysed.")] = "Ca",
    column_yield: Annotated[float, Opt("--yield", help="Expected column yield, 0-1.")] = 0.95,
    material: Annotated[str | None, Opt("--material", help="Default: from the tissue.")] = None,
    tissue: Annotated[str | None, Opt("--tissue", help="Default: the loan's first tissue.")] = None,
    margin: Annotated[float, Opt("--margin", help="Safety margin, %.")] = 20.0,
    aliquot_share: Annotated[
        float,
        Opt("--aliquot-share", help="Share of each solution for concentration and archive, 0-1."),
    ] = 0.10,
    min_powder: Annotated[
        float, Opt("--min-powder", help="Smallest powder worth drilling, mg.")
    ] = 0.5,
) -> None:
    """How much powder to drill for the planned analyses, checked against the loan's terms."""
    request = {
        "target": target,
        "material": material,
        "tissue": tissue,
        "margin_percent": margin,
        "aliquot_share": aliquot_share,
        "min_powder_mg": min_powder,
        "analyses": [
            {
                "element": element,
                "ug_per_analysis": ug,
                "replicates": replicates,
                "expected_yield": column_yield,
            }
        ],
    }
    with database(ctx) as db:
        answer = planning.plan(db, request)
    emit(ctx, answer, lambda: plan_table(answer))


PLAN_EPILOG = "Example: tracker plan KF-2026-014 --ug 2 --replicates 4 --yield 0.95"


def reconcile_command(
    ctx: typer.Context,
    loan: Annotated[str | None, Opt("--loan", help="Only this loan (ID or reference).")] = None,
    despite: Despite = False,
) -> None:
    """Per loan and specimen: permitted, drilled, dissolved, powder left, returned, flags.

    The books are audited against the ledger first (the loan's rows with --loan, else the
    whole lab's, which replays the whole ledger) and the verdict printed beside the
    chain's; books that differ are refused unless --despite-discrepancies.
    """
    with database(ctx) as db, progress_bar(ctx, "auditing the books") as progress:
        checked = audit_loan(db, loan) if loan else audit.audit(db, progress)
        where = ("--loan", loan) if loan else ("--db", db.url)
        found = checked.vouch(*where, despite=despite)
        lines = reconcile.reconcile(db, loan)
    said = [_verdicts(checked), *(f"  {d.said}" for d in found)]
    if state(ctx).as_json:  # the document stays the lines alone; the verdicts go to stderr
        errors.print("\n".join(said), soft_wrap=True)
    emit(ctx, lines, lambda: Group(reconcile_tables(lines), Text("\n".join(said))))


def _verdicts(checked: AuditReport) -> str:
    """The chain's verdict beside the books': "intact" only when both hold."""
    chain = checked.chain
    if not chain.ok:
        return f"ledger BROKEN at event #{chain.broken_seq}: {chain.reason}"
    head = f"{chain.events:,} events, head #{chain.head_seq}"
    if checked.discrepancies:
        return f"ledger hashes unbroken ({head}), but {checked.verdict()}"
    return f"ledger intact: {head}; {checked.verdict()}"


RECONCILE_EPILOG = "Example: tracker reconcile --loan MDGC/LN/0457"
