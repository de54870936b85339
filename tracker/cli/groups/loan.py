"""``tracker loan``: loan agreements, their terms and amendments, documents, curves."""

from datetime import datetime
from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.state import database, emit, perform, read_upload
from tracker.domain.models import Disposition, TermsKind
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table
from tracker.services.bench import custody
from tracker.services.instrument import screening
from tracker.services.loans import amendments, lending

Opt = typer.Option

app = typer.Typer(
    epilog="Example: tracker loan list",
    help="Loan agreements and their terms.",
    no_args_is_help=True,
)


@app.command(
    "add",
    epilog="Example: tracker loan add --lender 'Kestrel Fen Museum' --reference KF-2026-014 "
    "--title 'Shark teeth, Ca isotopes' --borrower 'A. Haddad' --tissues enameloid "
    "--max-per-specimen '3 mg' --max-total '15 mg' --max-specimens 6 --due 2027-03-31",
)
def loan_add(
    ctx: typer.Context,
    lender: Annotated[str, Opt("--lender", help="Lender ID (LE-...) or name.")],
    reference: Annotated[str, Opt("--reference", help="The lender's loan number.")],
    title: Annotated[str, Opt("--title", help="What the loan is for.")],
    borrower: Annotated[str, Opt("--borrower", help="Responsible scientist.")],
    permitted_tissues: Annotated[str, Opt("--tissues", help="Permitted tissues, comma-separated.")],
    due_on: Annotated[datetime, Opt("--due", formats=["%Y-%m-%d"], help="Due date.")],
    received_on: Annotated[
        datetime | None, Opt("--received", formats=["%Y-%m-%d"], help="Date received.")
    ] = None,
    max_mass_per_specimen: Annotated[
        str | None, Opt("--max-per-specimen", help="Mass limit per specimen, e.g. '3 mg'.")
    ] = None,
    max_total_mass: Annotated[
        str | None, Opt("--max-total", help="Mass limit for the loan.")
    ] = None,
    max_specimens_sampled: Annotated[
        int | None, Opt("--max-specimens", help="How many specimens may be sampled.")
    ] = None,
    powder_disposition: Annotated[
        Disposition, Opt("--powder", help="Unused powder: return, destroy or retain.")
    ] = Disposition.RETURN,
    solution_disposition: Annotated[
        Disposition, Opt("--solutions", help="Residual solutions.")
    ] = Disposition.DESTROY,
) -> None:
    """Record a loan agreement and its original terms."""
    request = {
        "lender": lender,
        "reference": reference,
        "title": title,
        "borrower": borrower,
        "received_on": received_on.date() if received_on else None,
        "terms": {
            "permitted_tissues": permitted_tissues,
            "max_mass_per_specimen": max_mass_per_specimen,
            "max_total_mass": max_total_mass,
            "max_specimens_sampled": max_specimens_sampled,
            "due_on": due_on.date(),
            "powder_disposition": powder_disposition,
            "solution_disposition": solution_disposition,
        },
    }
    answer = perform(ctx, lending.add_loan, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {reference}"))


@app.command("list", epilog="Example: tracker --json loan list")
def loan_list(ctx: typer.Context) -> None:
    """List loans with their current terms."""
    with database(ctx) as db:
        rows = lending.list_loans(db)

    def table() -> AlignedTable:
        t = plain_table("id", "reference", "lender", "status", "tissues", "due")
        for r in rows:
            t.add_row(
                r.id,
                r.reference,
                r.lender,
                r.status,
                ", ".join(r.terms.permitted_tissues),
                r.terms.due_on.isoformat(),
            )
        return t

    emit(ctx, rows, table)


@app.command("mark-returned", epilog="Example: tracker loan mark-returned KF-2026-014")
def loan_mark_returned(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    returned_on: Annotated[
        datetime | None, Opt("--on", formats=["%Y-%m-%d"], help="Return date.")
    ] = None,
) -> None:
    """Mark a loan's material as returned once every specimen and powder is dealt with."""
    answer = perform(
        ctx,
        custody.mark_loan_returned,
        {"loan": loan, "returned_on": returned_on.date() if returned_on else None},
    )
    emit(ctx, answer, lambda: done(answer, f"{answer.item.reference} returned"))


@app.command(
    "close",
    epilog="Example: tracker --as ines loan close NMFI-25-033 "
    "--reason 'results reported to the lender on 2027-04-02'",
)
def loan_close(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    reason: Annotated[str, Opt("--reason", help="Why it is closed: obligations met.")],
) -> None:
    """Close a returned loan when nothing of it is left in the lab (managers only)."""
    answer = perform(ctx, custody.close_loan, {"loan": loan, "reason": reason})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.reference} closed"))


AMEND_EPILOG = (
    "Example: tracker loan amend KF-2026-014 --kind extension --effective 2027-03-01 "
    "--due 2027-09-30 --reason 'extension granted by letter' --document letter.pdf"
)


@app.command("amend", epilog=AMEND_EPILOG)
def amend(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    kind: Annotated[TermsKind, Opt("--kind", help="extension, allowance, specimens or other.")],
    effective_from: Annotated[
        datetime, Opt("--effective", formats=["%Y-%m-%d"], help="Day the new terms take effect.")
    ],
    reason: Annotated[str, Opt("--reason", help="What the lender agreed and why.")],
    document: Annotated[
        Path | None, Opt("--document", help="The letter or e-mail, kept by SHA-256.")
    ] = None,
    due_on: Annotated[
        datetime | None, Opt("--due", formats=["%Y-%m-%d"], help="New due date.")
    ] = None,
    permitted_tissues: Annotated[
        str | None, Opt("--tissues", help="New permitted tissues.")
    ] = None,
    max_mass_per_specimen: Annotated[
        str | None, Opt("--max-per-specimen", help="New per-specimen limit, e.g. '4 mg'.")
    ] = None,
    max_total_mass: Annotated[str | None, Opt("--max-total", help="New loan total.")] = None,
    max_specimens_sampled: Annotated[
        int | None, Opt("--max-specimens", help="New specimen count.")
    ] = None,
    powder_disposition: Annotated[
        Disposition | None, Opt("--powder", help="Unused powder.")
    ] = None,
    solution_disposition: Annotated[
        Disposition | None, Opt("--solutions", help="Residual solutions.")
    ] = None,
) -> None:
    """Record an amendment to a loan's terms (managers only); it applies from --effective on."""
    request = {
        "loan": loan,
        "kind": kind,
        "effective_from": effective_from.date(),
        "reason": reason,
        "document": read_upload(document, "document"),
        "due_on": due_on.date() if due_on else None,
        "permitted_tissues": permitted_tissues,
        "max_mass_per_specimen": max_mass_per_specimen,
        "max_total_mass": max_total_mass,
        "max_specimens_sampled": max_specimens_sampled,
        "powder_disposition": powder_disposition,
        "solution_disposition": solution_disposition,
    }
    answer = perform(ctx, amendments.amend_loan, request)
    emit(
        ctx,
        answer,
        lambda: done(answer, f"{answer.item.reference} terms version {answer.item.terms.version}"),
    )


ATTACH_EPILOG = "Example: tracker loan attach KF-2026-014 agreement.pdf --role agreement"


@app.command("attach", epilog=ATTACH_EPILOG)
def attach(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    document: Annotated[Path, typer.Argument(help="The file to keep.", metavar="file")],
    role: Annotated[
        str, Opt("--role", help="agreement, amendment, correspondence, photo, other.")
    ] = "agreement",
) -> None:
    """Keep a loan document (agreement, letter, photo), identified by its SHA-256."""
    request = {"loan": loan, "role": role, "document": read_upload(document, "document")}
    answer = perform(ctx, amendments.attach_document, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.filename} sha256 {answer.item.sha256}"))


LOAN_CURVE_EPILOG = "Example: tracker loan curve MDGC/LN/0457 devonian-demo"


@app.command("curve", epilog=LOAN_CURVE_EPILOG)
def loan_curve(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    curve: Annotated[str, typer.Argument(help="Stored curve name.")],
) -> None:
    """Screen a loan's specimens against a stored Sr reference curve."""
    answer = perform(ctx, screening.use_curve, {"loan": loan, "curve": curve})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.reference} screens with {curve}"))
